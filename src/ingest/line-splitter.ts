/** Receives the lines a {@link LineSplitter} finds. */
export interface LineHandler {
  /**
   * One line, as the bytes `bytes[start..end)` without its line ending
   * (`\n` or `\r\n`). `lineNumber` is 1-based and counts blank lines too.
   * The bytes are only valid during the call.
   */
  line(bytes: Uint8Array, start: number, end: number, lineNumber: number): void;
  /** A line longer than the cap; its bytes were dropped while reading. */
  tooLong(lineNumber: number): void;
}

const newline = 0x0a;
const carriageReturn = 0x0d;

/**
 * Cuts a stream of byte chunks into lines. Works on bytes, not text: a
 * newline byte never occurs inside a multi-byte UTF-8 character, so lines can
 * be found before (and often without) decoding. A line longer than the cap is
 * reported and skipped without ever being held whole, so one endless line
 * cannot exhaust memory. A UTF-8 byte-order mark at the start of the first
 * chunk is dropped. Lines are spans of the chunk: no copy per line, except
 * for a line cut by a chunk boundary. O(bytes).
 */
export class LineSplitter {
  private readonly maxLineLength: number;
  private readonly handler: LineHandler;
  private carry: Uint8Array | null = null;
  private skipping = false;
  private atStart = true;
  private lineNumber = 0;

  /**
   * @param maxLineLength longest line handed over, in bytes
   * @param handler receives lines and overlong-line notices, synchronously
   */
  constructor(maxLineLength: number, handler: LineHandler) {
    this.maxLineLength = maxLineLength;
    this.handler = handler;
  }

  /** Lines seen so far, including blank and overlong ones. */
  get linesSeen(): number {
    return this.lineNumber;
  }

  /** Feeds the next chunk; complete lines in it are handed over at once. */
  push(chunk: Uint8Array): void {
    let at = 0;
    if (this.atStart && chunk.length > 0) {
      this.atStart = false;
      if (chunk[0] === 0xef && chunk[1] === 0xbb && chunk[2] === 0xbf) at = 3;
    }
    if (this.skipping || this.carry !== null) {
      const end = chunk.indexOf(newline, at);
      if (end < 0) {
        this.hold(chunk, at);
        return;
      }
      if (this.skipping) {
        this.skipping = false;
        this.handler.tooLong(++this.lineNumber);
      } else {
        const carry = this.carry as Uint8Array;
        this.carry = null;
        // One byte of slack for a `\r` that hand() strips before its own check.
        if (carry.length + end - at > this.maxLineLength + 1) {
          this.handler.tooLong(++this.lineNumber);
        } else {
          const joined = new Uint8Array(carry.length + end - at);
          joined.set(carry);
          joined.set(chunk.subarray(at, end), carry.length);
          this.hand(joined, 0, joined.length);
        }
      }
      at = end + 1;
    }
    for (;;) {
      const end = chunk.indexOf(newline, at);
      if (end < 0) break;
      this.hand(chunk, at, end);
      at = end + 1;
    }
    this.hold(chunk, at);
  }

  /** Hands over a last line that had no line ending. */
  end(): void {
    if (this.skipping) {
      this.skipping = false;
      this.handler.tooLong(++this.lineNumber);
    } else if (this.carry !== null) {
      const last = this.carry;
      this.carry = null;
      this.hand(last, 0, last.length);
    }
  }

  /** Keeps `chunk[from..]`, the start of a line whose end is in a later chunk. */
  private hold(chunk: Uint8Array, from: number): void {
    if (this.skipping || from >= chunk.length) return;
    const held = this.carry === null ? 0 : this.carry.length;
    if (held + chunk.length - from > this.maxLineLength) {
      this.carry = null;
      this.skipping = true;
      return;
    }
    const kept = new Uint8Array(held + chunk.length - from);
    if (this.carry !== null) kept.set(this.carry);
    kept.set(chunk.subarray(from), held);
    this.carry = kept;
  }

  private hand(bytes: Uint8Array, start: number, end: number): void {
    const lineNumber = ++this.lineNumber;
    const stop = end > start && bytes[end - 1] === carriageReturn ? end - 1 : end;
    if (stop - start > this.maxLineLength) this.handler.tooLong(lineNumber);
    else this.handler.line(bytes, start, stop, lineNumber);
  }
}
