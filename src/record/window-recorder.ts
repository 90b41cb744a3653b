import { closeSync, openSync, renameSync, writeSync } from 'node:fs';
import type { Judgement } from '../judge/judgement.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import type { ShardUniverse } from '../window/shard-universe.js';
import { jsonSafe } from '../window/visible-text.js';
import { recordingVersion, type RecordedSettings, type RecordingLine } from './recording-line.js';

/** Default size cap of a recording file: 1 GiB, so at most 2 GiB on disk with the rotated one. */
export const defaultRecordingMaxBytes = 1 << 30;

/** Settings of a {@link WindowRecorder}. */
export interface WindowRecorderOptions {
  /** The file to write (replaced if it exists). */
  readonly path: string;
  /** The settings every line carries. */
  readonly settings: RecordedSettings;
  /**
   * Largest size of the file, in bytes (default 1 GiB). A line that would take the file
   * past it first rotates: FILE becomes FILE.1 (replacing an older FILE.1) and a fresh FILE
   * starts, its first line carrying the shard ids again. Disk use stays below twice the cap
   * whatever the run's length. One line larger than the cap is still written whole.
   */
  readonly maxBytes?: number;
}

/**
 * Writes a recording: one JSON line per closed window, written with a synchronous write
 * before the next window is judged, so a run killed at any moment loses at most the line
 * being written (which a reader then skips as torn, see recording-reader.ts). No fsync: the
 * line is in the kernel once `record` returns, which survives the process but not the
 * machine losing power.
 */
export class WindowRecorder {
  readonly path: string;
  private readonly settings: RecordedSettings;
  private readonly maxBytes: number;
  private fd: number;
  private bytes = 0;
  private idsWritten = -1;
  private layoutWritten = -1;
  private rotations = 0;

  /** Opens (truncates) the file; throws the system error when it cannot be written. */
  constructor(options: WindowRecorderOptions) {
    this.path = options.path;
    this.settings = options.settings;
    this.maxBytes = options.maxBytes ?? defaultRecordingMaxBytes;
    if (!Number.isSafeInteger(this.maxBytes) || this.maxBytes < 1) {
      throw new RangeError(`a recording cap must be a whole number of bytes, got ${this.maxBytes}`);
    }
    this.fd = openSync(this.path, 'w');
  }

  /** Times the file was rotated to FILE.1. */
  get rotated(): number {
    return this.rotations;
  }

  /** Writes one window's line. `universe` gives the ids (and shares) its counts are indexed by. */
  record(window: ClosedWindow, judgement: Judgement, universe: ShardUniverse): void {
    const size = window.counts.length;
    // A growing universe that retired ids may hold other ids at the same size.
    const withIds = size !== this.idsWritten || universe.layout !== this.layoutWritten;
    let text = this.line(window, judgement, universe, withIds);
    if (this.bytes > 0 && this.bytes + Buffer.byteLength(text) > this.maxBytes) {
      this.rotate();
      // Each file stands alone: the fresh one starts with the ids.
      if (!withIds) text = this.line(window, judgement, universe, true);
    }
    this.idsWritten = size;
    this.layoutWritten = universe.layout;
    const buffer = Buffer.from(text);
    let written = 0;
    while (written < buffer.length) {
      written += writeSync(this.fd, buffer, written, buffer.length - written);
    }
    this.bytes += buffer.length;
  }

  /** Closes the file. Idempotent. */
  close(): void {
    if (this.fd === -1) return;
    closeSync(this.fd);
    this.fd = -1;
  }

  private line(
    window: ClosedWindow,
    judgement: Judgement,
    universe: ShardUniverse,
    withIds: boolean,
  ): string {
    const size = window.counts.length;
    const line: RecordingLine = {
      recording: recordingVersion,
      ...judgement,
      counts: Array.from(window.counts),
      settings: this.settings,
      ...(withIds ? { shardIds: universe.ids.slice(0, size), ...sharesOf(universe, size) } : {}),
    };
    return jsonSafe(JSON.stringify(line)) + '\n';
  }

  private rotate(): void {
    closeSync(this.fd);
    this.fd = -1;
    renameSync(this.path, `${this.path}.1`);
    this.fd = openSync(this.path, 'w');
    this.bytes = 0;
    this.rotations++;
  }
}

/** The declared shares when they are unequal (equal shares need no field). */
function sharesOf(universe: ShardUniverse, size: number): { shares?: number[] } {
  const shares = universe.shares;
  for (let shard = 1; shard < size; shard++) {
    if (shares[shard] !== shares[0]) return { shares: Array.from(shares.subarray(0, size)) };
  }
  return {};
}
