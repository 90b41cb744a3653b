// The judging thread's entry (see judge-thread.ts): a Judge over a copy of the declared
// universe, judging the windows the reading thread posts, in the order posted, and posting
// each verdict back. Nothing here decides anything: the Judge is the same class that judges
// on the reading thread, so the verdicts are the same.
import { parentPort, workerData } from 'node:worker_threads';
import { Judge } from '../judge/judge.js';
import type { JudgeSettings } from '../judge/judge-settings.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import { ShardUniverse, type DeclaredUniverse } from '../window/shard-universe.js';
import type { JudgeThreadReply } from './judge-thread.js';

/** Shards of the warm-up universe: enough to take every path a large weighted one takes. */
const warmUpShards = 4000;

const port = parentPort;
if (port === null) throw new Error('judge-thread-worker.ts runs only as a worker thread');
const { universe: description, settings } = workerData as {
  universe: DeclaredUniverse;
  settings: JudgeSettings;
};
const universe = ShardUniverse.fromDescription(description);
const judge = new Judge(universe, settings);
warmUp(description, settings);

port.on('message', (window: ClosedWindow) => {
  let reply: JudgeThreadReply;
  try {
    // A topic that gained partitions grew the reading thread's numbered universe.
    if (window.counts.length > universe.size) universe.growNumbered(window.counts.length);
    reply = { judgement: judge.judge(window) };
  } catch (error) {
    reply = { error: error instanceof Error ? error.message : String(error) };
  }
  port.postMessage(reply);
});

/**
 * A large weighted universe's first window costs 0.4-1 s cold, against 0.1-0.2 s warm,
 * nearly all of it compiling the share-sweep code (bench/judge-thread-warm-up.bench.ts).
 * So before its first window the thread judges two made-up windows, at 10 and 10 000
 * requests per shard, over the first 4000 weights with a throwaway Judge (its own memo:
 * nothing it computes reaches a verdict). About 0.3 s of the second core, spent while a live
 * run's first window fills; windows posted meanwhile wait in the thread's queue.
 */
function warmUp(universe: DeclaredUniverse, settings: JudgeSettings): void {
  const weights = universe.weights;
  if (weights === null || universe.ids.length <= warmUpShards) return;
  const ids = universe.ids.slice(0, warmUpShards);
  const sample = ShardUniverse.fromWeights(ids, weights.slice(0, warmUpShards));
  const shares = sample.shares;
  const throwaway = new Judge(sample, settings);
  [10, 10_000].forEach((perShard, at) => {
    const counts = new Float64Array(warmUpShards);
    let total = 0;
    for (let shard = 0; shard < warmUpShards; shard++) {
      counts[shard] = Math.round(perShard * warmUpShards * shares[shard]);
      total += counts[shard];
    }
    const start = at * settings.hopMs;
    throwaway.judge({ start, end: start + settings.hopMs, counts, total, late: 0, rejected: {} });
  });
}
