import { PassThrough } from 'node:stream';
import { describe, expect, it, vi } from 'vitest';
import type { Command, CommandIO } from '../../src/cli/command.js';
import { main } from '../../src/cli/main.js';
import { UsageError } from '../../src/errors/usage-error.js';

// Source of truth: the exit codes documented at the head of src/cli/main.ts and in
// README.md (0 success, 2 bad usage with a one-line reason, 1 runtime failure), and the
// terminal escaping of untrusted text (src/window/visible-text.ts: a control character is
// shown as \x1b and the like). Two stand-in commands join the real list, so that a usage
// error and a runtime failure can be raised on purpose.

const failing = (error: Error): Command => ({
  name: error instanceof UsageError ? 'misused' : 'failing',
  summary: 'a stand-in',
  help: 'Usage: stand-in\n',
  run: async () => {
    throw error;
  },
});

vi.mock('../../src/cli/command-list.js', async (original) => {
  const real = await original<typeof import('../../src/cli/command-list.js')>();
  return {
    ...real,
    commandList: [
      ...real.commandList,
      {
        name: 'misused',
        summary: 'a stand-in that throws a usage error',
        load: async () => failing(new UsageError('--level', 'loud', 'is not quiet or normal')),
      },
      {
        name: 'failing',
        summary: 'a stand-in that fails at run time',
        load: async () => failing(new Error('disk full\u001b[2J')),
      },
    ],
  };
});

async function run(argv: string[]): Promise<{ code: number; out: string; err: string }> {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  stdout.on('data', (chunk: Buffer) => (out += chunk.toString()));
  stderr.on('data', (chunk: Buffer) => (err += chunk.toString()));
  const io: CommandIO = { stdout, stderr, stdin: new PassThrough(), env: {} };
  const code = await main(argv, io);
  return { code, out, err };
}

describe('main', () => {
  it('prints the top help: exit 2 without a command, 0 when asked', async () => {
    const bare = await run([]);
    expect(bare.code).toBe(2);
    const lines = bare.out.split('\n');
    expect(lines[0]).toBe(
      'shardwise: tell a true shard hotspot from the chance skew of random placement.',
    );
    expect(lines).toContain('  plan      headroom and shard-count planning from chance skew alone');
    for (const flag of ['--help', '-h', 'help']) {
      const asked = await run([flag]);
      expect(asked.code).toBe(0);
      expect(asked.out).toBe(bare.out);
    }
  });

  it('prints the version', async () => {
    expect(await run(['--version'])).toEqual({ code: 0, out: 'shardwise 0.1.0\n', err: '' });
  });

  it('names an unknown command, quoted as JSON (its controls inert), and exits 2', async () => {
    const { code, err } = await run(['pl\u001b[2Jan']);
    expect(code).toBe(2);
    expect(err).toBe(
      'shardwise: unknown command "pl\\u001b[2Jan" (commands: watch, review, odds, plan, simulate, count, misused, failing)\n',
    );
  });

  it('prints a command’s help and exits 0', async () => {
    const { code, out } = await run(['plan', '--help']);
    expect(code).toBe(0);
    expect(
      out.startsWith('Usage: shardwise plan --rate R --capacity C --shards M|A..B [options]'),
    ).toBe(true);
  });

  it('exits 2 on a usage error with its one line, 1 on a failure, escaped', async () => {
    expect(await run(['misused'])).toEqual({
      code: 2,
      out: '',
      err: 'shardwise misused: --level: "loud" is not quiet or normal\n',
    });
    const failure = await run(['failing']);
    expect(failure).toEqual({ code: 1, out: '', err: 'shardwise failing: disk full\\x1b[2J\n' });
    const debug = await run(['failing', '--debug']);
    expect(debug.code).toBe(1);
    expect(debug.err.split('\n')[1]).toMatch(/^Error: disk full/);
  });

  it('passes the command’s own exit code through', async () => {
    const { code, err } = await run(['plan', '--rate', '1', '--capacity', 'x', '--shards', '2']);
    expect(code).toBe(2);
    expect(err).toBe('shardwise plan: --capacity: "x" is not a number\n');
  });
});
