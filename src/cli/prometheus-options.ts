import { readFileSync, statSync } from 'node:fs';
import { SecretText } from '../ingest/kafka/connection.js';
import type { PrometheusConnection } from '../ingest/prometheus/prometheus-api.js';
import { UsageError } from '../errors/usage-error.js';

/**
 * The Prometheus source options of `watch` and `review`: their parseArgs spec and their
 * reading, with errors naming the option and value. The token and the password come only
 * from the environment or a file, never from the command line, where every user of the
 * machine can read them.
 */

/** Environment variable holding the bearer token. */
export const prometheusTokenVariable = 'SHARDWISE_PROMETHEUS_TOKEN';
/** Environment variable holding the basic-auth password (with --prometheus-user). */
export const prometheusPasswordVariable = 'SHARDWISE_PROMETHEUS_PASSWORD';

export const prometheusOptionSpec = {
  prometheus: { type: 'string' },
  series: { type: 'string' },
  'shard-label': { type: 'string' },
  'prometheus-user': { type: 'string' },
  'prometheus-token-file': { type: 'string' },
  'prometheus-password-file': { type: 'string' },
  'prometheus-ca': { type: 'string' },
  // Accepted by the parser only to be refused with a message that says where the secret goes.
  'prometheus-token': { type: 'string' },
  'prometheus-password': { type: 'string' },
} as const;

/** Help lines for the options above. */
export const prometheusOptionsHelp = [
  '  --prometheus URL        read request counters from a Prometheus server (its',
  '                          HTTP API; a path prefix is kept)',
  '    --series SELECTOR     the counters, a PromQL series selector such as',
  `                          'cache_requests_total{job="seat-cache"}' (required)`,
  '    --shard-label NAME    the label naming the shard (required); series with',
  '                          the same value (instances, status codes) are summed',
  '    --prometheus-token-file FILE',
  `                          a bearer token (first line), or set`,
  `                          ${prometheusTokenVariable}`,
  '    --prometheus-user NAME  basic auth; the password from',
  `                          --prometheus-password-file FILE or`,
  `                          ${prometheusPasswordVariable}; never on the command line`,
  '    --prometheus-ca FILE  PEM certificate authorities to trust (https)',
].join('\n');

/** What the options give: where to read, what, and the warnings to print. */
export interface ParsedPrometheusSource {
  readonly connection: PrometheusConnection;
  readonly selector: string;
  readonly shardLabel: string;
  readonly warnings: readonly string[];
}

type Values = Readonly<Record<string, string | boolean | (string | boolean)[] | undefined>>;

const labelName = /^[a-zA-Z_][a-zA-Z0-9_]*$/;

/**
 * A secret from its file option or its environment variable, never both (a usage error
 * naming the option); undefined when neither is given.
 */
function oneSecret(
  option: string,
  file: string | undefined,
  variable: string,
  fromEnv: string | undefined,
  what: string,
  warnings: string[],
): string | undefined {
  if (file !== undefined && fromEnv !== undefined) {
    throw new UsageError(option, file, `and ${variable} both give ${what}; unset one of them`);
  }
  return file !== undefined ? secretFromFile(option, file, warnings) : fromEnv;
}

/**
 * Reads `--prometheus` and its options; null without `--prometheus` (any of its options
 * alone is a usage error: it would be silently ignored).
 */
export function readPrometheusOptions(
  values: Values,
  context: { readonly env: NodeJS.ProcessEnv },
): ParsedPrometheusSource | null {
  const url = text(values, 'prometheus');
  for (const name of ['prometheus-token', 'prometheus-password'] as const) {
    const given = text(values, name);
    if (given !== undefined) {
      const variable =
        name === 'prometheus-token' ? prometheusTokenVariable : prometheusPasswordVariable;
      throw new UsageError(
        `--${name}`,
        '[hidden]',
        `is not accepted: a secret on the command line is visible to every user of the machine; set ${variable} or use --${name}-file FILE`,
      );
    }
  }
  if (url === undefined) {
    for (const name of Object.keys(prometheusOptionSpec)) {
      const given = text(values, name);
      if (given !== undefined) throw new UsageError(`--${name}`, given, 'needs --prometheus URL');
    }
    return null;
  }
  let parsed: URL;
  try {
    parsed = new URL(url);
  } catch {
    throw new UsageError('--prometheus', url, 'is not a URL (e.g. http://prometheus:9090)');
  }
  if (parsed.protocol !== 'http:' && parsed.protocol !== 'https:') {
    throw new UsageError('--prometheus', url, 'is not an http:// or https:// URL');
  }
  if (parsed.username !== '' || parsed.password !== '') {
    throw new UsageError(
      '--prometheus',
      `${parsed.protocol}//[hidden]@${parsed.host}`,
      `carries credentials: use --prometheus-user with ${prometheusPasswordVariable} or --prometheus-password-file`,
    );
  }
  const selector = text(values, 'series');
  if (selector === undefined || selector.trim() === '') {
    throw new UsageError(
      '--series',
      selector ?? '',
      'is required with --prometheus (a series selector)',
    );
  }
  const shardLabel = text(values, 'shard-label');
  if (shardLabel === undefined || !labelName.test(shardLabel)) {
    throw new UsageError(
      '--shard-label',
      shardLabel ?? '',
      shardLabel === undefined
        ? 'is required with --prometheus (the label naming the shard)'
        : 'is not a Prometheus label name ([a-zA-Z_][a-zA-Z0-9_]*)',
    );
  }
  const warnings: string[] = [];
  const auth = readAuth(values, context, warnings);
  if (auth !== undefined && parsed.protocol === 'http:') {
    warnings.push(
      `--prometheus ${JSON.stringify(url)} is plain http: the ${auth.kind === 'bearer' ? 'token' : 'password'} crosses the network in clear text`,
    );
  }
  const caFile = text(values, 'prometheus-ca');
  let ca: string | undefined;
  if (caFile !== undefined) {
    if (parsed.protocol !== 'https:') {
      throw new UsageError('--prometheus-ca', caFile, `needs an https:// --prometheus URL`);
    }
    ca = readOptionFile('--prometheus-ca', caFile);
  }
  return {
    connection: {
      url,
      ...(auth === undefined ? {} : { auth }),
      ...(ca === undefined ? {} : { ca }),
    },
    selector: selector.trim(),
    shardLabel,
    warnings,
  };
}

function readAuth(
  values: Values,
  context: { readonly env: NodeJS.ProcessEnv },
  warnings: string[],
): PrometheusConnection['auth'] {
  const tokenFile = text(values, 'prometheus-token-file');
  const tokenEnv = context.env[prometheusTokenVariable];
  const user = text(values, 'prometheus-user');
  const passwordFile = text(values, 'prometheus-password-file');
  const passwordEnv = context.env[prometheusPasswordVariable];
  const token = oneSecret(
    '--prometheus-token-file',
    tokenFile,
    prometheusTokenVariable,
    tokenEnv,
    'a token',
    warnings,
  );
  if (user === undefined) {
    if (passwordFile !== undefined) {
      throw new UsageError(
        '--prometheus-password-file',
        passwordFile,
        'needs --prometheus-user NAME',
      );
    }
    if (passwordEnv !== undefined) {
      warnings.push(`${prometheusPasswordVariable} is set but ignored without --prometheus-user`);
    }
    if (token === undefined) return undefined;
    if (token === '') {
      throw new UsageError(
        tokenFile === undefined ? prometheusTokenVariable : '--prometheus-token-file',
        tokenFile ?? '',
        'gives an empty token',
      );
    }
    return { kind: 'bearer', token: new SecretText(token) };
  }
  if (token !== undefined) {
    throw new UsageError(
      '--prometheus-user',
      user,
      `cannot be combined with a bearer token (${tokenFile === undefined ? prometheusTokenVariable : '--prometheus-token-file'}); give one of them`,
    );
  }
  if (user === '' || user.includes(':')) {
    throw new UsageError(
      '--prometheus-user',
      user,
      'is empty or holds a colon (basic auth cannot carry it)',
    );
  }
  const password = oneSecret(
    '--prometheus-password-file',
    passwordFile,
    prometheusPasswordVariable,
    passwordEnv,
    'a password',
    warnings,
  );
  if (password === undefined || password === '') {
    throw new UsageError(
      '--prometheus-user',
      user,
      `needs a password: set ${prometheusPasswordVariable} or give --prometheus-password-file FILE`,
    );
  }
  return { kind: 'basic', user, password: new SecretText(password) };
}

/** The first line of a secret file, with a warning when others may read it. */
function secretFromFile(option: string, path: string, warnings: string[]): string {
  const secret = readOptionFile(option, path).split(/\r?\n/)[0];
  let mode: number | undefined;
  try {
    mode = statSync(path).mode;
  } catch {
    mode = undefined;
  }
  if (mode !== undefined && (mode & 0o077) !== 0) {
    warnings.push(
      `${option} ${JSON.stringify(path)} can be read by other users (mode ${(mode & 0o777).toString(8)}); chmod 600 it`,
    );
  }
  return secret;
}

function readOptionFile(option: string, path: string): string {
  try {
    return readFileSync(path, 'utf8');
  } catch (error) {
    throw new UsageError(option, path, `cannot be read: ${(error as Error).message}`, {
      cause: error,
    });
  }
}

function text(values: Values, name: string): string | undefined {
  const value = values[name];
  if (value === undefined) return undefined;
  if (typeof value !== 'string')
    throw new UsageError(`--${name}`, String(value), 'takes one value');
  return value;
}
