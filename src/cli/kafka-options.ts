import { readFileSync, statSync } from 'node:fs';
import {
  SecretText,
  type KafkaConnectionOptions,
  type KafkaSasl,
  type KafkaTls,
  type SaslMechanismName,
} from '../ingest/kafka/connection.js';
import type { ShardFrom } from '../ingest/kafka/message-decoder.js';
import type { StartPosition } from '../ingest/kafka/start-positions.js';
import { parseIsoTimestamp } from '../ingest/timestamp.js';
import { UsageError } from '../errors/usage-error.js';

/**
 * The Kafka options of `watch`, `review` and `simulate`: their parseArgs
 * specs (spread into a command's own) and their reading into source and sink
 * settings, with errors naming the option and value. Secrets come only from
 * the environment or a file, never from the command line, where every user
 * of the machine can read them.
 */

/** Environment variable holding the SASL password. */
export const saslPasswordVariable = 'SHARDWISE_SASL_PASSWORD';

/** Options to reach a cluster: every Kafka-facing command takes them. */
export const kafkaConnectionOptionSpec = {
  brokers: { type: 'string' },
  'sasl-mechanism': { type: 'string' },
  'sasl-username': { type: 'string' },
  // Accepted by the parser only to be refused with a message that says where the password goes.
  'sasl-password': { type: 'string' },
  'sasl-password-file': { type: 'string' },
  tls: { type: 'boolean' },
  'tls-ca': { type: 'string' },
  'tls-cert': { type: 'string' },
  'tls-key': { type: 'string' },
} as const;

/** Options choosing what to read: `watch` and `review`. */
export const kafkaSourceOptionSpec = {
  ...kafkaConnectionOptionSpec,
  topic: { type: 'string' },
  group: { type: 'string' },
  from: { type: 'string' },
  'shard-from': { type: 'string' },
} as const;

/** Help text lines for the options above, for a command's `--help`. */
export const kafkaOptionsHelp = [
  'Kafka source:',
  '  --brokers H:P[,H:P]      bootstrap brokers (turns on the Kafka source)',
  '  --topic T                topic to read (must exist)',
  '  --group G                consumer group; a restart resumes after the last judged window',
  '                           (default: a new group per run)',
  '  --from latest|earliest|<ISO time>',
  '                           where to start partitions the group has no position for',
  '                           (default latest; a time uses the Kafka message timestamps)',
  '  --shard-from field|key|partition|field:NAME',
  "                           the record's shard field (default), the message key, the",
  '                           partition number (every message one request, its message',
  '                           key the request key), or field NAME',
  'Kafka security:',
  '  --tls                    connect with TLS (implied by --tls-ca, --tls-cert, --tls-key)',
  '  --tls-ca FILE            PEM certificate authorities to trust',
  '  --tls-cert FILE, --tls-key FILE   PEM client certificate and key (mutual TLS)',
  '  --sasl-mechanism plain|scram-sha-256|scram-sha-512',
  '  --sasl-username NAME',
  `  --sasl-password-file FILE  the password (first line), or set ${saslPasswordVariable};`,
  '                           never on the command line',
].join('\n');

/** Parsed values as node:util parseArgs gives them. */
export type ParsedValues = Readonly<
  Record<string, string | boolean | (string | boolean)[] | undefined>
>;

/** File reading and the environment, replaceable in tests. */
export interface OptionContext {
  readonly env: NodeJS.ProcessEnv;
  readonly readFile?: (path: string) => string;
  /** Permission bits of a file (for the password file warning); undefined when unknown. */
  readonly fileMode?: (path: string) => number | undefined;
}

/** Connection settings and the warnings to print on stderr. */
export interface ParsedConnection {
  readonly connection: KafkaConnectionOptions;
  readonly warnings: readonly string[];
}

/** What `watch`/`review` read from Kafka, without the window geometry the command adds. */
export interface ParsedKafkaSource extends ParsedConnection {
  readonly topic: string;
  readonly groupId: string | undefined;
  readonly from: StartPosition;
  readonly shardFrom: ShardFrom;
}

const mechanisms: readonly SaslMechanismName[] = ['plain', 'scram-sha-256', 'scram-sha-512'];
const topicPattern = /^[A-Za-z0-9._-]{1,249}$/;

/** True when the command line asks for a Kafka source or sink (`--brokers` given). */
export function wantsKafka(values: ParsedValues): boolean {
  return values.brokers !== undefined;
}

/**
 * Reads `--brokers` and the security options. Without `--brokers` any
 * other Kafka option is a usage error (it would be silently ignored).
 */
export function parseKafkaConnection(
  values: ParsedValues,
  context: OptionContext,
): ParsedConnection {
  const warnings: string[] = [];
  if (values['sasl-password'] !== undefined) {
    throw new UsageError(
      '--sasl-password',
      '[hidden]',
      `is not accepted: a password on the command line is visible to every user of the machine; set ${saslPasswordVariable} or use --sasl-password-file FILE`,
    );
  }
  const brokersText = text(values, 'brokers');
  if (brokersText === undefined) {
    const stray = Object.keys(kafkaSourceOptionSpec).find(
      (name) => name !== 'brokers' && values[name] !== undefined,
    );
    if (stray !== undefined) {
      throw new UsageError(`--${stray}`, String(values[stray]), 'needs --brokers');
    }
    throw new UsageError('--brokers', '', 'is required for Kafka (give host:port[,host:port])');
  }
  const brokers = parseBrokers(brokersText);
  const tls = parseTls(values, context);
  const sasl = parseSasl(values, context, warnings);
  if (sasl?.mechanism === 'plain' && tls === undefined) {
    warnings.push(
      '--sasl-mechanism plain without --tls sends the password in clear text over the network',
    );
  }
  return {
    connection: {
      brokers,
      ...(tls === undefined ? {} : { tls }),
      ...(sasl === undefined ? {} : { sasl }),
    },
    warnings,
  };
}

/** Reads the whole Kafka source selection: connection, topic, group, start, shard source. */
export function parseKafkaSource(values: ParsedValues, context: OptionContext): ParsedKafkaSource {
  const { connection, warnings } = parseKafkaConnection(values, context);
  const topic = text(values, 'topic');
  if (topic === undefined) throw new UsageError('--topic', '', 'is required with --brokers');
  return {
    connection,
    warnings,
    topic: parseTopic(topic),
    groupId: parseGroup(text(values, 'group')),
    from: parseFrom(text(values, 'from') ?? 'latest'),
    shardFrom: parseShardFrom(text(values, 'shard-from') ?? 'field'),
  };
}

/** `--brokers a:9092,b:9092` (IPv6 as `[::1]:9092`). */
export function parseBrokers(value: string): string[] {
  const entries = value.split(',').map((entry) => entry.trim());
  for (const entry of entries) {
    const match = /^(\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9](?:[A-Za-z0-9.-]*[A-Za-z0-9])?):(\d{1,5})$/.exec(
      entry,
    );
    const port = match === null ? 0 : Number(match[2]);
    if (match === null || port < 1 || port > 65535) {
      throw new UsageError(
        '--brokers',
        value,
        `has ${JSON.stringify(entry)}, which is not host:port (port 1..65535)`,
      );
    }
  }
  return entries;
}

/** A topic name given with `option` (`--topic`, `--merge`, `--summaries`): Kafka's legal names (letters, digits, `.`, `_`, `-`; at most 249). */
export function parseTopic(value: string, option = '--topic'): string {
  if (!topicPattern.test(value) || value === '.' || value === '..') {
    throw new UsageError(
      option,
      value,
      'is not a Kafka topic name (1 to 249 of A-Z a-z 0-9 . _ -, not "." or "..")',
    );
  }
  return value;
}

export function parseGroup(value: string | undefined): string | undefined {
  if (value === undefined) return undefined;
  if (value.trim() === '' || value.length > 255 || /[\u0000-\u001f\u007f]/.test(value)) {
    throw new UsageError(
      '--group',
      value,
      'is not a consumer group id (1 to 255 printable characters)',
    );
  }
  return value;
}

/** `--from latest|earliest|<ISO-8601 time with a zone>`. */
export function parseFrom(value: string): StartPosition {
  if (value === 'latest' || value === 'earliest') return { kind: value };
  const ms = parseIsoTimestamp(value);
  if (Number.isNaN(ms)) {
    throw new UsageError(
      '--from',
      value,
      'is not latest, earliest or an ISO-8601 time with a zone (e.g. 2025-12-01T10:00:00Z)',
    );
  }
  return { kind: 'time', ms: Math.floor(ms) };
}

/** `--shard-from field|key|partition|field:NAME`. */
export function parseShardFrom(value: string): ShardFrom {
  if (value === 'field') return { kind: 'field' };
  if (value === 'key') return { kind: 'key' };
  if (value === 'partition') return { kind: 'partition' };
  if (value.startsWith('field:')) {
    const field = value.slice('field:'.length);
    if (field === '' || field === 'ts' || field === 'count' || field === 'counts') {
      throw new UsageError(
        '--shard-from',
        value,
        'needs a field name other than ts, count and counts after "field:"',
      );
    }
    return field === 'shard' ? { kind: 'field' } : { kind: 'named-field', field };
  }
  throw new UsageError('--shard-from', value, 'is not field, key, partition or field:NAME');
}

function parseTls(values: ParsedValues, context: OptionContext): KafkaTls | undefined {
  const ca = text(values, 'tls-ca');
  const cert = text(values, 'tls-cert');
  const key = text(values, 'tls-key');
  if (values.tls !== true && ca === undefined && cert === undefined && key === undefined) {
    return undefined;
  }
  if ((cert === undefined) !== (key === undefined)) {
    const [given, missing] =
      cert === undefined ? ['--tls-key', '--tls-cert'] : ['--tls-cert', '--tls-key'];
    throw new UsageError(
      given,
      (cert ?? key) as string,
      `needs ${missing} too (mutual TLS takes both)`,
    );
  }
  const pem = (option: string, path: string | undefined): string | undefined => {
    if (path === undefined) return undefined;
    const contents = readOptionFile(option, path, context);
    if (!contents.includes('-----BEGIN ')) {
      throw new UsageError(option, path, 'is not a PEM file (no -----BEGIN line)');
    }
    return contents;
  };
  return {
    ...(ca === undefined ? {} : { ca: pem('--tls-ca', ca) }),
    ...(cert === undefined ? {} : { cert: pem('--tls-cert', cert) }),
    ...(key === undefined ? {} : { key: pem('--tls-key', key) }),
  };
}

function parseSasl(
  values: ParsedValues,
  context: OptionContext,
  warnings: string[],
): KafkaSasl | undefined {
  const mechanismText = text(values, 'sasl-mechanism');
  const username = text(values, 'sasl-username');
  const passwordFile = text(values, 'sasl-password-file');
  const fromEnv = context.env[saslPasswordVariable];
  if (mechanismText === undefined) {
    if (username !== undefined) {
      throw new UsageError('--sasl-username', username, 'needs --sasl-mechanism');
    }
    if (passwordFile !== undefined) {
      throw new UsageError('--sasl-password-file', passwordFile, 'needs --sasl-mechanism');
    }
    return undefined;
  }
  const mechanism = mechanismText.toLowerCase() as SaslMechanismName;
  if (!mechanisms.includes(mechanism)) {
    throw new UsageError(
      '--sasl-mechanism',
      mechanismText,
      `is not one of ${mechanisms.join(', ')}`,
    );
  }
  if (username === undefined || username === '') {
    throw new UsageError(
      '--sasl-username',
      username ?? '',
      `is required with --sasl-mechanism ${mechanism}`,
    );
  }
  if (passwordFile !== undefined && fromEnv !== undefined) {
    throw new UsageError(
      '--sasl-password-file',
      passwordFile,
      `and ${saslPasswordVariable} both give a password; unset one of them`,
    );
  }
  let password: string;
  if (passwordFile !== undefined) {
    password = readOptionFile('--sasl-password-file', passwordFile, context).split(/\r?\n/)[0];
    const mode = (context.fileMode ?? defaultFileMode)(passwordFile);
    if (mode !== undefined && (mode & 0o077) !== 0) {
      warnings.push(
        `--sasl-password-file ${JSON.stringify(passwordFile)} can be read by other users (mode ${(mode & 0o777).toString(8)}); chmod 600 it`,
      );
    }
  } else if (fromEnv !== undefined) {
    password = fromEnv;
  } else {
    throw new UsageError(
      '--sasl-mechanism',
      mechanism,
      `needs a password: set ${saslPasswordVariable} or give --sasl-password-file FILE`,
    );
  }
  if (password === '') {
    throw new UsageError(
      passwordFile === undefined ? saslPasswordVariable : '--sasl-password-file',
      passwordFile ?? '',
      'gives an empty password',
    );
  }
  return { mechanism, username, password: new SecretText(password) };
}

function readOptionFile(option: string, path: string, context: OptionContext): string {
  try {
    return (context.readFile ?? ((file: string) => readFileSync(file, 'utf8')))(path);
  } catch (error) {
    throw new UsageError(option, path, `cannot be read: ${(error as Error).message}`, {
      cause: error,
    });
  }
}

function defaultFileMode(path: string): number | undefined {
  try {
    return statSync(path).mode;
  } catch {
    return undefined;
  }
}

function text(values: ParsedValues, name: string): string | undefined {
  const value = values[name];
  if (value === undefined) return undefined;
  if (typeof value !== 'string') {
    throw new UsageError(`--${name}`, String(value), 'takes one value');
  }
  return value;
}
