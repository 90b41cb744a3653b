import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { JudgeSettings } from '../judge/judge-settings.js';
import type { Judgement } from '../judge/judgement.js';
import type { WindowJudge } from '../judge/judging-pipeline.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import type { DeclaredUniverse } from '../window/shard-universe.js';

/** Said with a failure of the thread: how to judge without it. */
const inlineHint = ' (--judge-inline judges on the reading thread)';

/** What the judging thread posts back for each window, in the order posted. */
export type JudgeThreadReply = { readonly judgement: Judgement } | { readonly error: string };

/** Where the worker's code is, and how to start it. */
export interface JudgeThreadEntry {
  readonly url: URL;
  /** Arguments of the worker (tests start the TypeScript entry through a loader). */
  readonly argv?: readonly string[];
}

/**
 * The built worker entry beside this module (dist/cli/judge-thread-worker.js), or null when
 * running from TypeScript sources (tests, `tsx`): then windows are judged on the reading
 * thread.
 */
export function builtJudgeThreadEntry(): JudgeThreadEntry | null {
  const url = new URL('./judge-thread-worker.js', import.meta.url);
  return url.protocol === 'file:' && existsSync(fileURLToPath(url)) ? { url } : null;
}

/**
 * A Judge on a worker thread, so judging runs on the second core while this thread reads,
 * decodes and windows records, serves /metrics and draws the screen. Windows go over in
 * close order and verdicts come back in the same order (one Judge, one message queue), equal
 * to the ones a Judge on this thread gives: the worker runs the same class on a copy of the
 * declared universe (ids and exact weights), and the settings are plain data. A window is
 * copied to the worker (its counts stay with the reading thread's listeners); the verdict
 * is copied back.
 *
 * Only a declared universe is judged this way: a growing one changes with every record and
 * retires ids between windows, so its judge stays beside it. The thread keeps the process
 * alive only while a verdict is awaited.
 */
export class JudgeThread implements WindowJudge {
  private readonly worker: Worker;
  private readonly waiting: {
    resolve: (judgement: Judgement) => void;
    reject: (error: Error) => void;
  }[] = [];
  private failure: Error | null = null;
  private closed = false;

  /**
   * @param universe the declared universe, as {@link ShardUniverse.describe} gives it
   * @param settings checked already (a Judge built on this thread checks them at start-up)
   * @param entry the worker's code ({@link builtJudgeThreadEntry})
   */
  constructor(universe: DeclaredUniverse, settings: JudgeSettings, entry: JudgeThreadEntry) {
    this.worker = new Worker(entry.url, {
      workerData: { universe, settings },
      argv: entry.argv === undefined ? [] : [...entry.argv],
      stdout: false,
      stderr: false,
    });
    this.worker.unref();
    this.worker.on('message', (reply: JudgeThreadReply) => {
      const next = this.waiting.shift();
      if (this.waiting.length === 0) this.worker.unref();
      if (next === undefined) return;
      if ('judgement' in reply) next.resolve(reply.judgement);
      else next.reject(new Error(`the judging thread failed: ${reply.error}${inlineHint}`));
    });
    this.worker.on('error', (error) =>
      this.fail(
        new Error(`the judging thread failed: ${error.message}${inlineHint}`, { cause: error }),
      ),
    );
    this.worker.on('exit', (code) => {
      if (!this.closed) {
        this.fail(new Error(`the judging thread stopped (exit code ${code})${inlineHint}`));
      }
    });
  }

  judge(window: ClosedWindow): Promise<Judgement> {
    if (this.failure !== null) return Promise.reject(this.failure);
    return new Promise((resolve, reject) => {
      if (this.waiting.length === 0) this.worker.ref();
      this.waiting.push({ resolve, reject });
      this.worker.postMessage(window);
    });
  }

  /** Stops the thread; verdicts still awaited are refused. */
  async close(): Promise<void> {
    this.closed = true;
    await this.worker.terminate();
    this.fail(new Error('judging thread closed'));
  }

  private fail(error: Error): void {
    this.failure ??= error;
    for (const waiter of this.waiting.splice(0)) waiter.reject(this.failure);
  }
}
