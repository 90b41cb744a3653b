import { parseArgs, type ParseArgsConfig } from 'node:util';
import { UsageError } from '../errors/usage-error.js';

/**
 * Parsing of command-line values with messages that name the option and the value, so a
 * typo fails at start-up with one line (exit 2) and never halfway through a run.
 */

/**
 * Refuses options given where they do not apply: the first of `names` present in `values`
 * (in the order named) throws a UsageError naming it, its value and `reason` (a text, or one
 * per option).
 */
export function refuseGiven<Name extends string>(
  values: Readonly<Partial<Record<Name, unknown>>>,
  names: readonly Name[],
  reason: string | ((name: Name) => string),
): void {
  for (const name of names) {
    const value = values[name];
    if (value !== undefined) {
      throw new UsageError(
        `--${name}`,
        String(value),
        typeof reason === 'string' ? reason : reason(name),
      );
    }
  }
}

/** node:util parseArgs in strict mode, with its errors turned into UsageError. */
export function parseOptions<T extends NonNullable<ParseArgsConfig['options']>>(
  argv: readonly string[],
  options: T,
): ReturnType<
  typeof parseArgs<{ args: string[]; options: T; strict: true; allowPositionals: false }>
>['values'] {
  // A negative number after a value option is that option's value ("--shards -3"), so that
  // the error says what is wrong with it rather than that it looks like an option.
  const args: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const name = argv[i].startsWith('--') ? argv[i].slice(2) : '';
    const next = argv[i + 1];
    if (
      name !== '' &&
      options[name]?.type === 'string' &&
      next !== undefined &&
      /^-\d|^-\.\d/.test(next)
    ) {
      args.push(`${argv[i]}=${next}`);
      i++;
    } else {
      args.push(argv[i]);
    }
  }
  try {
    return parseArgs({ args, options, strict: true, allowPositionals: false }).values;
  } catch (error) {
    throw usageErrorOf(error, args, argv, options);
  }
}

/**
 * Turns a parseArgs error into the UsageError users see. The kind of mistake comes from the
 * error's `code`, which Node keeps stable across versions (its message text is not); the
 * option or argument at fault comes from parseArgs' own tokens of the same arguments read
 * leniently: the first token that breaks the rule the code names is the one strict mode
 * stopped at, since it throws on the first.
 */
function usageErrorOf(
  error: unknown,
  args: readonly string[],
  argv: readonly string[],
  options: NonNullable<ParseArgsConfig['options']>,
): UsageError {
  const code = (error as { code?: unknown } | null)?.code;
  const { tokens } = parseArgs({
    args: [...args],
    options,
    strict: false,
    allowPositionals: true,
    tokens: true,
  });
  switch (code) {
    case 'ERR_PARSE_ARGS_UNKNOWN_OPTION': {
      const unknown = tokens.find(
        (token) => token.kind === 'option' && !Object.hasOwn(options, token.name),
      );
      if (unknown?.kind === 'option')
        return new UsageError(
          unknown.rawName,
          unknown.rawName,
          'is not an option of this command (see --help)',
        );
      break;
    }
    case 'ERR_PARSE_ARGS_INVALID_OPTION_VALUE': {
      // The same code covers a value given to a switch and a value that looks like an
      // option; only a string option left without any value "needs a value".
      const faulty = tokens.find((token) => {
        if (token.kind !== 'option' || !Object.hasOwn(options, token.name)) return false;
        if (options[token.name].type === 'boolean') return token.value !== undefined;
        return token.value === undefined || (!token.inlineValue && token.value.startsWith('-'));
      });
      if (faulty?.kind === 'option' && faulty.value === undefined)
        return new UsageError(`--${faulty.name}`, '', 'needs a value');
      break;
    }
    case 'ERR_PARSE_ARGS_UNEXPECTED_POSITIONAL': {
      const positional = tokens.find((token) => token.kind === 'positional');
      if (positional?.kind === 'positional')
        return new UsageError(
          'argument',
          positional.value,
          'is not expected (options start with --)',
        );
      break;
    }
  }
  const message = error instanceof Error ? error.message : String(error);
  return new UsageError('arguments', argv.join(' '), message.split('\n')[0]);
}

/** A whole number in [min, 2^53 - 1]. */
export function wholeNumber(option: string, raw: string, min = 0): number {
  const text = raw.trim();
  if (!/^[+]?\d+(\.0+)?$|^[+]?\d+(\.\d+)?e[+]?\d+$/i.test(text)) {
    throw new UsageError(option, raw, 'is not a whole number');
  }
  const value = Number(text);
  if (!Number.isInteger(value)) throw new UsageError(option, raw, 'is not a whole number');
  if (!Number.isSafeInteger(value))
    throw new UsageError(option, raw, 'is beyond 2^53 - 1, the largest exact count');
  if (value < min) throw new UsageError(option, raw, `must be at least ${min}`);
  return value;
}

/** A finite number in (min, max] or [min, max]. */
export function finiteNumber(
  option: string,
  raw: string,
  range: { min?: number; max?: number; minExclusive?: boolean; maxExclusive?: boolean } = {},
): number {
  const value = Number(raw.trim());
  if (raw.trim() === '' || !Number.isFinite(value))
    throw new UsageError(option, raw, 'is not a number');
  const { min, max, minExclusive, maxExclusive } = range;
  if (min !== undefined && (minExclusive ? value <= min : value < min)) {
    throw new UsageError(option, raw, `must be ${minExclusive ? 'above' : 'at least'} ${min}`);
  }
  if (max !== undefined && (maxExclusive ? value >= max : value > max)) {
    throw new UsageError(option, raw, `must be ${maxExclusive ? 'below' : 'at most'} ${max}`);
  }
  return value;
}

/** A probability strictly between 0 and 1 (alpha, quantile levels, targets). */
export function probability(option: string, raw: string): number {
  return finiteNumber(option, raw, { min: 0, max: 1, minExclusive: true, maxExclusive: true });
}

const DURATION_UNITS: Record<string, number> = {
  ms: 1,
  s: 1000,
  m: 60_000,
  h: 3_600_000,
  d: 86_400_000,
};

/** A duration like 250ms, 10s, 5m, 1h, 1d (a bare number is seconds); returned in milliseconds. */
export function duration(option: string, raw: string, { allowZero = false } = {}): number {
  const match = /^(\d+(?:\.\d+)?)(ms|s|m|h|d)?$/.exec(raw.trim());
  if (!match) throw new UsageError(option, raw, 'is not a duration (examples: 500ms, 10s, 5m, 1h)');
  const ms = Number(match[1]) * DURATION_UNITS[match[2] ?? 's'];
  if (!Number.isFinite(ms) || (!allowZero && ms <= 0) || !Number.isInteger(Math.round(ms))) {
    throw new UsageError(
      option,
      raw,
      allowZero ? 'must be a duration of zero or more' : 'must be a duration above zero',
    );
  }
  return Math.round(ms);
}

const SIZE_UNITS: Record<string, number> = {
  '': 1,
  b: 1,
  kb: 1e3,
  mb: 1e6,
  gb: 1e9,
  kib: 1024,
  mib: 1024 ** 2,
  gib: 1024 ** 3,
};

/** A size in bytes like 500MB, 1GiB or 4096 (a bare number is bytes); at least `min`. */
export function byteSize(option: string, raw: string, min = 1): number {
  const match = /^(\d+(?:\.\d+)?)\s*([kmg]i?b|b)?$/i.exec(raw.trim());
  if (!match) throw new UsageError(option, raw, 'is not a size (examples: 4096, 500MB, 1GiB)');
  const bytes = Math.round(Number(match[1]) * SIZE_UNITS[(match[2] ?? '').toLowerCase()]);
  if (!Number.isSafeInteger(bytes)) throw new UsageError(option, raw, 'is too large');
  if (bytes < min) throw new UsageError(option, raw, `must be at least ${min} bytes`);
  return bytes;
}
