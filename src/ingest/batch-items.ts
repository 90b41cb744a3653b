import type { SourceItem } from './file-source.js';

/**
 * The items of a source's batches one at a time, for `for await` over a source. A
 * hand-written iterator rather than `yield*`: an async generator costs several promises per
 * item, this one a single already-settled promise. Returning early ends the batches too.
 */
export function itemsOf(batches: AsyncGenerator<SourceItem[]>): AsyncIterator<SourceItem> {
  let batch: SourceItem[] = [];
  let next = 0;
  return {
    next: async (): Promise<IteratorResult<SourceItem>> => {
      while (next >= batch.length) {
        const step = await batches.next();
        if (step.done === true) return { value: undefined, done: true };
        batch = step.value;
        next = 0;
      }
      return { value: batch[next++], done: false };
    },
    return: async (): Promise<IteratorResult<SourceItem>> => {
      await batches.return(undefined);
      return { value: undefined, done: true };
    },
  };
}
