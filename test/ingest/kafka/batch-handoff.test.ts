import type { EachBatchPayload } from 'kafkajs';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { BatchHandoff, Settled } from '../../../src/ingest/kafka/batch-handoff.js';
import type { SourceItem } from '../../../src/ingest/file-source.js';

// Source of truth: the hand-over contract in the doc comment of BatchHandoff; the batches
// are literals. The heartbeat interval (2 s) is the documented one; kafkajs's eachBatch
// payload has heartbeat() (kafkajs docs, "Consuming Messages: eachBatch").

const one: SourceItem[] = [{ ts: 1, shard: 'a', count: 1 }];
const two: SourceItem[] = [{ reason: 'not JSON' }];

afterEach(() => {
  vi.useRealTimers();
});

describe('BatchHandoff', () => {
  it('hands a waiting reader the batch and answers put at once', async () => {
    const handoff = new BatchHandoff();
    const taken = handoff.take();
    expect(await handoff.put(one, null)).toBe(true);
    expect(await taken).toBe(one);
  });

  it('keeps an offered batch until the reader takes it, then answers put', async () => {
    const handoff = new BatchHandoff();
    let answered: boolean | null = null;
    const put = handoff.put(one, null).then((accepted) => (answered = accepted));
    await Promise.resolve();
    expect(answered).toBeNull();
    expect(await handoff.take()).toBe(one);
    await put;
    expect(answered).toBe(true);
  });

  it('with holdUntilFinished answers put only at the reader’s next take', async () => {
    const handoff = new BatchHandoff(true);
    let answered: boolean | null = null;
    const taken = handoff.take();
    const put = handoff.put(one, null).then((accepted) => (answered = accepted));
    expect(await taken).toBe(one);
    await new Promise((resolve) => setImmediate(resolve));
    expect(answered).toBeNull();
    const next = handoff.take();
    await put;
    expect(answered).toBe(true);
    handoff.end();
    expect(await next).toBeNull();
  });

  it('answers false to a put the source ended before the reader finished', async () => {
    const handoff = new BatchHandoff(true);
    const put = handoff.put(one, null);
    expect(await handoff.take()).toBe(one);
    handoff.end();
    expect(await put).toBe(false);
    expect(await handoff.put(two, null)).toBe(false);
    expect(await handoff.take()).toBeNull();
  });

  it('answers false to an offered batch never taken, and the reader sees the end', async () => {
    const handoff = new BatchHandoff();
    const put = handoff.put(one, null);
    handoff.end();
    expect(await put).toBe(false);
    expect(await handoff.take()).toBeNull();
  });

  it('rejects a waiting reader and every later take with the failure', async () => {
    const handoff = new BatchHandoff();
    const waiting = handoff.take();
    const error = new Error('broker gone');
    handoff.fail(error);
    await expect(waiting).rejects.toBe(error);
    await expect(handoff.take()).rejects.toBe(error);
    expect(await handoff.put(one, null)).toBe(false);
  });

  it('heartbeats every 2 s while a batch waits for its reader', async () => {
    vi.useFakeTimers();
    const handoff = new BatchHandoff();
    let beats = 0;
    const payload = {
      heartbeat: async () => {
        beats++;
      },
    } as unknown as EachBatchPayload;
    const put = handoff.put(one, payload);
    await vi.advanceTimersByTimeAsync(1999);
    expect(beats).toBe(0);
    await vi.advanceTimersByTimeAsync(4001);
    expect(beats).toBe(3);
    await handoff.take();
    expect(await put).toBe(true);
    await vi.advanceTimersByTimeAsync(10_000);
    expect(beats).toBe(3);
  });
});

describe('Settled', () => {
  it('settles once from outside, and an unobserved rejection is not unhandled', async () => {
    const done = new Settled();
    done.resolve();
    await expect(done.promise).resolves.toBeUndefined();
    const failed = new Settled();
    failed.reject(new Error('stopped'));
    await new Promise((resolve) => setImmediate(resolve));
    await expect(failed.promise).rejects.toThrow('stopped');
  });
});
