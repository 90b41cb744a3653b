// parseOptions: Node's parseArgs errors become one-line UsageErrors naming the option or
// argument at fault. The kind of mistake is read from the error's code; the three codes are
// those Node documents for util.parseArgs (nodejs.org/api/errors.html, ERR_PARSE_ARGS_*),
// stable across versions unlike the message text.
import * as nodeUtil from 'node:util';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { parseOptions, refuseGiven } from '../../src/cli/option-values.js';
import { UsageError } from '../../src/errors/usage-error.js';

vi.mock('node:util', async (importOriginal) => {
  const actual = await importOriginal<typeof import('node:util')>();
  return { ...actual, parseArgs: vi.fn(actual.parseArgs) };
});

const options = {
  shards: { type: 'string', short: 's' },
  'no-ui': { type: 'boolean' },
} as const;

function messageOf(argv: string[]): string {
  try {
    parseOptions(argv, options);
  } catch (error) {
    return (error as Error).message;
  }
  return 'no error';
}

afterEach(() => vi.mocked(nodeUtil.parseArgs).mockClear());

describe('parseOptions', () => {
  // The messages users saw before the switch to codes (test/cli/watch.test.ts pins the first
  // through the built CLI); these must not change.
  it.each([
    [
      ['--frobnicate'],
      '--frobnicate: "--frobnicate" is not an option of this command (see --help)',
    ],
    [['-x'], '-x: "-x" is not an option of this command (see --help)'],
    [['--frob=3'], '--frob: "--frob" is not an option of this command (see --help)'],
    [['--shards'], '--shards: "" needs a value'],
    [['-s'], '--shards: "" needs a value'],
    [['--no-ui', '--shards'], '--shards: "" needs a value'],
    [['stray'], 'argument: "stray" is not expected (options start with --)'],
    [['--no-ui=3'], `arguments: "--no-ui=3" Option '--no-ui' does not take an argument`],
    [
      ['--shards', '--no-ui'],
      `arguments: "--shards --no-ui" Option '--shards' argument is ambiguous.`,
    ],
  ])('%j: %s', (argv, message) => {
    expect(messageOf(argv)).toBe(message);
  });

  it('reads a negative number after a value option as its value', () => {
    expect(parseOptions(['--shards', '-3'], options)).toEqual({ shards: '-3' });
  });

  // A parse error carrying only its code and a message unlike any Node has printed: the
  // user still gets the message of its kind, naming what is at fault.
  it.each([
    [
      'ERR_PARSE_ARGS_UNKNOWN_OPTION',
      ['--frobnicate'],
      '--frobnicate: "--frobnicate" is not an option of this command (see --help)',
    ],
    ['ERR_PARSE_ARGS_INVALID_OPTION_VALUE', ['--shards'], '--shards: "" needs a value'],
    [
      'ERR_PARSE_ARGS_UNEXPECTED_POSITIONAL',
      ['stray'],
      'argument: "stray" is not expected (options start with --)',
    ],
  ])('%s with another message text', (code, argv, message) => {
    vi.mocked(nodeUtil.parseArgs).mockImplementationOnce(() => {
      throw Object.assign(new TypeError('reworded by a later Node'), { code });
    });
    expect(messageOf(argv)).toBe(message);
  });
});

// refuseGiven: the rule of DEVELOPERS.md ("a bad setting fails at start-up with a UsageError
// naming the option and the value"), for options given where they do not apply.
describe('refuseGiven', () => {
  function refusal(run: () => void): UsageError | 'none' {
    try {
      run();
    } catch (error) {
      return error as UsageError;
    }
    return 'none';
  }

  it('passes when none of the options is given', () => {
    expect(refusal(() => refuseGiven({ seed: undefined }, ['seed', 'pace'], 'x'))).toBe('none');
  });

  it('names the first option given, in the order named, with its value and the reason', () => {
    const error = refusal(() =>
      refuseGiven({ pace: 'fast', seed: '7' }, ['seed', 'pace'], 'applies only to --scenario'),
    );
    expect(error).toBeInstanceOf(UsageError);
    expect((error as UsageError).option).toBe('--seed');
    expect((error as UsageError).value).toBe('7');
    expect((error as UsageError).message).toContain('applies only to --scenario');
  });

  it('takes a reason per option, and a flag given reads as true', () => {
    const error = refusal(() =>
      refuseGiven({ 'no-keys': true }, ['hop', 'no-keys'], (name) => `reason for ${name}`),
    );
    expect((error as UsageError).option).toBe('--no-keys');
    expect((error as UsageError).value).toBe('true');
    expect((error as UsageError).message).toContain('reason for no-keys');
  });
});
