#!/usr/bin/env node
import { realpathSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { UsageError } from '../errors/usage-error.js';
import { terminalMessage } from '../window/visible-text.js';
import type { CommandIO } from './command.js';
import { commandList } from './command-list.js';

/**
 * Entry point: picks the subcommand, runs it, and is the only place that decides the exit
 * code (0 success, 2 bad usage with a one-line reason, 1 runtime failure).
 */

const COMMANDS = commandList;

function topHelp(): string {
  const width = Math.max(...COMMANDS.map((c) => c.name.length));
  return [
    'shardwise: tell a true shard hotspot from the chance skew of random placement.',
    '',
    'Usage: shardwise <command> [options]    (shardwise <command> --help for its options)',
    '',
    'Commands:',
    ...COMMANDS.map((c) => `  ${c.name.padEnd(width)}  ${c.summary}`),
    '',
    'Verdicts are statistical evidence under a stated null model, not certainty; operators decide.',
    '',
  ].join('\n');
}

/** Runs the command line and resolves to the exit code. */
export async function main(argv: readonly string[], io: CommandIO): Promise<number> {
  const debug = argv.includes('--debug');
  const args = argv.filter((a) => a !== '--debug');
  const [name, ...rest] = args;
  if (name === undefined || name === '--help' || name === '-h' || name === 'help') {
    io.stdout.write(topHelp());
    return name === undefined ? 2 : 0;
  }
  if (name === '--version') {
    io.stdout.write('shardwise 0.1.0\n');
    return 0;
  }
  const entry = COMMANDS.find((c) => c.name === name);
  if (!entry) {
    io.stderr.write(
      `shardwise: unknown command ${terminalMessage(JSON.stringify(name))} (commands: ${COMMANDS.map((c) => c.name).join(', ')})\n`,
    );
    return 2;
  }
  const command = await entry.load();
  if (rest.includes('--help') || rest.includes('-h')) {
    io.stdout.write(command.help);
    return 0;
  }
  try {
    return await command.run(rest, io);
  } catch (error) {
    if (error instanceof UsageError) {
      io.stderr.write(`shardwise ${command.name}: ${terminalMessage(error.message)}\n`);
      return 2;
    }
    const message = error instanceof Error ? error.message : String(error);
    io.stderr.write(`shardwise ${command.name}: ${terminalMessage(message)}\n`);
    if (debug && error instanceof Error && error.stack) io.stderr.write(`${error.stack}\n`);
    return 1;
  }
}

/** True when this file is the program being run (directly, or through the npm bin link). */
function invokedDirectly(): boolean {
  const script = process.argv[1];
  if (script === undefined) return false;
  try {
    return realpathSync(script) === fileURLToPath(import.meta.url);
  } catch {
    return false;
  }
}
if (invokedDirectly() || process.env.SHARDWISE_MAIN === '1') {
  main(process.argv.slice(2), {
    stdout: process.stdout,
    stderr: process.stderr,
    stdin: process.stdin,
    env: process.env,
  }).then(
    (code) => {
      process.exitCode = code;
    },
    (error: unknown) => {
      process.stderr.write(
        `shardwise: ${error instanceof Error ? error.message : String(error)}\n`,
      );
      process.exitCode = 1;
    },
  );
}
