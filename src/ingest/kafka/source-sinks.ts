import type { CountRecord, RejectionReason } from '../../window/count-record.js';
import type { RecordSink } from '../decode.js';
import type { SourceItem } from '../file-source.js';
import type { OffsetLedger } from './offset-ledger.js';

/**
 * The sink between decoder and pipeline: passes records on, notes the latest
 * window end each message's records need judged, and drops replayed records
 * whose windows a previous run judged. Plain fields, no closure per message.
 */
export class ReleaseTracker implements RecordSink {
  target: RecordSink = { record() {}, reject() {} };
  latestRelease = Number.NEGATIVE_INFINITY;
  resumeFloor = Number.NEGATIVE_INFINITY;
  alreadyJudged = 0;
  private readonly hopMs: number;
  private readonly windowMs: number;

  constructor(ledger: OffsetLedger) {
    this.hopMs = ledger.hopMs;
    this.windowMs = ledger.windowMs;
  }

  record(ts: number, shard: string, count: number, key: string | undefined): void {
    const release = Math.floor(ts / this.hopMs) * this.hopMs + this.windowMs;
    if (release <= this.resumeFloor) {
      this.alreadyJudged++;
      return;
    }
    if (release > this.latestRelease) this.latestRelease = release;
    this.target.record(ts, shard, count, key);
  }

  reject(reason: RejectionReason): void {
    this.target.reject(reason);
  }
}

/** Builds items, tagged with their partition, into the array `current()` returns. */
export class ItemCollector implements RecordSink {
  /** The partition of the message being decoded. */
  partition = 0;
  private readonly current: () => SourceItem[];

  constructor(current: () => SourceItem[]) {
    this.current = current;
  }

  record(ts: number, shard: string, count: number, key: string | undefined): void {
    const partition = this.partition;
    const record: CountRecord =
      key === undefined ? { ts, shard, count, partition } : { ts, shard, count, key, partition };
    this.current().push(record);
  }

  reject(reason: RejectionReason): void {
    this.current().push({ reason });
  }
}
