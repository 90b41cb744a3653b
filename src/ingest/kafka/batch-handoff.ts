import type { EachBatchPayload } from 'kafkajs';
import type { SourceItem } from '../file-source.js';

/**
 * A one-slot hand-over from the consumer's batch callback to an iterating
 * reader: `put` waits (heartbeating, so the group keeps the member) until the
 * reader takes the batch, and answers false if the source ended first.
 */
export class BatchHandoff {
  private offered: { items: SourceItem[]; taken: (accepted: boolean) => void } | null = null;
  private waiting: {
    resolve: (items: SourceItem[] | null) => void;
    reject: (error: unknown) => void;
  } | null = null;
  private done = false;
  private failure: unknown = null;

  async put(items: SourceItem[], payload: EachBatchPayload | null): Promise<boolean> {
    if (this.done) return false;
    if (this.waiting !== null) {
      const reader = this.waiting;
      this.waiting = null;
      reader.resolve(items);
      return true;
    }
    const accepted = new Promise<boolean>((resolve) => {
      this.offered = { items, taken: resolve };
    });
    const beat = setInterval(() => {
      payload?.heartbeat().catch(() => undefined);
    }, 2000);
    try {
      return await accepted;
    } finally {
      clearInterval(beat);
    }
  }

  take(): Promise<SourceItem[] | null> {
    if (this.failure !== null) return Promise.reject(this.failure);
    if (this.offered !== null) {
      const { items, taken } = this.offered;
      this.offered = null;
      taken(true);
      return Promise.resolve(items);
    }
    if (this.done) return Promise.resolve(null);
    return new Promise((resolve, reject) => {
      this.waiting = { resolve, reject };
    });
  }

  end(): void {
    this.done = true;
    this.offered?.taken(false);
    this.offered = null;
    this.waiting?.resolve(null);
    this.waiting = null;
  }

  fail(error: unknown): void {
    this.failure = error;
    this.offered?.taken(false);
    this.offered = null;
    this.waiting?.reject(error);
    this.waiting = null;
    this.done = true;
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
