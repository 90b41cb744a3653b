// `shardwise review --brokers` on the real test broker: a time range of a topic filled from
// a scenario must give the review of the same records read from a file (the file is the
// reference: same records, same pipeline), find the planted hotspot (seat-17 at 1.5x from
// 1:00 to 3:00, src/scenario/built-in-scenarios.ts), and leave no committed offset behind.
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { brokerList } from './kafka-env.js';
import { produceMessages, testClient, TopicPool } from './kafka-fixtures.js';
import { runCli } from '../review/cli-run.js';

const pool = new TopicPool();
afterAll(() => pool.cleanUp());

const since = Date.parse('2026-01-01T00:00:30Z');
const until = Date.parse('2026-01-01T00:03:30Z');

/** The episode rows and the window count of a Markdown summary. */
function episodesOf(markdown: string): { windows: string; rows: string[] } {
  const lines = markdown.split('\n');
  return {
    windows: lines.find((line) => line.startsWith('- **windows**')) ?? '',
    rows: lines.filter((line) => /^\| (hotspot|cold|uneven|too little traffic)/.test(line)),
  };
}

describe('review of a Kafka time range (real broker)', () => {
  it('reviews [--since, --until) like the same records from a file, committing no offset', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'shardwise-review-kafka-'));
    const file = join(dir, 'hotspot.jsonl');
    const simulated = await runCli([
      'simulate',
      '--scenario',
      'hotspot',
      '--seed',
      '3',
      '--duration',
      '4m',
      '--start',
      '2026-01-01T00:00:00Z',
      '--to',
      file,
    ]);
    expect(simulated.code).toBe(0);
    const lines = readFileSync(file, 'utf8').trim().split('\n');
    const topic = await pool.fresh('review', 3);
    // Message time = record time, as `simulate --to kafka` writes them.
    await produceMessages(
      topic,
      lines.map((value) => {
        const record = JSON.parse(value) as { shard: string; ts: number };
        return { key: record.shard, value, timestamp: String(record.ts) };
      }),
    );
    const inRange = join(dir, 'in-range.jsonl');
    writeFileSync(
      inRange,
      lines
        .filter((line) => {
          const ts = (JSON.parse(line) as { ts: number }).ts;
          return ts >= since && ts < until;
        })
        .join('\n') + '\n',
    );
    const common = ['--shards', 'seat-00..seat-63', '--markdown', '-'];
    const fromFile = await runCli(['review', '--input', inRange, ...common]);
    expect(fromFile.code).toBe(0);
    const fromKafka = await runCli([
      'review',
      '--brokers',
      brokerList().join(','),
      '--topic',
      topic,
      '--since',
      new Date(since).toISOString(),
      '--until',
      new Date(until).toISOString(),
      ...common,
    ]);
    expect(fromKafka.err).toMatch(
      /^shardwise review: 18 windows from 2026-01-01T00:00:30Z to 2026-01-01T00:03:30Z/m,
    );
    expect(fromKafka.code).toBe(0);
    expect(episodesOf(fromKafka.out)).toEqual(episodesOf(fromFile.out));
    expect(
      episodesOf(fromKafka.out).rows.some((row) =>
        row.startsWith('| hotspot | seat-17 | 2026-01-01T00:01:00Z | 2026-01-01T00:03:00Z |'),
      ),
    ).toBe(true);

    // No group holds an offset on this fresh topic: the review committed nothing.
    const admin = testClient().admin();
    await admin.connect();
    try {
      const { groups } = await admin.listGroups();
      for (const { groupId } of groups) {
        const [offsets] = await admin.fetchOffsets({ groupId, topics: [topic] });
        for (const entry of offsets?.partitions ?? []) expect(entry.offset).toBe('-1');
      }
    } finally {
      await admin.disconnect();
    }
  });
});
