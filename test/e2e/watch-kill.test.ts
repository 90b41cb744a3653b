// `shardwise watch` itself killed with SIGKILL mid-stream and started again on the same
// --group: the union of the verdicts of both runs must carry, for every window, exactly the
// requests produced into it. Source of truth: the records this file produces (each window's
// total is summed here from what was sent).
//
// The contract, from src/ingest/kafka/offset-ledger.ts and kafka/source.ts: offsets are
// committed every second, each partition below the first record still counted in a window
// not yet judged, with `shardwise judged-through=T` (the end of the newest judged window)
// as commit metadata. So after a crash the windows ending at or before the last committed
// T were judged by the first run and are never judged again; every later window is judged
// by the second run from a full replay of its records; a window the first run judged after
// its last commit is judged again, with the same total.
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Message, Producer } from 'kafkajs';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { brokerAddress } from './kafka-env.js';
import { TopicPool, testClient, testProducer, waitFor } from './kafka-fixtures.js';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const cli = join(root, 'dist', 'cli', 'main.js');
const pool = new TopicPool();
const children: ChildProcess[] = [];

const windowMs = 2000;
const latenessMs = 4000;
const windows = 24;
const shards = 12;
const partitions = 3;
// A live stream: every 250 ms one send of 500 ms of event time (one report per shard), so
// event time runs twice as fast as the wall clock. The partitions of one send may reach the
// source a little apart (a fetch between two partitions' appends, the SIGSTOP below), and
// the lateness covers up to 2 s of such wall-clock lag; a window also closes on the wall
// clock only after the source has been quiet for longer than a window plus the lateness
// (6 s). No record may come late, and the test checks that none did: with one window of
// event time a send (20 times the wall clock) a lag of 100 ms made records late, which is
// what the lateness is for, not what this test is about.
const sliceMs = 500;
const slicesPerWindow = windowMs / sliceMs;
const sendEveryMs = 250;
// The broker's smallest session timeout by default (group.min.session.timeout.ms, common
// practice): the second run waits at most this long for the killed member to be dropped.
const sessionTimeout = '6s';
const t0 = Date.UTC(2025, 11, 8, 9, 0, 0);

beforeAll(() => {
  const built = spawnSync('npm', ['run', 'build'], { cwd: root, encoding: 'utf8' });
  if (built.status !== 0) throw new Error(`npm run build failed: ${built.stderr}`);
});
afterEach(() => {
  for (const child of children.splice(0)) child.kill('SIGKILL');
});
afterAll(() => pool.cleanUp());

/** The count records of slice `i` of the stream: one report per shard, 1 to 9 requests. */
function sliceRecords(i: number): { ts: number; shard: string; count: number }[] {
  return Array.from({ length: shards }, (_, shard) => ({
    ts: t0 + i * sliceMs + 20 + shard * 30,
    shard: `s-${shard}`,
    count: ((i * 7 + shard * 5) % 9) + 1,
  }));
}

function messagesOf(i: number): Message[] {
  return sliceRecords(i).map((record) => ({
    key: record.shard,
    value: JSON.stringify(record),
    timestamp: String(record.ts),
  }));
}

/** Produced requests per window start (ms), summed from the records themselves. */
const expectedTotals = new Map<number, number>();
for (let i = 0; i < windows * slicesPerWindow; i++) {
  for (const record of sliceRecords(i)) {
    const start = Math.floor((record.ts - t0) / windowMs) * windowMs + t0;
    expectedTotals.set(start, (expectedTotals.get(start) ?? 0) + record.count);
  }
}

interface Verdict {
  readonly start: number;
  readonly end: number;
  readonly requests: number;
  readonly late: number;
}

/** A running `watch`: its verdict lines so far, parsed, and its stderr. */
class WatchRun {
  readonly child: ChildProcess;
  readonly verdicts: Verdict[] = [];
  stderr = '';
  /** When the first verdict line came (ms since the epoch); NaN before. */
  firstVerdictAt = NaN;
  exit: Promise<{ code: number | null; signal: NodeJS.Signals | null }>;
  private pending = '';

  constructor(args: string[]) {
    this.child = spawn('node', [cli, 'watch', ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
    children.push(this.child);
    this.exit = new Promise((resolve) =>
      this.child.on('exit', (code, signal) => resolve({ code, signal })),
    );
    this.child.stdout!.on('data', (chunk: Buffer) => {
      // Only whole lines: a kill may cut the last one short.
      const lines = (this.pending + chunk.toString()).split('\n');
      this.pending = lines.pop() as string;
      for (const line of lines) {
        const verdict = JSON.parse(line) as {
          window: { start: string; end: string };
          requests: number;
          late: number;
        };
        if (this.verdicts.length === 0) this.firstVerdictAt = Date.now();
        this.verdicts.push({
          start: Date.parse(verdict.window.start),
          end: Date.parse(verdict.window.end),
          requests: verdict.requests,
          late: verdict.late,
        });
      }
    });
    this.child.stderr!.on('data', (chunk: Buffer) => (this.stderr += chunk.toString()));
  }

  get newestEnd(): number {
    return this.verdicts.length === 0 ? -Infinity : this.verdicts[this.verdicts.length - 1].end;
  }
}

/** The judged-through mark of the group's commits (the newest over partitions), or -Infinity. */
async function committedJudgedThrough(groupId: string, topic: string): Promise<number> {
  const admin = testClient().admin();
  await admin.connect();
  try {
    const [committed] = await admin.fetchOffsets({ groupId, topics: [topic] });
    let through = -Infinity;
    for (const partition of committed?.partitions ?? []) {
      const match = /^shardwise judged-through=(\d+)$/.exec(partition.metadata ?? '');
      if (match !== null) through = Math.max(through, Number(match[1]));
    }
    return through;
  } finally {
    await admin.disconnect();
  }
}

/** Sends slices `from` to `to` - 1, one every {@link sendEveryMs}; `sent` counts them. */
async function sendPaced(
  producer: Producer,
  topic: string,
  from: number,
  to: number,
  sent: { slices: number },
): Promise<void> {
  for (let i = from; i < to; i++) {
    await producer.send({ topic, messages: messagesOf(i), acks: -1 });
    sent.slices = i + 1;
    await new Promise((resolve) => setTimeout(resolve, sendEveryMs));
  }
}

function expectExact(verdicts: readonly Verdict[], run: string): void {
  const starts = verdicts.map((verdict) => verdict.start);
  expect(new Set(starts).size, `${run} judged a window twice`).toBe(starts.length);
  for (const verdict of verdicts) {
    const where = `${run}, window ${new Date(verdict.start).toISOString()}`;
    expect(verdict.late, where).toBe(0);
    expect(verdict.requests, where).toBe(expectedTotals.get(verdict.start));
  }
}

describe('watch killed with SIGKILL and restarted on the same group (real broker)', () => {
  it('judges every window with exactly its produced total across both runs', async () => {
    const topic = await pool.fresh('watch-kill', partitions);
    const groupId = `${topic}-watch`;
    const args = [
      '--brokers',
      brokerAddress(),
      '--topic',
      topic,
      '--group',
      groupId,
      '--from',
      'earliest',
      '--shards',
      `s-0..s-${shards - 1}`,
      '--window',
      `${windowMs / 1000}s`,
      '--lateness',
      `${latenessMs / 1000}s`,
      '--session-timeout',
      sessionTimeout,
      '--no-keys',
      '--no-ui',
      '--no-metrics',
    ];
    const producer = testProducer();
    await producer.connect();
    try {
      // A backlog of two windows, then a live stream that outlasts the first run.
      const slices = windows * slicesPerWindow;
      const sent = { slices: 0 };
      await sendPaced(producer, topic, 0, 2 * slicesPerWindow, sent);
      const first = new WatchRun(args);
      const sending = sendPaced(producer, topic, 2 * slicesPerWindow, slices, sent);

      // The kill comes once the first run has judged a few windows, has committed, and has
      // judged at least one window past its last commit (so that one is judged twice). To
      // look at a still picture, the run is stopped (SIGSTOP) while the commit is read; a
      // commit already on its way has 200 ms to land first.
      let judgedThrough = -Infinity;
      const lookStarted = Date.now();
      for (;;) {
        if (Date.now() - lookStarted > 90_000) {
          throw new Error(`the first run never got past a commit; stderr: ${first.stderr}`);
        }
        if (first.verdicts.length >= 3) {
          first.child.kill('SIGSTOP');
          await new Promise((resolve) => setTimeout(resolve, 200));
          judgedThrough = await committedJudgedThrough(groupId, topic);
          if (Number.isFinite(judgedThrough) && first.newestEnd > judgedThrough) break;
          first.child.kill('SIGCONT');
        }
        await new Promise((resolve) => setTimeout(resolve, 100));
      }
      first.child.kill('SIGKILL');
      expect((await first.exit).signal).toBe('SIGKILL');
      const slicesSentAtKill = sent.slices;
      expect(slicesSentAtKill, 'the kill came after the stream ended').toBeLessThan(slices);
      expect(await committedJudgedThrough(groupId, topic)).toBe(judgedThrough);

      const restarted = Date.now();
      const second = new WatchRun(args);
      await sending;
      const lastStart = t0 + (windows - 1) * windowMs;
      await waitFor(
        () => second.verdicts.some((verdict) => verdict.start === lastStart),
        `the second run to judge the last window; stderr: ${second.stderr}`,
        120_000,
      );
      second.child.kill('SIGINT');
      expect((await second.exit).code).toBe(0);

      expectExact(first.verdicts, 'first run');
      expectExact(second.verdicts, 'second run');
      const all = [...expectedTotals.keys()];
      const endOf = (start: number) => start + windowMs;
      // Up to the last commit: the first run's, every one, and never again.
      expect(first.verdicts.filter((v) => v.end <= judgedThrough).map((v) => v.start)).toEqual(
        all.filter((start) => endOf(start) <= judgedThrough),
      );
      // After it: every window judged by the second run, from its full replay.
      expect(second.verdicts.map((v) => v.start)).toEqual(
        all.filter((start) => endOf(start) > judgedThrough),
      );
      // Judged by both runs: the same total.
      const twice = first.verdicts.filter((v) => v.end > judgedThrough);
      expect(twice.length).toBeGreaterThanOrEqual(1);
      for (const verdict of twice) {
        expect(second.verdicts.find((v) => v.start === verdict.start)?.requests).toBe(
          verdict.requests,
        );
      }
      console.log(
        `watch-kill: first run judged ${first.verdicts.length} windows, committed through ` +
          `${new Date(judgedThrough).toISOString()}, killed with ${slicesSentAtKill} of ` +
          `${slices} sends made; second run judged ${second.verdicts.length} ` +
          `(${twice.length} again); its first verdict came ${second.firstVerdictAt - restarted} ms after the restart`,
      );
    } finally {
      await producer.disconnect();
    }
  });
});
