import { describe, expect, it } from 'vitest';
import type { SourceItem } from '../../src/ingest/file-source.js';
import { itemsOf } from '../../src/ingest/batch-items.js';

const item = (shard: string) => ({ ts: 0, shard, count: 1 }) as unknown as SourceItem;

describe('itemsOf', () => {
  it('the items of every batch in order, empty batches skipped, then done', async () => {
    async function* batches() {
      yield [item('a'), item('b')];
      yield [];
      yield [item('c')];
    }
    const seen: string[] = [];
    const items = itemsOf(batches());
    for (let step = await items.next(); step.done !== true; step = await items.next()) {
      seen.push((step.value as { shard: string }).shard);
    }
    expect(seen).toEqual(['a', 'b', 'c']);
    expect(await items.next()).toEqual({ value: undefined, done: true });
  });

  it('returning early ends the batches too', async () => {
    let finished = false;
    async function* batches() {
      try {
        yield [item('a'), item('b')];
        yield [item('c')];
      } finally {
        finished = true;
      }
    }
    const items = itemsOf(batches());
    expect(((await items.next()).value as { shard: string }).shard).toBe('a');
    expect(await items.return?.()).toEqual({ value: undefined, done: true });
    expect(finished).toBe(true);
  });
});
