import { createReadStream } from 'node:fs';
import { itemsOf } from './batch-items.js';
import type { Readable } from 'node:stream';
import type { CountRecord, Rejection } from '../window/count-record.js';
import { UsageError } from '../errors/usage-error.js';
import { decodeJsonBytes } from './count-report-scanner.js';
import {
  decodeCsvLine,
  longestLine,
  parseCsvHeader,
  type CsvColumns,
  type RecordSink,
} from './decode.js';
import { LineSplitter } from './line-splitter.js';
import { ShardIdCache } from './shard-id-cache.js';
import { decodeUtf8Marked } from './utf8-text.js';

/** What every source yields: a validated record or a rejection. */
export type SourceItem = CountRecord | Rejection;

/** The two record file formats of docs/formats.md. */
export type RecordFormat = 'jsonl' | 'csv';

/** How to read a record file. */
export interface FileSourceOptions {
  /** Force a format; by default `.csv` means CSV, `.jsonl`/`.ndjson` JSON Lines, else the first line decides. */
  readonly format?: RecordFormat;
  /** Read this stream instead of opening the path (the path then only names it in messages); string chunks are taken as text. */
  readonly stream?: Readable;
  /** Longest line accepted, in bytes (default 1 MiB). */
  readonly maxLineLength?: number;
}

const readSize = 1 << 20;
const utf8Encoder = new TextEncoder();

/**
 * Records from a JSON Lines or CSV file, or from standard input when the path
 * is `-`. Blank lines are skipped; every other line yields records or a
 * rejection carrying its line number, and a bad line never stops the read.
 * A CSV file must start with a header naming `ts` and `shard` (see
 * {@link parseCsvHeader}); without one it is a usage error, since every line
 * would be misread. Without a format option or telling extension, a first
 * line starting with `{` means JSON Lines, a header means CSV.
 *
 * Three ways to consume it, from simplest to fastest: iterate items
 * (`for await`), iterate {@link batches} (one array per read buffer), or
 * {@link decodeInto} a sink (no object per record at all).
 */
export class FileSource implements AsyncIterable<SourceItem> {
  /** The path as given (`-` for standard input). */
  readonly path: string;
  private readonly options: FileSourceOptions;
  private stream: Readable | null = null;
  private closed = false;
  private detected: RecordFormat | null;

  /**
   * @param path file to read, or `-` for standard input
   * @param options format, a stream to read instead, line cap
   */
  constructor(path: string, options: FileSourceOptions = {}) {
    this.path = path;
    this.options = options;
    this.detected = options.format ?? formatFromExtension(path);
  }

  /** The record format, once known (from the options, the extension or the first line). */
  get format(): RecordFormat | null {
    return this.detected;
  }

  /** Yields every record and rejection in file order (one settled promise per item; see itemsOf). */
  [Symbol.asyncIterator](): AsyncIterator<SourceItem> {
    return itemsOf(this.batches());
  }

  /** Yields the records and rejections of each read buffer as one array, in file order. */
  async *batches(): AsyncGenerator<SourceItem[], void, undefined> {
    let batch: SourceItem[] = [];
    let line = 0;
    const collector: LineNumberedSink = {
      atLine(lineNumber) {
        line = lineNumber;
      },
      record(ts, shard, count, key) {
        batch.push(key === undefined ? { ts, shard, count } : { ts, shard, count, key });
      },
      reject(reason) {
        batch.push({ reason, line });
      },
    };
    const steps = this.decodeChunks(collector);
    while ((await steps.next()).done !== true) {
      if (batch.length > 0) {
        yield batch;
        batch = [];
      }
    }
  }

  /**
   * Decodes the whole input into `sink` without building an object per
   * record: the fastest way to count a file. Resolves when the input ends or
   * the source is closed.
   */
  async decodeInto(sink: RecordSink): Promise<void> {
    const plain: LineNumberedSink = {
      atLine() {},
      record: (ts, shard, count, key) => sink.record(ts, shard, count, key),
      reject: (reason) => sink.reject(reason),
    };
    const steps = this.decodeChunks(plain);
    // Each step decodes one read buffer straight into the sink.
    while ((await steps.next()).done !== true);
  }

  /** Stops reading; an iteration in progress ends after the current buffer. */
  async close(): Promise<void> {
    this.closed = true;
    this.stream?.destroy();
    this.stream = null;
  }

  /** Decodes one read buffer per step into `sink`. */
  private async *decodeChunks(sink: LineNumberedSink): AsyncGenerator<void, void, undefined> {
    let csvColumns: CsvColumns | null = null;
    let seenFirstLine = false;
    const ids = new ShardIdCache();
    const splitter = new LineSplitter(this.options.maxLineLength ?? longestLine, {
      line: (bytes, start, end, lineNumber) => {
        if (isBlank(bytes, start, end)) return;
        sink.atLine(lineNumber);
        if (!seenFirstLine) {
          seenFirstLine = true;
          csvColumns = this.readFirstLine(decodeUtf8Marked(bytes, start, end));
          if (csvColumns !== null) return;
        }
        if (csvColumns === null) decodeJsonBytes(bytes, start, end, sink, ids);
        else decodeCsvLine(decodeUtf8Marked(bytes, start, end), csvColumns, sink);
      },
      tooLong: (lineNumber) => {
        sink.atLine(lineNumber);
        if (!seenFirstLine && this.detected === 'csv') {
          throw new UsageError(
            '--input',
            this.path,
            'is CSV but its first line is too long to be a header',
          );
        }
        seenFirstLine = true;
        sink.reject('line too long');
      },
    });
    const stream = this.open();
    try {
      for await (const chunk of stream) {
        if (this.closed) return;
        splitter.push(
          typeof chunk === 'string' ? utf8Encoder.encode(chunk) : (chunk as Uint8Array),
        );
        yield;
      }
      if (this.closed) return;
      splitter.end();
      yield;
    } catch (error) {
      if (this.closed) return;
      if (error instanceof UsageError) throw error;
      throw new Error(`--input ${JSON.stringify(this.path)}: ${(error as Error).message}`, {
        cause: error,
      });
    } finally {
      if (this.path !== '-' || this.options.stream !== undefined) stream.destroy();
      this.stream = null;
    }
  }

  /** Settles the format on the first non-blank line; returns CSV columns if it is a CSV header. */
  private readFirstLine(line: string): CsvColumns | null {
    if (this.detected === 'jsonl') return null;
    const columns = parseCsvHeader(line);
    if (this.detected === 'csv') {
      if (columns === null) {
        throw new UsageError(
          '--input',
          this.path,
          `is CSV but its first line ${JSON.stringify(line.slice(0, 80))} is not a header naming ts and shard (e.g. ts,shard,count)`,
        );
      }
      return columns;
    }
    if (line.trimStart().startsWith('{') || columns === null) {
      this.detected = 'jsonl';
      return null;
    }
    this.detected = 'csv';
    return columns;
  }

  private open(): Readable {
    const stream =
      this.options.stream ??
      (this.path === '-'
        ? process.stdin
        : createReadStream(this.path, { highWaterMark: readSize }));
    this.stream = stream;
    return stream;
  }
}

/** A decode sink that is told the line number before each line's records. */
interface LineNumberedSink extends RecordSink {
  atLine(lineNumber: number): void;
}

function formatFromExtension(path: string): RecordFormat | null {
  const lower = path.toLowerCase();
  if (lower.endsWith('.csv')) return 'csv';
  if (lower.endsWith('.jsonl') || lower.endsWith('.ndjson')) return 'jsonl';
  return null;
}

function isBlank(bytes: Uint8Array, start: number, end: number): boolean {
  for (let at = start; at < end; at++) {
    if (bytes[at] !== 0x20 && bytes[at] !== 0x09) return false;
  }
  return true;
}
