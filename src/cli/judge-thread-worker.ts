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

const port = parentPort;
if (port === null) throw new Error('judge-thread-worker.ts runs only as a worker thread');
const { universe: description, settings } = workerData as {
  universe: DeclaredUniverse;
  settings: JudgeSettings;
};
const universe = ShardUniverse.fromDescription(description);
const judge = new Judge(universe, settings);

port.on('message', (window: ClosedWindow) => {
  let reply: JudgeThreadReply;
  try {
    // A topic that gained partitions grew the reading thread's numbered universe.
    if (window.counts.length > universe.size) universe.growNumbered(window.counts.length);
    reply = { judgement: judge.judge(window) };
  } catch (error) {
    reply = {
      error: error instanceof Error ? (error.stack ?? error.message) : String(error),
    };
  }
  port.postMessage(reply);
});
