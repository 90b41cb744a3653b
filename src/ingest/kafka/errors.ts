import { ShardwiseError } from '../../errors/shardwise-error.js';

/**
 * Errors of the Kafka source and sink. One root, {@link KafkaIngestError} (a
 * `ShardwiseError`), carrying `retriable` (whether trying the same thing again can help) and
 * `cause` (the Kafka client's own error, kept whole for `--debug`); below it
 * an error naming the brokers that could not be reached, and errors naming
 * the topic and, where one is at fault, the partition. The CLI turns any of
 * them into exit code 1 with the message, which never holds a secret.
 */
export class KafkaIngestError extends ShardwiseError {
  /**
   * @param message one line saying what failed, naming the option or value at fault
   * @param options `retriable` (default false) and the underlying `cause`
   */
  constructor(message: string, options: { retriable?: boolean; cause?: unknown } = {}) {
    super(message, { retriable: options.retriable, cause: options.cause });
    this.name = 'KafkaIngestError';
  }
}

/** No broker of `--brokers` answered within the connection retries. */
export class BrokersUnreachableError extends KafkaIngestError {
  /** The bootstrap addresses tried, as given. */
  readonly brokers: readonly string[];
  /** Connection attempts made before giving up. */
  readonly attempts: number;

  /**
   * @param brokers the addresses tried
   * @param attempts how many attempts were made
   * @param elapsedMs how long the attempts took, for the message
   * @param cause the last attempt's error
   */
  constructor(brokers: readonly string[], attempts: number, elapsedMs: number, cause: unknown) {
    super(
      `cannot reach the Kafka brokers ${brokers.join(',')} (--brokers) after ${attempts} ` +
        `attempt${attempts === 1 ? '' : 's'} over ${(elapsedMs / 1000).toFixed(1)} s: ${causeText(cause)}`,
      { retriable: true, cause },
    );
    this.name = 'BrokersUnreachableError';
    this.brokers = [...brokers];
    this.attempts = attempts;
  }
}

/** Something is wrong with the topic: it does not exist, it may not be read, its metadata is odd. */
export class KafkaTopicError extends KafkaIngestError {
  /** The topic, as given to `--topic`. */
  readonly topic: string;

  /**
   * @param topic the topic at fault
   * @param message what is wrong, as a full sentence naming the topic
   * @param options retriable and cause, as on the root error
   */
  constructor(
    topic: string,
    message: string,
    options: { retriable?: boolean; cause?: unknown } = {},
  ) {
    super(message, options);
    this.name = 'KafkaTopicError';
    this.topic = topic;
  }
}

/** Something failed for one partition of the topic (a start offset, a commit). */
export class KafkaPartitionError extends KafkaTopicError {
  /** The partition number. */
  readonly partition: number;

  /**
   * @param topic the topic
   * @param partition the partition at fault
   * @param message what failed, naming topic and partition
   * @param options retriable and cause, as on the root error
   */
  constructor(
    topic: string,
    partition: number,
    message: string,
    options: { retriable?: boolean; cause?: unknown } = {},
  ) {
    super(topic, message, options);
    this.name = 'KafkaPartitionError';
    this.partition = partition;
  }
}

/**
 * Client errors flagged non-retriable that are transient all the same: a
 * new cluster creates its offsets topic on the first coordinator lookup, and
 * a restarted broker loads it before it answers for a group.
 */
const transientClientErrors = new Set(['KafkaJSGroupCoordinatorNotFound']);

/**
 * Whether an error from the Kafka client is worth retrying: the innermost
 * error of its `cause` chain decides, because the client wraps a retriable
 * connection error in a non-retriable "retries exceeded" one once its own
 * retries run out. Errors without a `retriable` flag (programming errors,
 * ours) are not retried.
 */
export function isRetriable(error: unknown): boolean {
  let innermost: unknown = error;
  for (let depth = 0; depth < 10; depth++) {
    if (transientClientErrors.has((innermost as { name?: string } | null)?.name ?? '')) return true;
    const cause = (innermost as { cause?: unknown } | null)?.cause;
    if (cause === undefined || cause === null || cause === innermost) break;
    innermost = cause;
  }
  return (innermost as { retriable?: unknown } | null)?.retriable === true;
}

/**
 * Whether a connection attempt that failed this way is worth another: our own
 * errors say so themselves, the client's by their cause chain ({@link isRetriable}).
 */
export function isRetriableConnectError(error: unknown): boolean {
  return error instanceof KafkaIngestError ? error.retriable : isRetriable(error);
}

/** The innermost message of an error's cause chain, the one that says what actually happened. */
export function causeText(error: unknown): string {
  const messages: string[] = [];
  let current: unknown = error;
  for (let depth = 0; depth < 10 && current !== undefined && current !== null; depth++) {
    const message = current instanceof Error ? current.message : String(current);
    if (message !== '' && !messages.includes(message)) messages.push(message);
    const next = (current as { cause?: unknown }).cause;
    if (next === current) break;
    current = next;
  }
  return messages.length === 0 ? 'unknown error' : messages[messages.length - 1];
}
