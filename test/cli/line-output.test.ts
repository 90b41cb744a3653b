import { Writable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { LineOutput } from '../../src/cli/line-output.js';

/** A stream that holds its writes until released, with a buffer of `highWaterMark` bytes. */
function slowStream(highWaterMark: number) {
  const written: string[] = [];
  const pending: (() => void)[] = [];
  const stream = new Writable({
    highWaterMark,
    write(chunk: Buffer, _encoding, callback) {
      written.push(String(chunk));
      pending.push(() => callback());
    },
  });
  const release = () => {
    while (pending.length > 0) (pending.shift() as () => void)();
  };
  return { stream, written, release };
}

describe('LineOutput', () => {
  it('writes one line per call and, once the buffer is full, waits for it to drain', async () => {
    const { stream, written, release } = slowStream(8);
    const output = new LineOutput(stream);
    output.write('first line');
    output.write('second');
    let drained = false;
    const waiting = output.drained().then(() => (drained = true));
    await new Promise((resolve) => setImmediate(resolve));
    expect(drained).toBe(false);
    release();
    await new Promise((resolve) => setImmediate(resolve));
    release();
    await waiting;
    expect(written.join('')).toBe('first line\nsecond\n');
  });

  it('does not wait when the buffer never filled', async () => {
    const { stream } = slowStream(1024);
    const output = new LineOutput(stream);
    output.write('short');
    await output.drained();
  });

  it('a reader that goes away (EPIPE) ends quietly; later writes are dropped', () => {
    const { stream, written } = slowStream(1024);
    const output = new LineOutput(stream);
    let calls = 0;
    output.onFailure(() => calls++);
    stream.emit('error', Object.assign(new Error('write EPIPE'), { code: 'EPIPE' }));
    output.write('after');
    expect(calls).toBe(1);
    expect(written).toEqual([]);
    expect(() => output.check()).not.toThrow();
  });

  it('any other write error is kept and rethrown by check', () => {
    const { stream } = slowStream(1024);
    const output = new LineOutput(stream);
    output.onFailure(() => {});
    stream.emit('error', Object.assign(new Error('no space left on device'), { code: 'ENOSPC' }));
    expect(() => output.check()).toThrow('cannot write the verdicts (no space left on device)');
  });
});
