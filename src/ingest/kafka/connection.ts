import { createRequire } from 'node:module';
import { inspect } from 'node:util';
import type { Consumer, Kafka, KafkaConfig, LogEntry, SASLOptions } from 'kafkajs';

let kafkajsModule: typeof import('kafkajs') | undefined;

/**
 * The kafkajs package, loaded on first use (it is CommonJS, so synchronously): commands
 * and sources that never meet a broker (`watch --input`, `odds`, `plan`) do not pay its
 * start-up. Kafka modules take its values (client, partitioners, levels) from here and
 * import only its types.
 */
export function kafkajs(): typeof import('kafkajs') {
  kafkajsModule ??= createRequire(import.meta.url)('kafkajs') as typeof import('kafkajs');
  return kafkajsModule;
}

/**
 * A secret (a SASL password) that cannot leak by accident: it prints, logs,
 * inspects and serialises as `[hidden]`; only {@link reveal} gives the text,
 * and only the client configuration calls it.
 */
export class SecretText {
  readonly #text: string;

  constructor(text: string) {
    this.#text = text;
  }

  /** The secret itself. */
  reveal(): string {
    return this.#text;
  }

  toString(): string {
    return '[hidden]';
  }

  toJSON(): string {
    return '[hidden]';
  }

  [inspect.custom](): string {
    return '[hidden]';
  }
}

/** SASL mechanisms offered by `--sasl-mechanism`. */
export type SaslMechanismName = 'plain' | 'scram-sha-256' | 'scram-sha-512';

/** SASL credentials. */
export interface KafkaSasl {
  readonly mechanism: SaslMechanismName;
  readonly username: string;
  readonly password: SecretText;
}

/** TLS settings: present means TLS is on; PEM text for each file given. */
export interface KafkaTls {
  /** Certificate authorities to trust instead of the system's (`--tls-ca`). */
  readonly ca?: string;
  /** Client certificate for mutual TLS (`--tls-cert`). */
  readonly cert?: string;
  /** Its private key (`--tls-key`). */
  readonly key?: string;
}

/** How to reach the cluster; shared by the source, the sink and the admin calls. */
export interface KafkaConnectionOptions {
  /** Bootstrap addresses `host:port` (`--brokers`). */
  readonly brokers: readonly string[];
  readonly tls?: KafkaTls;
  readonly sasl?: KafkaSasl;
  /** Client id shown in broker logs and quotas (default `shardwise`). */
  readonly clientId?: string;
  /** TCP connect timeout per attempt, ms (default 3000). */
  readonly connectionTimeoutMs?: number;
  /** Timeout of one request, ms (default 30000). */
  readonly requestTimeoutMs?: number;
}

/** A warning or error the Kafka client logged, with secrets removed. */
export interface KafkaClientLog {
  readonly level: 'error' | 'warn';
  /** The client's component, e.g. `Connection`, `ConsumerGroup`. */
  readonly namespace: string;
  readonly message: string;
}

/**
 * The kafkajs client for `options`. Its log goes to `onLog` (warnings and
 * errors only), never to the console: standard output carries the verdict
 * stream. `retries` is the client's own per-request retry count; the source
 * and sink do their own backoff around connecting.
 */
export function createKafkaClient(
  options: KafkaConnectionOptions,
  onLog: (entry: KafkaClientLog) => void,
  retries: number,
): Kafka {
  const { Kafka, logLevel } = kafkajs();
  const secret = options.sasl?.password.reveal();
  const config: KafkaConfig = {
    clientId: options.clientId ?? 'shardwise',
    brokers: [...options.brokers],
    connectionTimeout: options.connectionTimeoutMs ?? 3000,
    requestTimeout: options.requestTimeoutMs ?? 30_000,
    retry: { retries, initialRetryTime: 300, maxRetryTime: 10_000 },
    logLevel: logLevel.WARN,
    logCreator:
      () =>
      ({ namespace, level, log }: LogEntry) => {
        const scrub = (text: string): string =>
          secret !== undefined && secret !== '' ? text.split(secret).join('[hidden]') : text;
        onLog({
          level: level === logLevel.ERROR || level === logLevel.NOTHING ? 'error' : 'warn',
          namespace: namespace ?? '',
          message: scrub(String(log.message)),
        });
      },
  };
  if (options.tls !== undefined) {
    const { ca, cert, key } = options.tls;
    config.ssl =
      ca === undefined && cert === undefined && key === undefined
        ? true
        : {
            rejectUnauthorized: true,
            ...(ca === undefined ? {} : { ca: [ca] }),
            ...(cert === undefined ? {} : { cert }),
            ...(key === undefined ? {} : { key }),
          };
  }
  if (options.sasl !== undefined) {
    config.sasl = {
      mechanism: options.sasl.mechanism,
      username: options.sasl.username,
      password: secret as string,
    } as SASLOptions;
  }
  return new Kafka(config);
}

/**
 * Connects a group consumer and subscribes it to one topic, read from the earliest offsets or
 * the latest where the group has committed none: `count`'s share of a topic and the partial
 * summaries `watch --merge` reads.
 */
export async function subscribeToTopic(
  consumer: Consumer,
  topic: string,
  from: 'earliest' | 'latest',
): Promise<void> {
  await consumer.connect();
  await consumer.subscribe({ topics: [topic], fromBeginning: from === 'earliest' });
}

/** The broker list for messages: `a:9092,b:9092`. */
export function brokerText(options: KafkaConnectionOptions): string {
  return options.brokers.join(',');
}
