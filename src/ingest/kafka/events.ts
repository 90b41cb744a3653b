import type { KafkaClientLog } from './connection.js';

/**
 * What the Kafka source reports while it runs: the seam the CLI (stderr
 * lines), the exporter (metrics) and tests subscribe to. Events carry no
 * secret and no record contents.
 */
export type KafkaSourceEvent =
  /** Connecting failed and will be tried again after `delayMs`. */
  | {
      readonly type: 'connect-retry';
      readonly brokers: string;
      readonly failures: number;
      readonly delayMs: number;
      readonly error: string;
    }
  /** Connected and the topic's metadata read. */
  | {
      readonly type: 'connected';
      readonly brokers: string;
      readonly topic: string;
      readonly partitions: number;
      readonly groupId: string;
    }
  /** Where reading starts: committed positions resumed, and positions set from `--from`. */
  | {
      readonly type: 'start-positions';
      readonly groupId: string;
      readonly resumed: readonly PartitionOffset[];
      readonly fromOption: readonly PartitionOffset[];
      /** Window end a previous run judged through; records in windows before it are not counted again. */
      readonly judgedThrough: number | null;
    }
  /** The group already had other members when this source started. */
  | { readonly type: 'group-busy'; readonly groupId: string; readonly members: number }
  /** The consumer group is rebalancing (a member joined, left or timed out). */
  | { readonly type: 'rebalancing'; readonly groupId: string; readonly memberId: string }
  /** The consumer joined the group and holds these partitions. */
  | {
      readonly type: 'group-joined';
      readonly groupId: string;
      readonly memberId: string;
      readonly partitions: readonly number[];
      readonly durationMs: number;
    }
  /** The consumer crashed; `recreateInMs` until a new one is made. */
  | {
      readonly type: 'consumer-crashed';
      readonly error: string;
      readonly retriable: boolean;
      readonly failures: number;
      readonly recreateInMs: number;
    }
  /** A new consumer replaced a crashed one. */
  | { readonly type: 'consumer-recreated'; readonly failures: number }
  /** Messages already counted came again (a rebalance or restart replays from the commit) and were skipped. */
  | {
      readonly type: 'redelivery-skipped';
      readonly partition: number;
      readonly messages: number;
    }
  /** Offsets committed: reading resumes here after a restart. */
  | {
      readonly type: 'committed';
      readonly offsets: readonly PartitionOffset[];
      readonly judgedThrough: number | null;
    }
  /** A commit failed; it is tried again at the next commit interval. */
  | { readonly type: 'commit-failed'; readonly error: string }
  /** Every partition reached the end offset it had at start (`stopAtEnd`). */
  | { readonly type: 'caught-up'; readonly messages: number }
  /** The Kafka client logged a warning or an error. */
  | ({ readonly type: 'client-log' } & KafkaClientLog);

/** A partition and an offset. */
export interface PartitionOffset {
  readonly partition: number;
  readonly offset: number;
}

/** Receives source events, synchronously; an exception it throws is ignored. */
export type KafkaSourceListener = (event: KafkaSourceEvent) => void;

const isoOrNone = (ms: number | null): string =>
  ms === null ? 'none' : new Date(ms).toISOString();

const offsetsText = (offsets: readonly PartitionOffset[]): string =>
  offsets.length === 0
    ? 'none'
    : offsets.map(({ partition, offset }) => `${partition}@${offset}`).join(' ');

/**
 * One line for stderr describing an event, or null for events too chatty to
 * print by default (`committed`, `client-log`; print them under `--debug`).
 */
export function describeKafkaEvent(event: KafkaSourceEvent, debug = false): string | null {
  switch (event.type) {
    case 'connect-retry':
      return `kafka: cannot reach ${event.brokers} (${event.error}); retry ${event.failures} in ${event.delayMs} ms`;
    case 'connected':
      return `kafka: connected to ${event.brokers}, topic ${event.topic} (${event.partitions} partitions), group ${event.groupId}`;
    case 'start-positions':
      return (
        `kafka: group ${event.groupId} resumes at ${offsetsText(event.resumed)}, starts at ` +
        `${offsetsText(event.fromOption)} (--from), judged through ${isoOrNone(event.judgedThrough)}`
      );
    case 'group-busy':
      return `kafka: group ${event.groupId} already has ${event.members} member(s); each member sees only some partitions, so the verdicts cover only part of the traffic`;
    case 'rebalancing':
      return `kafka: group ${event.groupId} is rebalancing`;
    case 'group-joined':
      return `kafka: joined group ${event.groupId} with partitions ${event.partitions.join(',') || 'none'} in ${event.durationMs} ms`;
    case 'consumer-crashed':
      return `kafka: consumer crashed (${event.error}); new consumer in ${event.recreateInMs} ms (failure ${event.failures})`;
    case 'consumer-recreated':
      return `kafka: new consumer started after ${event.failures} failure(s)`;
    case 'redelivery-skipped':
      return `kafka: skipped ${event.messages} redelivered message(s) on partition ${event.partition}`;
    case 'committed':
      return debug
        ? `kafka: committed ${offsetsText(event.offsets)}, judged through ${isoOrNone(event.judgedThrough)}`
        : null;
    case 'commit-failed':
      return `kafka: commit failed (${event.error}); will retry`;
    case 'caught-up':
      return `kafka: caught up with the topic's end after ${event.messages} messages`;
    case 'client-log':
      return debug ? `kafka client ${event.level} [${event.namespace}]: ${event.message}` : null;
  }
}
