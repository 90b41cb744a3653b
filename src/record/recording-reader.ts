import { createReadStream } from 'node:fs';
import type { Readable } from 'node:stream';
import type { Judgement } from '../judge/judgement.js';
import { recordingVersion, type RecordedSettings, type RecordingLine } from './recording-line.js';
import { ShardwiseError } from '../errors/shardwise-error.js';

/** One window read back from a recording. */
export interface RecordedWindow {
  /** Line number in its file, 1-based. */
  readonly line: number;
  /** Window start and end, epoch ms. */
  readonly start: number;
  readonly end: number;
  /** Load per shard, indexed like `shardIds`. */
  readonly counts: Float64Array;
  readonly total: number;
  /** The ids in force for this line (at least as many as counts). */
  readonly shardIds: readonly string[];
  /** Declared unequal shares in force, or null for equal shares. */
  readonly shares: Float64Array | null;
  /** The verdict as recorded (`counts`, `settings`, ids removed). */
  readonly judgement: Judgement;
  readonly settings: RecordedSettings;
}

/** Options of {@link readRecording}. */
export interface RecordingReadOptions {
  /** Receives plain-language notes: a torn last line, lines that are not recording lines. */
  readonly onNote?: (note: string) => void;
  /** Read this stream instead of opening the path (the path then only names it). */
  readonly stream?: Readable;
  /** Longest line accepted, bytes (default 256 MiB: a window of a million shards). */
  readonly maxLineBytes?: number;
}

/** A file that is not a recording at all (no line of it is one). */
export class RecordingFormatError extends ShardwiseError {
  readonly path: string;
  constructor(path: string, problem: string) {
    super(`${JSON.stringify(path)} is not a shardwise recording: ${problem}`);
    this.name = 'RecordingFormatError';
    this.path = path;
  }
}

const newline = 0x0a;
const mostNotedLines = 5;

/**
 * Reads a recording line by line, one window at a time, so memory holds one line and the
 * shard ids, never the whole file. A last line without its end of line that does not parse
 * is what a run killed mid-write leaves: it is skipped with a note. Other lines that are not
 * recording lines (damaged, or of another format) are skipped with a note naming them; a
 * file none of whose lines is a recording line is a {@link RecordingFormatError}.
 * O(bytes).
 */
export async function* readRecording(
  path: string,
  options: RecordingReadOptions = {},
): AsyncGenerator<RecordedWindow, void, undefined> {
  const note = options.onNote ?? (() => undefined);
  const maxLineBytes = options.maxLineBytes ?? 256 << 20;
  const stream = options.stream ?? createReadStream(path, { highWaterMark: 1 << 20 });
  const state: ReaderState = { ids: [], shares: null, good: 0, bad: [], badCount: 0 };
  let carry: Buffer[] = [];
  let carried = 0;
  let lineNumber = 0;
  let skippingLong = false;
  try {
    for await (const chunk of stream) {
      const bytes = typeof chunk === 'string' ? Buffer.from(chunk) : (chunk as Buffer);
      let at = 0;
      for (;;) {
        const end = bytes.indexOf(newline, at);
        if (end < 0) {
          if (!skippingLong) {
            carry.push(bytes.subarray(at));
            carried += bytes.length - at;
            if (carried > maxLineBytes) {
              skippingLong = true;
              carry = [];
              carried = 0;
            }
          }
          break;
        }
        lineNumber++;
        if (skippingLong) {
          skippingLong = false;
          state.badCount++;
          if (state.bad.length < mostNotedLines) state.bad.push(`${lineNumber} (too long)`);
        } else {
          const text =
            carry.length === 0
              ? bytes.toString('utf8', at, end)
              : Buffer.concat([...carry, bytes.subarray(at, end)]).toString('utf8');
          carry = [];
          carried = 0;
          const window = parseLine(text, lineNumber, state);
          if (window !== null) yield window;
        }
        at = end + 1;
      }
    }
    const rest = carry.length === 0 ? '' : Buffer.concat(carry).toString('utf8');
    if (skippingLong || rest.trim() !== '') {
      lineNumber++;
      const window = skippingLong ? null : parseLine(rest, lineNumber, state, { quiet: true });
      if (window !== null) yield window;
      else {
        note(
          `line ${lineNumber} of ${path} is torn (${skippingLong ? 'over the line cap' : `${Buffer.byteLength(rest)} bytes`} without an end of line, as a run stopped mid-write leaves it); skipped`,
        );
      }
    }
  } finally {
    stream.destroy();
  }
  if (state.badCount > 0) {
    note(
      `${state.badCount} line${state.badCount === 1 ? '' : 's'} of ${path} ${state.badCount === 1 ? 'is' : 'are'} not a recording line and ${state.badCount === 1 ? 'was' : 'were'} skipped (line ${state.bad.join(', ')}${state.badCount > state.bad.length ? ', ...' : ''})`,
    );
  }
  if (state.good === 0 && state.badCount > 0) {
    throw new RecordingFormatError(path, `none of its ${lineNumber} lines is a recording line`);
  }
}

interface ReaderState {
  ids: readonly string[];
  shares: Float64Array | null;
  good: number;
  bad: string[];
  badCount: number;
}

function parseLine(
  text: string,
  lineNumber: number,
  state: ReaderState,
  { quiet = false } = {},
): RecordedWindow | null {
  if (text.trim() === '') return null;
  const reject = (reason: string): null => {
    if (quiet) return null;
    state.badCount++;
    if (state.bad.length < mostNotedLines) state.bad.push(`${lineNumber} (${reason})`);
    return null;
  };
  let parsed: unknown;
  try {
    parsed = JSON.parse(text);
  } catch {
    return reject('not JSON');
  }
  if (parsed === null || typeof parsed !== 'object' || Array.isArray(parsed)) {
    return reject('not an object');
  }
  const line = parsed as Partial<RecordingLine> & Record<string, unknown>;
  if (line.recording !== recordingVersion) {
    return reject(
      line.recording === undefined ? 'no recording version' : `version ${String(line.recording)}`,
    );
  }
  const start = Date.parse(String(line.window?.start));
  const end = Date.parse(String(line.window?.end));
  if (!Number.isFinite(start) || !Number.isFinite(end) || end <= start) {
    return reject('no window');
  }
  if (!Array.isArray(line.counts)) return reject('no counts');
  if (line.settings === null || typeof line.settings !== 'object') return reject('no settings');
  if (line.shardIds !== undefined) {
    if (!Array.isArray(line.shardIds) || line.shardIds.some((id) => typeof id !== 'string')) {
      return reject('bad shard ids');
    }
    state.ids = line.shardIds;
    state.shares = null;
    if (line.shares !== undefined) {
      if (!Array.isArray(line.shares) || line.shares.length !== line.shardIds.length) {
        return reject('bad shares');
      }
      state.shares = Float64Array.from(line.shares, Number);
      if (state.shares.some((share) => !(share >= 0) || !Number.isFinite(share))) {
        return reject('bad shares');
      }
    }
  }
  const counts = new Float64Array(line.counts.length);
  let total = 0;
  for (let shard = 0; shard < counts.length; shard++) {
    const count = line.counts[shard];
    if (typeof count !== 'number' || !(count >= 0) || !Number.isFinite(count)) {
      return reject('bad count');
    }
    counts[shard] = count;
    total += count;
  }
  if (counts.length > state.ids.length) return reject('more counts than shard ids');
  const judgement = { ...line } as Record<string, unknown>;
  delete judgement.recording;
  delete judgement.counts;
  delete judgement.settings;
  delete judgement.shardIds;
  delete judgement.shares;
  state.good++;
  return {
    line: lineNumber,
    start,
    end,
    counts,
    total,
    shardIds: state.ids,
    shares: state.shares,
    judgement: judgement as unknown as Judgement,
    settings: line.settings as RecordedSettings,
  };
}
