import type { EachBatchPayload } from 'kafkajs';
import type { SourceItem } from '../file-source.js';

/**
 * A one-slot hand-over from the consumer's batch callback to an iterating reader: `put`
 * waits (heartbeating, so the group keeps the member) until the reader takes the batch, or
 * with `holdUntilFinished` until the reader has finished it (asks for the next one), and
 * answers false if the source ended first. The Kafka source releases the callback on take;
 * the group source of `count` holds it, so that a batch is counted before the next comes.
 */
export class BatchHandoff {
  private offered: { items: SourceItem[]; finished: (accepted: boolean) => void } | null = null;
  private feeding: ((accepted: boolean) => void) | null = null;
  private waiting: {
    resolve: (items: SourceItem[] | null) => void;
    reject: (error: unknown) => void;
  } | null = null;
  private done = false;
  private failure: unknown = null;

  /** @param holdUntilFinished answer `put` at the reader's next take, not at this one */
  constructor(private readonly holdUntilFinished = false) {}

  async put(items: SourceItem[], payload: EachBatchPayload | null): Promise<boolean> {
    if (this.done) return false;
    if (this.waiting !== null && !this.holdUntilFinished) {
      const reader = this.waiting;
      this.waiting = null;
      reader.resolve(items);
      return true;
    }
    const accepted = new Promise<boolean>((resolve) => {
      if (this.waiting !== null) {
        const reader = this.waiting;
        this.waiting = null;
        this.feeding = resolve;
        reader.resolve(items);
      } else {
        this.offered = { items, finished: resolve };
      }
    });
    return heartbeatUntil(accepted, payload);
  }

  /** The next batch; with `holdUntilFinished`, the one taken before counts as finished. */
  take(): Promise<SourceItem[] | null> {
    this.feeding?.(true);
    this.feeding = null;
    if (this.failure !== null) return Promise.reject(this.failure);
    if (this.offered !== null) {
      const { items, finished } = this.offered;
      this.offered = null;
      if (this.holdUntilFinished) this.feeding = finished;
      else finished(true);
      return Promise.resolve(items);
    }
    if (this.done) return Promise.resolve(null);
    return new Promise((resolve, reject) => {
      this.waiting = { resolve, reject };
    });
  }

  end(): void {
    this.done = true;
    this.release();
    this.waiting?.resolve(null);
    this.waiting = null;
  }

  fail(error: unknown): void {
    this.failure = error;
    this.done = true;
    this.release();
    this.waiting?.reject(error);
    this.waiting = null;
  }

  private release(): void {
    this.feeding?.(false);
    this.feeding = null;
    this.offered?.finished(false);
    this.offered = null;
  }
}

/**
 * Waits for `pending` while heartbeating every 2 s through the batch's payload, so the
 * group keeps a member whose reader is slow to take the batch.
 */
async function heartbeatUntil<T>(
  pending: Promise<T>,
  payload: EachBatchPayload | null,
): Promise<T> {
  const beat = setInterval(() => {
    payload?.heartbeat().catch(() => undefined);
  }, 2000);
  try {
    return await pending;
  } finally {
    clearInterval(beat);
  }
}

/** A promise settled once, from outside; an unobserved rejection is not reported as unhandled. */
export class Settled {
  readonly promise: Promise<void>;
  private settle!: { resolve: () => void; reject: (error: unknown) => void };

  constructor() {
    this.promise = new Promise<void>((resolve, reject) => {
      this.settle = { resolve, reject };
    });
    this.promise.catch(() => undefined);
  }

  resolve(): void {
    this.settle.resolve();
  }

  reject(error: unknown): void {
    this.settle.reject(error);
  }
}
