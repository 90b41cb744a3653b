import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Message } from 'kafkajs';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { brokerAddress } from './kafka-env.js';
import { produceMessages, TopicPool } from './kafka-fixtures.js';

// Scale-out end to end on the test broker: `shardwise count` instances in one consumer
// group publish partial summaries, `shardwise watch --merge` judges. Source of truth: the
// counts produced below (what was produced is the ground truth for every window), compared
// with the full count vector the judge records per window (--record).
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const cli = join(root, 'dist', 'cli', 'main.js');
const pool = new TopicPool();
const partitions = 12;
const shards = 24;
const windowMs = 1000;
const t0 = 1_700_000_000_000;
const children: ChildProcess[] = [];

beforeAll(() => {
  const built = spawnSync('npm', ['run', 'build'], { cwd: root, encoding: 'utf8' });
  if (built.status !== 0) throw new Error(`npm run build failed: ${built.stderr}`);
});
afterEach(() => {
  for (const child of children.splice(0)) child.kill('SIGKILL');
});
afterAll(() => pool.cleanUp());

/** Load of shard s in window w: any fixed pattern will do; this one varies by both. */
function load(window: number, shard: number): number {
  return 1 + ((window * 7 + shard * 3) % 5);
}

/** Shard s always goes to partition s mod 12, so every partition carries two shards. */
function windowMessages(window: number): Message[] {
  const messages: Message[] = [];
  for (let shard = 0; shard < shards; shard++) {
    const ts = t0 + window * windowMs + ((shard * 37) % windowMs);
    messages.push({
      partition: shard % partitions,
      value: JSON.stringify({ ts, shard: `s-${shard}`, count: load(window, shard) }),
      timestamp: String(ts),
    });
  }
  return messages;
}

async function produceWindows(topic: string, from: number, to: number): Promise<void> {
  const messages: Message[] = [];
  for (let window = from; window < to; window++) messages.push(...windowMessages(window));
  await produceMessages(topic, messages);
}

interface Proc {
  readonly child: ChildProcess;
  out: string;
  err: string;
}

function start(args: string[]): Proc {
  const child = spawn('node', [cli, ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
  children.push(child);
  const proc: Proc = { child, out: '', err: '' };
  child.stdout!.on('data', (d) => (proc.out += d));
  child.stderr!.on('data', (d) => (proc.err += d));
  return proc;
}

async function until(what: string, check: () => boolean, procs: Proc[]): Promise<void> {
  const deadline = Date.now() + 150_000;
  while (!check()) {
    if (Date.now() > deadline) {
      throw new Error(
        `gave up waiting for ${what}; stderr: ${procs.map((p) => p.err).join('\n---\n')}`,
      );
    }
    await new Promise((resolve) => setTimeout(resolve, 200));
  }
}

/** The partitions an instance holds after its latest join. */
function held(proc: Proc): number[] {
  const joins = [...proc.err.matchAll(/joined \(epoch \d+\), partitions (\[[\d,]*\])/g)];
  return joins.length === 0 ? [] : (JSON.parse(joins[joins.length - 1][1]) as number[]);
}

function settled(counters: Proc[]): boolean {
  const all = counters.flatMap(held);
  return (
    counters.every((c) => held(c).length > 0) &&
    new Set(all).size === partitions &&
    all.length === partitions
  );
}

function verdicts(judge: Proc): {
  window: { start: string };
  requests: number;
  coverage: { complete: boolean; missing: number[] };
}[] {
  return judge.out
    .split('\n')
    .filter((line) => line.trim() !== '')
    .map((line) => JSON.parse(line));
}

function recorded(
  file: string,
): { window: { start: string }; counts: number[]; shardIds?: string[] }[] {
  return readFileSync(file, 'utf8')
    .split('\n')
    .filter((line) => line.trim() !== '')
    .map((line) => JSON.parse(line));
}

function expectedCounts(window: number, onPartitions: readonly number[]): number[] {
  return Array.from({ length: shards }, (_, shard) =>
    onPartitions.includes(shard % partitions) ? load(window, shard) : 0,
  );
}

const every = Array.from({ length: partitions }, (_, p) => p);

describe('count + watch --merge (real broker)', () => {
  async function setUp(label: string, instances: number, sessionTimeout: string, deadline: string) {
    const topic = await pool.fresh(`${label}-src`, partitions);
    const summaries = await pool.fresh(`${label}-sum`, 1);
    const group = `${topic}-count`;
    const record = join(mkdtempSync(join(tmpdir(), 'shardwise-scale-')), 'merged.jsonl');
    const brokers = brokerAddress();
    const judge = start([
      'watch',
      '--brokers',
      brokers,
      '--merge',
      summaries,
      '--from',
      'earliest',
      '--shards',
      `s-0..s-${shards - 1}`,
      '--window',
      '1s',
      '--merge-deadline',
      deadline,
      '--no-ui',
      '--no-metrics',
      '--record',
      record,
    ]);
    const counters = Array.from({ length: instances }, () =>
      start([
        'count',
        '--brokers',
        brokers,
        '--topic',
        topic,
        '--group',
        group,
        '--summaries',
        summaries,
        '--from',
        'earliest',
        '--window',
        '1s',
        '--lateness',
        '0s',
        '--idle',
        '600s',
        '--session-timeout',
        sessionTimeout,
      ]),
    );
    await until('the group to settle', () => settled(counters), counters);
    return { topic, judge, counters, record };
  }

  it('three instances, one killed mid-stream: every window complete and exact', async () => {
    const { topic, judge, counters, record } = await setUp('three', 3, '6s', '120s');
    await produceWindows(topic, 0, 10);
    // Window 9 stays open until window 10's records come: nine verdicts.
    await until('nine verdicts', () => verdicts(judge).length >= 9, [judge, ...counters]);
    counters[2].child.kill('SIGKILL');
    await produceWindows(topic, 10, 21);
    await until('twenty verdicts', () => verdicts(judge).length >= 20, [judge, ...counters]);
    judge.child.kill('SIGINT');
    await new Promise((resolve) => judge.child.once('exit', resolve));
    const lines = verdicts(judge).slice(0, 20);
    expect(lines.map((v) => Date.parse(v.window.start))).toEqual(
      Array.from({ length: 20 }, (_, w) => t0 + w * windowMs),
    );
    for (const [w, verdict] of lines.entries()) {
      expect(verdict.coverage).toMatchObject({ complete: true, missing: [] });
      expect(verdict.requests).toBe(expectedCounts(w, every).reduce((a, b) => a + b, 0));
    }
    const rows = recorded(record).slice(0, 20);
    const ids = rows[0].shardIds!;
    for (const [w, row] of rows.entries()) {
      const byId = Object.fromEntries(ids.map((id, i) => [id, row.counts[i]]));
      const want = expectedCounts(w, every);
      expect(Array.from({ length: shards }, (_, s) => byId[`s-${s}`])).toEqual(want);
    }
  });

  it('an instance that never comes back leaves its partitions named missing, the rest exact', async () => {
    // Its session outlasts the test: its partitions never move, so the judge's deadline decides.
    const { topic, judge, counters } = await setUp('gone', 2, '120s', '3s');
    await produceWindows(topic, 0, 5);
    await until('four verdicts', () => verdicts(judge).length >= 4, [judge, ...counters]);
    const lost = held(counters[1]);
    const kept = held(counters[0]);
    counters[1].child.kill('SIGKILL');
    await produceWindows(topic, 5, 11);
    await until('ten verdicts', () => verdicts(judge).length >= 10, [judge, ...counters]);
    const lines = verdicts(judge).slice(0, 10);
    for (const [w, verdict] of lines.entries()) {
      if (w < 4) {
        expect(verdict.coverage.complete).toBe(true);
        expect(verdict.requests).toBe(expectedCounts(w, every).reduce((a, b) => a + b, 0));
      } else {
        expect(verdict.coverage).toMatchObject({ complete: false, missing: lost });
        expect(verdict.requests).toBe(expectedCounts(w, kept).reduce((a, b) => a + b, 0));
      }
    }
  });
});
