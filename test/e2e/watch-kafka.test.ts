import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { brokerList } from './kafka-env.js';
import {
  produceMessages,
  produceWithKcat,
  readLinesWithKcat,
  TopicPool,
} from './kafka-fixtures.js';

// `shardwise watch --brokers` end to end: the built CLI reads a topic filled from a scenario
// file and must print the same verdicts as `watch --input` on that file (the file run is the
// reference: same records, same windows).
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const cli = join(root, 'dist', 'cli', 'main.js');
const pool = new TopicPool();

beforeAll(() => {
  const built = spawnSync('npm', ['run', 'build'], { cwd: root, encoding: 'utf8' });
  if (built.status !== 0) throw new Error(`npm run build failed: ${built.stderr}`);
});
afterAll(() => pool.cleanUp());

function verdictsFromFile(file: string, extra: string[]): string[] {
  const r = spawnSync('node', [cli, 'watch', '--input', file, ...extra], { encoding: 'utf8' });
  expect(r.status).toBe(0);
  return r.stdout.trim().split('\n');
}

/** Runs watch on Kafka until it has printed `expected` verdicts, then interrupts it. */
function verdictsFromKafka(
  args: string[],
  expected: number,
): Promise<{ lines: string[]; code: number | null; err: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn('node', [cli, 'watch', ...args], { stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let err = '';
    const timer = setTimeout(() => {
      child.kill('SIGKILL');
      reject(
        new Error(
          `watch printed ${out.split('\n').length - 1} of ${expected} verdicts in time; stderr: ${err}`,
        ),
      );
    }, 90_000);
    child.stdout.on('data', (d) => {
      out += d;
      if (out.split('\n').length - 1 >= expected) child.kill('SIGINT');
    });
    child.stderr.on('data', (d) => (err += d));
    child.on('exit', (code) => {
      clearTimeout(timer);
      resolve({ lines: out.trim().split('\n'), code, err });
    });
  });
}

describe('watch --brokers (real broker)', () => {
  it('gives the verdicts of the same records read from a file, and exits 0 on interrupt', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'shardwise-watch-kafka-'));
    const file = join(dir, 'hotspot.jsonl');
    const sim = spawnSync(
      'node',
      [
        cli,
        'simulate',
        '--scenario',
        'hotspot',
        '--seed',
        '3',
        '--duration',
        '3m',
        '--start',
        '2026-01-01T00:00:00Z',
        '--to',
        file,
      ],
      { encoding: 'utf8' },
    );
    expect(sim.status).toBe(0);
    const lines = readFileSync(file, 'utf8').trim().split('\n');
    const topic = await pool.fresh('watch', 3);
    await produceMessages(
      topic,
      // Message time = record time, as `simulate --to kafka` and live reporters write them; the
      // source aligns partitions by message time while it catches up.
      lines.map((value) => {
        const record = JSON.parse(value) as { shard: string; ts: number };
        return { key: record.shard, value, timestamp: String(record.ts) };
      }),
    );
    const common = ['--shards', 'seat-00..seat-63', '--no-ui', '--no-metrics'];
    const fromFile = verdictsFromFile(file, common);
    // The last window closes only when the file ends; a live topic keeps it open.
    const wanted = fromFile.length - 1;
    const fromKafka = await verdictsFromKafka(
      ['--brokers', brokerList().join(','), '--topic', topic, '--from', 'earliest', ...common],
      wanted,
    );
    expect(fromKafka.code).toBe(0);
    const firstDifference = fromFile
      .slice(0, wanted)
      .findIndex((line, i) => line !== fromKafka.lines[i]);
    expect(
      firstDifference === -1
        ? null
        : { file: fromFile[firstDifference], kafka: fromKafka.lines[firstDifference] },
    ).toBeNull();
    expect(
      fromFile.some((l) => (JSON.parse(l) as { findings: string[] }).findings.includes('hotspot')),
    ).toBe(true);
  });

  it('reads a kcat-produced 4-partition backlog of count batches at --lateness 0s to exactly the verdicts of the same file (measured on main: 16,896 of 32,000 records rejected as too late)', async () => {
    // Invented data: 64 shards reported by 16 reporters (4 shards each, one count batch per
    // reporter every 5 s) for 250 windows of 10 s; s-07 carries 3x its share in windows
    // 100-119. kcat keys each batch by reporter, so each partition holds some reporters'
    // batches in file order; message timestamps are the time of writing, as with most
    // producers that backfill, so they say nothing about event time.
    const dir = mkdtempSync(join(tmpdir(), 'shardwise-watch-kcat-'));
    const file = join(dir, 'batches.jsonl');
    const start = Date.parse('2026-01-01T00:00:00Z');
    const lines: string[] = [];
    const keyed: string[] = [];
    let seed = 12345;
    const next = () => {
      seed = (seed * 1103515245 + 12345) % 2147483648;
      return seed / 2147483648;
    };
    for (let window = 0; window < 250; window++) {
      for (const offset of [0, 5000]) {
        for (let reporter = 0; reporter < 16; reporter++) {
          const counts: Record<string, number> = {};
          for (let at = 0; at < 4; at++) {
            const shard = reporter * 4 + at;
            const hot = shard === 7 && window >= 100 && window < 120 ? 3 : 1;
            counts[`s-${String(shard).padStart(2, '0')}`] = Math.round(hot * (40 + 20 * next()));
          }
          const line = JSON.stringify({ ts: start + window * 10_000 + offset, counts });
          lines.push(line);
          keyed.push(`reporter-${reporter}\t${line}`);
        }
      }
    }
    writeFileSync(file, lines.join('\n') + '\n');
    const topic = await pool.fresh('kcat-backlog', 4);
    await produceWithKcat(topic, keyed);
    // The premise, checked on the topic itself: each partition holds its reporters' batches
    // in file order (a producer that reorders a partition makes its records rightly late).
    const written = await readLinesWithKcat(topic);
    expect([...written.values()].reduce((sum, held) => sum + held.length, 0)).toBe(keyed.length);
    for (const [partition, held] of written) {
      const reporters = new Set(held.map((line) => line.slice(0, line.indexOf('\t'))));
      const inFileOrder = keyed.filter((line) => reporters.has(line.slice(0, line.indexOf('\t'))));
      expect(held, `partition ${partition} as written`).toEqual(inFileOrder);
    }
    const common = ['--shards', 's-00..s-63', '--lateness', '0s', '--no-ui', '--no-metrics'];
    const fromFile = verdictsFromFile(file, common);
    expect(fromFile).toHaveLength(250);
    const fromKafka = await verdictsFromKafka(
      ['--brokers', brokerList().join(','), '--topic', topic, '--from', 'earliest', ...common],
      fromFile.length,
    );
    expect(fromKafka.code).toBe(0);
    expect(fromKafka.err).toMatch(/rejected: 0; late: 0 requests in 0 records/);
    // The topic's last windows close once its partitions go idle, and those verdicts say so
    // in their notes; everything else is the file's verdict to the letter.
    const core = (line: string) => {
      const { notes, idlePartitions, ...rest } = JSON.parse(line) as Record<string, unknown> & {
        notes: string[];
        idlePartitions?: number[];
      };
      void idlePartitions;
      return { ...rest, notes: notes.filter((note) => !note.startsWith('source partition')) };
    };
    expect(fromKafka.lines.map(core)).toEqual(fromFile.map(core));
    expect(
      fromFile.some((l) => (JSON.parse(l) as { findings: string[] }).findings.includes('hotspot')),
    ).toBe(true);
  });

  it('names a partition written out of time order, whose older records are rightly too late at --lateness 0s', async () => {
    // Invented data: 4 shards, one record a second each for 100 s, shards a and b on
    // partition 0 in time order, c and d on partition 1 with seconds 30-49 written after
    // second 99, as a producer retrying without idempotence can leave them.
    const start = Date.parse('2026-01-01T00:00:00Z');
    const record = (second: number, shard: string, partition: number) => {
      const value = JSON.stringify({ ts: start + second * 1000, shard, count: 5 });
      return { key: shard, value, partition, timestamp: String(start + second * 1000) };
    };
    const seconds = Array.from({ length: 100 }, (_, s) => s);
    const moved = (s: number) => s >= 30 && s < 50;
    const partition1 = [...seconds.filter((s) => !moved(s)), ...seconds.filter(moved)];
    const topic = await pool.fresh('disorder', 2);
    await produceMessages(topic, [
      ...seconds.flatMap((s) => [record(s, 'a', 0), record(s, 'b', 0)]),
      ...partition1.flatMap((s) => [record(s, 'c', 1), record(s, 'd', 1)]),
    ]);
    const fromKafka = await verdictsFromKafka(
      ['--brokers', brokerList().join(','), '--topic', topic, '--from', 'earliest'].concat([
        '--shards',
        'a,b,c,d',
        '--window',
        '10s',
        '--lateness',
        '0s',
        '--no-ui',
        '--no-metrics',
      ]),
      9,
    );
    expect(fromKafka.code).toBe(0);
    // Seconds 30-49 of c and d come after partition 1 gave second 99: all 40 are too late,
    // and every one is named as disorder within partition 1; partition 0 lost nothing.
    expect(fromKafka.err).toMatch(/rejected: 40 \(too late 40\)/);
    expect(fromKafka.err).toMatch(/too late by source partition: 1: 40\n/);
    expect(fromKafka.err).toMatch(/out of time order within their own partition .*: 1: 40\n/);
  });

  it('exits 1 naming the brokers when none answers', () => {
    const r = spawnSync(
      'node',
      [cli, 'watch', '--brokers', '127.0.0.1:1', '--topic', 'x', '--no-ui', '--no-metrics'],
      {
        encoding: 'utf8',
        timeout: 120_000,
      },
    );
    expect(r.status).toBe(1);
    expect(r.stderr).toContain('127.0.0.1:1');
  });

  it('exits 2 when --brokers is combined with --input', () => {
    const r = spawnSync('node', [cli, 'watch', '--brokers', '127.0.0.1:1', '--input', 'x.jsonl'], {
      encoding: 'utf8',
    });
    expect(r.status).toBe(2);
    expect(r.stderr).toContain('--brokers');
  });
});
