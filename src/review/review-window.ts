import type { Judgement } from '../judge/judgement.js';

/**
 * One judged window as the review sees it, whatever it came from (a recording as recorded,
 * a recording judged again, a record file or a Kafka range judged afresh).
 */
export interface ReviewWindow {
  /** Window start and end, epoch ms. */
  readonly start: number;
  readonly end: number;
  /** Load per shard, indexed like `shardIds`; read during the call only. */
  readonly counts: Float64Array;
  readonly total: number;
  /** Shard ids by index (at least as many as counts). */
  readonly shardIds: readonly string[];
  /** Declared shares by index when unequal, else null (equal shares). */
  readonly shares: Float64Array | null;
  readonly judgement: Judgement;
}
