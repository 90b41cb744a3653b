import { PassThrough } from 'node:stream';
import { describe, expect, it, vi } from 'vitest';
import { countCommand } from '../../src/cli/count.js';
import { feedRecords } from '../../src/cli/record-feed.js';
import type { SourceItem } from '../../src/ingest/file-source.js';
import type { GroupSourceEvent } from '../../src/ingest/kafka/group-source.js';
import type { RecordSource } from '../../src/ingest/record-source.js';
import { countBatches, expectedMarks, expectedParts, expectedWindows } from './count-fixture.js';

// `shardwise count` without a broker: its group source and its summary publisher are
// replaced by stand-ins that keep their contracts (events before the batches they concern;
// publish resolves once acknowledged); everything between them is the command's own.
// Source of truth: the hand-computed parts of test/cli/count-fixture.ts.

const seen = vi.hoisted(() => ({
  published: [] as { starts: number[]; parts: unknown[]; epoch: number; partitions: number }[],
  marks: [] as { partition: number | undefined; through: number }[],
  source: null as unknown,
  batches: [] as unknown[][],
}));

vi.mock('../../src/cli/record-feed.js', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../src/cli/record-feed.js')>();
  return { ...original, feedRecords: vi.fn(original.feedRecords) };
});

vi.mock('../../src/ingest/record-source.js', async (importOriginal) => {
  const original = await importOriginal<typeof import('../../src/ingest/record-source.js')>();
  return {
    ...original,
    kafkaGroupRecordSource: (options: { onEvent?: (event: GroupSourceEvent) => void }) => {
      const source: RecordSource & { group: { stats: { messages: number } } } = {
        group: { stats: { messages: 11 } },
        label: 'topic t',
        live: true,
        open: () => Promise.resolve({ partitions: 2, backlogPartitions: [], judgedThrough: null }),
        async *batches() {
          options.onEvent?.({ type: 'joined', epoch: 1, partitions: [0, 1] });
          for (const partition of [0, 1]) {
            const event = { type: 'partition-started' as const, epoch: 1, partition };
            options.onEvent?.({ ...event, offset: 0, judgedThrough: Number.NEGATIVE_INFINITY });
          }
          for (const batch of seen.batches) yield batch as SourceItem[];
        },
        close: () => Promise.resolve(),
        markJudgedUpTo: (through, partition) => seen.marks.push({ partition, through }),
        backlogged: () => false,
      };
      seen.source = source;
      return source;
    },
  };
});

vi.mock('../../src/ingest/kafka/summary-publisher.js', () => ({
  KafkaSummaryPublisher: class {
    readonly instance = 'stand-in';
    get stats() {
      return { summaries: seen.published.length, parts: 0 };
    }
    connect() {
      return Promise.resolve();
    }
    publish(
      windows: readonly { start: number; parts: readonly unknown[] }[],
      epoch: number,
      partitions: number,
    ) {
      seen.published.push({
        starts: windows.map((w) => w.start),
        parts: windows.flatMap((w) => w.parts),
        epoch,
        partitions,
      });
      return Promise.resolve();
    }
    close() {
      return Promise.resolve();
    }
  },
}));

describe('shardwise count', () => {
  it("counts its group source's records through the shared feed into summaries, committing per partition", async () => {
    seen.batches = countBatches();
    const stderr = new PassThrough();
    let err = '';
    stderr.on('data', (chunk) => (err += String(chunk)));
    const code = await countCommand.run(
      [
        '--brokers',
        '127.0.0.1:1',
        '--topic',
        't',
        '--group',
        'g',
        '--summaries',
        's',
        '--window',
        '10s',
        '--lateness',
        '1s',
        '--idle',
        '1h',
      ],
      { stdout: new PassThrough(), stderr, stdin: new PassThrough(), env: {} },
    );
    expect(code).toBe(0);
    expect(feedRecords).toHaveBeenCalledWith(
      seen.source,
      expect.anything(),
      expect.anything(),
      expect.anything(),
    );
    expect(seen.published.map((p) => p.starts)).toEqual(expectedWindows);
    expect(seen.published.map((p) => p.parts)).toEqual(expectedParts);
    expect(seen.published.map((p) => [p.epoch, p.partitions])).toEqual([
      [1, 2],
      [1, 2],
      [1, 2],
    ]);
    expect(seen.marks).toEqual(expectedMarks);
    expect(err).toContain('joined (epoch 1), partitions [0,1]');
    expect(err).toContain('11 messages counted, 3 summaries published');
  });
});

describe('shardwise count: the summary topic', () => {
  it('a bad --summaries name is refused naming --summaries, not --topic', async () => {
    const io = {
      stdout: new PassThrough(),
      stderr: new PassThrough(),
      stdin: new PassThrough(),
      env: {},
    };
    await expect(
      countCommand.run(
        ['--brokers', '127.0.0.1:1', '--topic', 't', '--group', 'g', '--summaries', 'bad name'],
        io,
      ),
    ).rejects.toThrow('--summaries: "bad name" is not a Kafka topic name');
  });
});
