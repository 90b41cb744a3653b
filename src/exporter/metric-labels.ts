import type { Finding } from '../judge/judgement.js';
import type { RejectionReason } from '../window/count-record.js';

/**
 * Label values of the exported metrics. Every label but `shard` takes values from a fixed
 * set written here, so the number of series cannot grow with the input. Values have no
 * spaces (they are typed into queries and alert rules), hence `too_little_traffic` for the
 * finding "too little traffic" and `not_json` for the rejection reason "not JSON".
 */

/** `finding` label of `shardwise_finding`, in the verdict stream's order. */
export const findingLabels: Readonly<Record<Finding, string>> = {
  hotspot: 'hotspot',
  cold: 'cold',
  uneven: 'uneven',
  chance: 'chance',
  'too little traffic': 'too_little_traffic',
};

/** `reason` label of `shardwise_rejected_records_total`, one per rejection reason. */
export const rejectionReasonLabels: Readonly<Record<RejectionReason, string>> = {
  'not JSON': 'not_json',
  'wrong type': 'wrong_type',
  'negative count': 'negative_count',
  'non-integer count': 'non_integer_count',
  'missing shard': 'missing_shard',
  'shard id too long': 'shard_id_too_long',
  'invalid UTF-8': 'invalid_utf_8',
  'outside universe': 'outside_universe',
  'bad timestamp': 'bad_timestamp',
  'too late': 'too_late',
  'too many shards': 'too_many_shards',
  'line too long': 'line_too_long',
  'too far ahead': 'too_far_ahead',
};

/** `outcome` label of `shardwise_records_total`. */
export const recordOutcomes = ['accepted', 'rejected', 'late'] as const;
export type RecordOutcome = (typeof recordOutcomes)[number];

/** `test` label of `shardwise_window_p_value`: the four tests asked of every window. */
export const pValueTests = ['fullest', 'emptiest', 'empty_shards', 'spread'] as const;
export type PValueTest = (typeof pValueTests)[number];

/** Longest `shard` label value, the hash suffix included. */
export const longestShardLabel = 64;

/** Characters kept as they are in a `shard` label; anything else becomes `_`. */
const plainShardCharacter = /[^A-Za-z0-9._:/@-]/g;
const hashLength = 8;

/**
 * The `shard` label value for a shard id. Ids are untrusted text (a producer may send
 * quotes, newlines, control characters or kilobytes), and a label value is typed into
 * queries and shown on pages, so anything but letters, digits and `._:/@-` becomes `_`
 * and the value is cut to {@link longestShardLabel} characters. When the id had to be
 * changed, a `~` and 8 hex digits of its FNV-1a hash follow, so two different ids rarely
 * share a label and an operator can tell a rewritten id from a real one. O(length).
 *
 * @example shardLabel('seat-17') === 'seat-17'
 * @example shardLabel('a"b\n') === 'a_b_~' + (8 hex digits)
 */
export function shardLabel(id: string): string {
  const plain = id.replace(plainShardCharacter, '_');
  if (plain === id && id.length > 0 && id.length <= longestShardLabel) return id;
  const kept = plain.slice(0, longestShardLabel - hashLength - 1);
  return `${kept}~${fnv1a(id).toString(16).padStart(hashLength, '0')}`;
}

/** 32-bit FNV-1a over the UTF-16 code units (Fowler, Noll and Vo; a fast non-cryptographic hash). */
function fnv1a(text: string): number {
  let hash = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    hash ^= text.charCodeAt(i);
    hash = Math.imul(hash, 0x01000193);
  }
  return hash >>> 0;
}
