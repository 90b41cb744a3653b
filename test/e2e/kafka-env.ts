// Where the e2e tests find a Kafka broker: KAFKA_BROKERS if set, else the bootstrap file
// that scripts/kafka-broker.sh writes once its broker accepts clients. No broker is a
// failure, never a skip: a suite that silently skips its Kafka tests proves nothing.
import { readFileSync } from 'node:fs';
import { homedir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const MISSING_BROKER_MESSAGE =
  'The Kafka tests need Java 17 and Maven (mvn) to assemble the test broker from Maven Central; run npm test (its pretest step starts the broker) or set KAFKA_BROKERS';

const HOST_PORT = /^[A-Za-z0-9.\-[\]:]+:\d{1,5}$/;

/** The file scripts/kafka-broker.sh writes the bootstrap address to (same defaults). */
export function bootstrapFile(env: NodeJS.ProcessEnv = process.env): string {
  const cacheRoot = env.SHARDWISE_CACHE || join(env.HOME || homedir(), '.cache', 'shardwise');
  const stateDir = env.SHARDWISE_BROKER_DIR || join(cacheRoot, 'broker');
  return join(stateDir, 'bootstrap');
}

function checkedList(value: string, origin: string): string {
  const entries = value.split(',').map((entry) => entry.trim());
  for (const entry of entries) {
    if (!HOST_PORT.test(entry)) {
      throw new Error(
        `${origin} is '${value}', which is not a comma-separated list of host:port (entry '${entry}')`,
      );
    }
  }
  return entries.join(',');
}

/**
 * The bootstrap address of the test broker, for example `127.0.0.1:19092`, or a
 * comma-separated list when KAFKA_BROKERS names several. Throws when neither source
 * gives one.
 */
export function brokerAddress(env: NodeJS.ProcessEnv = process.env): string {
  const fromEnv = env.KAFKA_BROKERS?.trim();
  if (fromEnv) {
    return checkedList(fromEnv, 'KAFKA_BROKERS');
  }
  const file = bootstrapFile(env);
  let contents: string;
  try {
    contents = readFileSync(file, 'utf8').trim();
  } catch (cause) {
    throw new Error(
      `${MISSING_BROKER_MESSAGE}. (KAFKA_BROKERS is not set and ${file} cannot be read: ${(cause as Error).message})`,
      { cause },
    );
  }
  if (!contents) {
    throw new Error(`${MISSING_BROKER_MESSAGE}. (KAFKA_BROKERS is not set and ${file} is empty)`);
  }
  return checkedList(contents, `the bootstrap file ${file}`);
}

/** brokerAddress() split for clients that take a list, such as kafkajs. */
export function brokerList(env: NodeJS.ProcessEnv = process.env): string[] {
  return brokerAddress(env).split(',');
}

/**
 * The Kafka version scripts/kafka-broker.sh runs: SHARDWISE_KAFKA_VERSION, else the
 * script's default (read from the script, so the two cannot drift apart).
 */
export function kafkaVersion(env: NodeJS.ProcessEnv = process.env): string {
  const chosen = env.SHARDWISE_KAFKA_VERSION?.trim();
  if (chosen) return chosen;
  const script = fileURLToPath(new URL('../../scripts/kafka-broker.sh', import.meta.url));
  const match = /^readonly DEFAULT_KAFKA_VERSION=(\d+\.\d+\.\d+)$/m.exec(
    readFileSync(script, 'utf8'),
  );
  if (match === null) throw new Error(`${script} names no DEFAULT_KAFKA_VERSION`);
  return match[1];
}

/** The folder of the broker jars scripts/kafka-broker.sh assembles for {@link kafkaVersion}. */
export function kafkaLibsDir(env: NodeJS.ProcessEnv = process.env): string {
  const cacheRoot = env.SHARDWISE_CACHE || join(env.HOME || homedir(), '.cache', 'shardwise');
  return join(cacheRoot, `kafka-${kafkaVersion(env)}`, 'libs');
}
