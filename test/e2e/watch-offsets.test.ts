import { spawn, spawnSync } from 'node:child_process';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { brokerList } from './kafka-env.js';
import { TopicPool } from './kafka-fixtures.js';

// `shardwise watch --offsets-only` end to end on the real broker: Debian's kcat (an
// independent client) writes known numbers of messages into each partition, and the
// window totals must be exactly those numbers, read from end offsets alone.
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const cli = join(root, 'dist', 'cli', 'main.js');
const pool = new TopicPool();

beforeAll(() => {
  const built = spawnSync('npm', ['run', 'build'], { cwd: root, encoding: 'utf8' });
  if (built.status !== 0) throw new Error(`npm run build failed: ${built.stderr}`);
});
afterAll(() => pool.cleanUp());

/** Writes `count` messages into one partition with kcat (`-p` picks the partition). */
function kcatInto(topic: string, partition: number, count: number): Promise<void> {
  return new Promise((resolve, reject) => {
    const child = spawn(
      'kcat',
      ['-P', '-b', brokerList().join(','), '-t', topic, '-p', String(partition)],
      { stdio: ['pipe', 'ignore', 'pipe'] },
    );
    let stderr = '';
    child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
    child.on('error', reject);
    child.on('close', (code) =>
      code === 0 ? resolve() : reject(new Error(`kcat exited ${code}: ${stderr}`)),
    );
    child.stdin.end(Array.from({ length: count }, (_, at) => `m${at}\n`).join(''));
  });
}

interface Verdict {
  window: { start: string };
  requests: number;
  shards: number;
  findings: string[];
  fullest: { shard: string; count: number } | null;
}

describe('watch --offsets-only (real broker, kcat producer)', () => {
  it('finds the partition written at twice its share, with window totals equal to what was written', async () => {
    const topic = await pool.fresh('offsets', 4);
    const child = spawn(
      'node',
      [
        cli,
        'watch',
        '--brokers',
        brokerList().join(','),
        '--topic',
        topic,
        '--offsets-only',
        '--window',
        '4s',
        '--lateness',
        '0s',
        '--no-ui',
        '--no-metrics',
      ],
      { stdio: ['ignore', 'pipe', 'pipe'] },
    );
    let out = '';
    let err = '';
    child.stdout.on('data', (d) => (out += d));
    child.stderr.on('data', (d) => (err += d));
    const verdicts = () =>
      out
        .split('\n')
        .filter((line) => line !== '')
        .map((line) => JSON.parse(line) as Verdict);
    const waitFor = async (check: () => boolean, what: string) => {
      const deadline = Date.now() + 60_000;
      while (!check()) {
        if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}; stderr: ${err}`);
        await new Promise((resolve) => setTimeout(resolve, 100));
      }
    };
    try {
      // The first judged window shows the source is past its baseline read.
      await waitFor(() => verdicts().length >= 1, 'the first window');
      // Write in the middle of a window: 4 s windows, so start 1.5 s after a boundary.
      const now = Date.now();
      const boundary = Math.ceil(now / 4000) * 4000;
      await new Promise((resolve) => setTimeout(resolve, boundary + 1500 - now));
      const written = [300, 300, 600, 300];
      await Promise.all(written.map((count, partition) => kcatInto(topic, partition, count)));
      const windowStart = new Date(boundary).toISOString();
      await waitFor(
        () => verdicts().some((v) => v.window.start > windowStart),
        'the window after the writes',
      );
    } finally {
      child.kill('SIGINT');
      await new Promise((resolve) => child.on('exit', resolve));
    }
    const judged = verdicts();
    // Every message written is counted exactly once, in one window.
    expect(judged.reduce((sum, v) => sum + v.requests, 0)).toBe(1500);
    const loaded = judged.filter((v) => v.requests > 0);
    expect(loaded).toHaveLength(1);
    expect(loaded[0].shards).toBe(4);
    expect(loaded[0].fullest).toMatchObject({ shard: '2', count: 600 });
    expect(loaded[0].findings).toContain('hotspot');
  });
});
