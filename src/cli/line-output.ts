/**
 * Lines to a stream with backpressure: writes never wait, and the caller awaits
 * {@link drained} between batches so a slow reader (a pipe into a pager) holds the source
 * back instead of filling memory. A reader that goes away (EPIPE) ends the run quietly;
 * any other write error is kept and rethrown by {@link check}.
 */
export class LineOutput {
  private readonly stream: NodeJS.WritableStream;
  private full = false;
  private failed: NodeJS.ErrnoException | null = null;

  constructor(stream: NodeJS.WritableStream) {
    this.stream = stream;
  }

  write(line: string): void {
    if (this.failed !== null) return;
    if (!this.stream.write(line + '\n')) this.full = true;
  }

  /** Calls `handler` once if writing fails; later writes are dropped. */
  onFailure(handler: () => void): void {
    this.stream.once('error', (error: NodeJS.ErrnoException) => {
      this.failed = error;
      handler();
    });
  }

  async drained(): Promise<void> {
    if (!this.full || this.failed !== null) return;
    this.full = false;
    await new Promise<void>((resolve) => {
      const done = () => {
        this.stream.removeListener('drain', done);
        this.stream.removeListener('error', done);
        resolve();
      };
      this.stream.once('drain', done);
      this.stream.once('error', done);
    });
  }

  /** Throws the write error, if any, unless it was only the reader going away. */
  check(): void {
    if (this.failed !== null && this.failed.code !== 'EPIPE') {
      throw new Error(`cannot write the verdicts (${this.failed.message})`, { cause: this.failed });
    }
  }
}
