import type { Readable } from 'node:stream';
import type { ClosedWindow } from '../window/event-time-window.js';
import { FileSource, type SourceItem } from './file-source.js';
import { KafkaGroupSource, type KafkaGroupSourceOptions } from './kafka/group-source.js';
import { KafkaSource, type KafkaSourceInfo, type KafkaSourceOptions } from './kafka/source.js';
import { ScenarioSource, type TickedRecords } from './scenario-source.js';

/**
 * Where records come from, the same shape for every source `watch`, `review`, `count` and
 * the benches read: a file, standard input, a simulated cluster, a Kafka topic (and the
 * summaries of `watch --merge`), a share of a topic's partitions in a consumer group
 * (`count`). The record feed (src/cli/record-feed.ts) is written once against it.
 */
export interface RecordSource {
  /** How screens, summaries and reports name it: `file x.jsonl`, `topic seats`... */
  readonly label: string;
  /**
   * Live sources (Kafka, standard input, a real-time scenario) close windows on the wall
   * clock when they go quiet, and their future bound is the wall clock; the others are
   * replays, read to their end.
   */
  readonly live: boolean;
  /**
   * Connects where there is something to connect to (Kafka) and tells what is known up
   * front. Idempotent; {@link batches} calls it too.
   */
  open(): Promise<SourceStart>;
  /** The records and rejections, a batch at a time, in source order within each partition. */
  batches(): AsyncGenerator<SourceItem[], void, undefined>;
  /** Stops reading; an iteration in progress ends after its current batch. Idempotent. */
  close(): Promise<void>;
  /**
   * Windows ending at or before `windowEnd` are judged: a source with offsets may commit
   * below. With `partition`, only that partition's windows are (`shardwise count`
   * publishes each partition's windows on the partition's own watermark); only a source
   * that keeps a judged end per partition ({@link kafkaGroupRecordSource}) takes it.
   */
  markJudgedUpTo(windowEnd: number, partition?: number): void;
  /** True while a partition has records waiting at the source: behind, not idle. */
  backlogged(partition: number): boolean;
  /**
   * What a judged window rests on, for sources that can tell a window short of data (a
   * summary part that never came, a counter series that stopped being scraped): added to
   * the verdict as `coverage`. Undefined when the source cannot tell or the window is whole.
   */
  coverageOf?(window: ClosedWindow): object | undefined;
}

/** What a source knows once open. */
export interface SourceStart {
  /** Partitions of the source (a Kafka topic's partition count; 1 for the others). */
  readonly partitions: number;
  /** Partitions with a backlog at start: event time waits for each before closing windows. */
  readonly backlogPartitions: readonly number[];
  /** End of the last window a previous run judged (a resumed Kafka group), else null. */
  readonly judgedThrough: number | null;
  /** The Kafka source's own account, when it is one. */
  readonly kafka?: KafkaSourceInfo;
}

const onePartition: SourceStart = { partitions: 1, backlogPartitions: [], judgedThrough: null };

/** A source of one partition with no offsets to commit and no backlog to tell: a file or a scenario. */
function singlePartitionSource(
  label: string,
  live: boolean,
  reader: Pick<RecordSource, 'batches' | 'close'>,
): RecordSource {
  return {
    label,
    live,
    open: () => Promise.resolve(onePartition),
    batches: () => reader.batches(),
    close: () => reader.close(),
    markJudgedUpTo() {},
    backlogged: () => false,
  };
}

/** A record file, or standard input for `-` (then live: it may pause and go on). */
export function fileRecordSource(path: string, stdin?: Readable): RecordSource {
  const file = new FileSource(path, path === '-' && stdin !== undefined ? { stream: stdin } : {});
  return singlePartitionSource(
    path === '-' ? 'standard input' : `file ${path}`,
    path === '-',
    file,
  );
}

/** A built-in simulated cluster, paced in real time (live) or as fast as drawn. */
export function scenarioRecordSource(
  run: TickedRecords,
  pace: 'real-time' | 'fast',
  label: string,
): RecordSource {
  return singlePartitionSource(label, pace === 'real-time', new ScenarioSource(run, { pace }));
}

/**
 * A Kafka topic through a consumer group (`watch`), or a past range of it without commits
 * (`review`): live unless it stops at an end (`untilMs` or `stopAtEnd`).
 */
export function kafkaRecordSource(options: KafkaSourceOptions): RecordSource & {
  readonly kafka: KafkaSource;
} {
  const kafka = new KafkaSource(options);
  const open = async (): Promise<SourceStart> => {
    const info = await kafka.connect();
    return {
      partitions: info.partitions,
      backlogPartitions: info.backlogPartitions,
      judgedThrough: info.judgedThrough,
      kafka: info,
    };
  };
  return {
    kafka,
    label: `topic ${options.topic}`,
    live: options.untilMs === undefined && options.stopAtEnd !== true,
    open,
    batches: () => kafka.batches(),
    close: () => kafka.close(),
    markJudgedUpTo: (windowEnd, partition) => {
      if (partition !== undefined) {
        throw new Error(
          `topic ${options.topic}: this source keeps one judged end for all partitions`,
        );
      }
      kafka.markJudgedUpTo(windowEnd);
    },
    backlogged: (partition) => kafka.backlogged(partition),
  };
}

/**
 * `shardwise count`'s share of a topic: a member of a consumer group that several
 * instances share, each partition started from the group's commit and judged (published)
 * on its own, and committed per partition. Live: it reads until closed.
 */
export function kafkaGroupRecordSource(options: KafkaGroupSourceOptions): RecordSource & {
  readonly group: KafkaGroupSource;
} {
  const group = new KafkaGroupSource(options);
  return {
    group,
    label: `topic ${options.topic}`,
    live: true,
    open: async () => ({
      partitions: await group.connect(),
      backlogPartitions: [],
      judgedThrough: null,
    }),
    batches: () => group.batches(),
    close: () => group.close(),
    markJudgedUpTo: (windowEnd, partition) => {
      if (partition === undefined) {
        throw new Error(`topic ${options.topic}: this source is judged partition by partition`);
      }
      group.markJudgedUpTo(windowEnd, partition);
    },
    backlogged: (partition) => group.backlogged(partition),
  };
}
