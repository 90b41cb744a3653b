import { ShardwiseError } from './shardwise-error.js';

/**
 * A configuration mistake the user can fix: a bad option value, a bad shard
 * map entry. Thrown when a thing is built, so a bad setting fails at start-up
 * and never halfway through a run. The CLI turns it into exit code 2 with the
 * one-line message; retrying cannot help, hence `retriable` is always false.
 * It lives outside `cli/` because the core (window/, judge/) checks its own
 * settings when built and names the option at fault.
 */
export class UsageError extends ShardwiseError {
  /** The command-line option at fault, e.g. `--shards`. */
  readonly option: string;
  /** The offending value exactly as given (a file name for file contents). */
  readonly value: string;

  /**
   * @param option the option at fault, e.g. `--shards`
   * @param value the value as given, quoted in the message
   * @param problem what is wrong with it, e.g. `is not a positive whole number`
   * @param options standard error options (a `cause`)
   */
  constructor(option: string, value: string, problem: string, options?: { cause?: unknown }) {
    super(`${option}: ${quoteValue(value)} ${problem}`, {
      retriable: false,
      cause: options?.cause,
    });
    this.name = 'UsageError';
    this.option = option;
    this.value = value;
  }
}

const longestQuotedValue = 120;

/**
 * Quotes a user-supplied value for an error message. Long or multi-line values
 * (a pasted file, a flood of bytes) are cut so the message stays one line.
 */
export function quoteValue(value: string): string {
  const cut =
    value.length > longestQuotedValue ? `${value.slice(0, longestQuotedValue)}...` : value;
  return JSON.stringify(cut);
}
