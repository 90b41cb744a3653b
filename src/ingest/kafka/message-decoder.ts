import { longestShardId } from '../../window/count-record.js';
import { decodeJsonBytes } from '../count-report-scanner.js';
import {
  emitChecked,
  emitRecordFields,
  longestLine,
  parseRecordObject,
  readShard,
  readTimestamp,
  type RecordSink,
} from '../decode.js';
import { hashIdByte, idHashStart, ShardIdCache } from '../shard-id-cache.js';
import { checkEpochMs } from '../timestamp.js';
import { decodeUtf8Marked } from '../utf8-text.js';

/**
 * Where a Kafka record's shard comes from (`--shard-from`):
 * - `field`: the record's own `shard` field (or a count batch's `counts`), as in a file;
 * - `key`: the message key; the value is a record without a shard, or empty for one request;
 * - `partition`: the partition number; every message is one request at its
 *   Kafka timestamp and its value is not read, so any keyed topic can be
 *   judged on its own partitions; the message key (decoded as UTF-8) is the
 *   request's key, so hot keys can be told from placement on the topic itself
 *   (a key that is not UTF-8 rejects the message as "invalid UTF-8");
 * - `named-field`: the JSON field `field` of the value (`--shard-from field:NAME`).
 */
export type ShardFrom =
  | { readonly kind: 'field' }
  | { readonly kind: 'key' }
  | { readonly kind: 'partition' }
  | { readonly kind: 'named-field'; readonly field: string };

/**
 * Decodes Kafka message values (and keys, partitions) into a record sink,
 * with the same validation and rejection reasons as a file: one decoder per
 * source, since it caches shard id strings. `messageTs` is the Kafka message
 * timestamp (epoch ms), used when a record has no `ts`.
 */
export class KafkaMessageDecoder {
  readonly shardFrom: ShardFrom;
  private readonly ids = new ShardIdCache();
  private readonly partitionIds: string[] = [];

  constructor(shardFrom: ShardFrom) {
    this.shardFrom = shardFrom;
  }

  /**
   * Decodes one message into `sink`: records (several for a count batch) or
   * one rejection. A null value (a tombstone) is "not JSON" where a value is
   * needed. O(value length).
   */
  decode(
    value: Uint8Array | null,
    key: Uint8Array | null,
    partition: number,
    messageTs: number,
    sink: RecordSink,
  ): void {
    switch (this.shardFrom.kind) {
      case 'field':
        if (value === null) sink.reject('not JSON');
        else decodeJsonBytes(value, 0, value.length, sink, this.ids, messageTs);
        return;
      case 'partition': {
        const ts = checkEpochMs(messageTs);
        if (Number.isNaN(ts)) sink.reject('bad timestamp');
        else {
          const requestKey = key === null || key.length === 0 ? undefined : decodeUtf8Marked(key);
          emitChecked(ts, this.partitionId(partition), 1, requestKey, sink);
        }
        return;
      }
      case 'key': {
        if (key === null || key.length === 0) {
          sink.reject('missing shard');
          return;
        }
        if (key.length > longestShardId * 4) {
          sink.reject('shard id too long');
          return;
        }
        const shard = this.keyId(key);
        if (value === null || value.length === 0) {
          const ts = checkEpochMs(messageTs);
          if (Number.isNaN(ts)) sink.reject('bad timestamp');
          else emitChecked(ts, shard, 1, undefined, sink);
          return;
        }
        decodeShardless(value, shard, undefined, messageTs, sink);
        return;
      }
      case 'named-field':
        if (value === null) sink.reject('not JSON');
        else decodeShardless(value, undefined, this.shardFrom.field, messageTs, sink);
        return;
    }
  }

  private partitionId(partition: number): string {
    let id = this.partitionIds[partition];
    if (id === undefined) {
      id = String(partition);
      this.partitionIds[partition] = id;
    }
    return id;
  }

  /** The key as a shard id: printable ASCII through the id cache, anything else decoded as UTF-8 (invalid bytes marked, so the id is rejected). */
  private keyId(key: Uint8Array): string {
    let hash = idHashStart;
    for (let at = 0; at < key.length; at++) {
      const byte = key[at];
      if (byte < 0x20 || byte > 0x7e) return decodeUtf8Marked(key);
      hash = hashIdByte(hash, byte);
    }
    return this.ids.idFor(key, 0, key.length, hash);
  }
}

/**
 * A JSON record whose shard is not its `shard` field: given (`shard`, from
 * the message key) or read from the field `shardField`. The other fields
 * follow the record kinds of docs/formats.md: `ts` (epoch ms or ISO with a
 * zone; the message timestamp when absent), `count` (default 1: a request
 * event) and `key`. A count batch has its shards inside and is "wrong type"
 * here. The checks come in the order the file decoder makes them.
 */
function decodeShardless(
  value: Uint8Array,
  shard: string | undefined,
  shardField: string | undefined,
  messageTs: number,
  sink: RecordSink,
): void {
  if (value.length > longestLine) {
    sink.reject('line too long');
    return;
  }
  const fields = parseRecordObject(decodeUtf8Marked(value), sink);
  if (fields === undefined) return;
  if (fields.counts !== undefined) {
    sink.reject('wrong type');
    return;
  }
  const ts = readTimestamp(fields.ts, messageTs, sink);
  if (Number.isNaN(ts)) return;
  const id = shardField === undefined ? shard : readShard(fields[shardField], sink);
  if (id === undefined) return;
  emitRecordFields(ts, id, fields, sink);
}
