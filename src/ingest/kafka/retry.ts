import { setTimeout as sleepFor } from 'node:timers/promises';
import { BrokersUnreachableError, isRetriable } from './errors.js';
import { ShardwiseError } from '../../errors/shardwise-error.js';

/** How often and how patiently to retry. */
export interface BackoffPolicy {
  /** Attempts in all, the first one included (at least 1). */
  readonly attempts: number;
  /** Ceiling of the first delay, ms. */
  readonly initialDelayMs: number;
  /** Cap on every delay, ms. */
  readonly maxDelayMs: number;
}

/**
 * The wait after the `failures`-th failed attempt (1 for the first): an
 * exponential ceiling `min(maxDelayMs, initialDelayMs * 2^(failures-1))`, of
 * which half is fixed and half drawn uniformly, the "equal jitter" of
 * M. Brooker, "Exponential Backoff And Jitter" (AWS Architecture Blog, 2015).
 * The fixed half keeps a retry from coming at once; the random half keeps
 * many clients that failed together from retrying together. O(1).
 *
 * @param random a uniform draw in [0, 1) (Math.random by default)
 * @example backoffDelay(3, {attempts: 5, initialDelayMs: 100, maxDelayMs: 1000}, () => 0.5) // 300
 */
export function backoffDelay(
  failures: number,
  policy: BackoffPolicy,
  random: () => number = Math.random,
): number {
  const ceiling = Math.min(policy.maxDelayMs, policy.initialDelayMs * 2 ** (failures - 1));
  return Math.round(ceiling / 2 + random() * (ceiling / 2));
}

/** Checks a policy when a source or sink is built (not when it first fails). */
export function checkBackoffPolicy(policy: BackoffPolicy, name: string): BackoffPolicy {
  if (!Number.isSafeInteger(policy.attempts) || policy.attempts < 1) {
    throw new RangeError(
      `${name}.attempts is ${policy.attempts}, not a whole number of at least 1`,
    );
  }
  if (!(policy.initialDelayMs >= 0) || !(policy.maxDelayMs >= policy.initialDelayMs)) {
    throw new RangeError(
      `${name} delays ${policy.initialDelayMs}..${policy.maxDelayMs} ms are not 0 <= initial <= max`,
    );
  }
  return policy;
}

/** Hooks of {@link retryWithBackoff}. */
export interface RetryHooks {
  /** Called before each wait with the failure count, the wait and the error. */
  readonly onRetry?: (failures: number, delayMs: number, error: unknown) => void;
  /** Which errors to retry (default: {@link isRetriable}); others are thrown at once. */
  readonly shouldRetry?: (error: unknown) => boolean;
  /** Stops waiting and gives up at once. */
  readonly signal?: AbortSignal;
  /** A uniform draw in [0, 1), replaceable in tests. */
  readonly random?: () => number;
}

/** Thrown by {@link retryWithBackoff} when every attempt failed with a retriable error. */
export class RetriesExhausted extends ShardwiseError {
  /** Attempts made. */
  readonly attempts: number;
  /** From the first attempt to the last failure, ms. */
  readonly elapsedMs: number;

  constructor(attempts: number, elapsedMs: number, cause: unknown) {
    super(`gave up after ${attempts} attempts`, { cause });
    this.name = 'RetriesExhausted';
    this.attempts = attempts;
    this.elapsedMs = elapsedMs;
  }
}

/**
 * Runs `operation` until it succeeds, waiting {@link backoffDelay} between
 * attempts. A non-retriable error is thrown as it is; when the attempts run
 * out, {@link RetriesExhausted} carries the last error as its cause. An abort
 * of `hooks.signal` ends a wait early and throws the signal's reason.
 */
export async function retryWithBackoff<T>(
  operation: (attempt: number) => Promise<T>,
  policy: BackoffPolicy,
  hooks: RetryHooks = {},
): Promise<T> {
  const shouldRetry = hooks.shouldRetry ?? isRetriable;
  const started = Date.now();
  for (let attempt = 1; ; attempt++) {
    hooks.signal?.throwIfAborted();
    try {
      return await operation(attempt);
    } catch (error) {
      if (hooks.signal?.aborted) throw hooks.signal.reason;
      if (!shouldRetry(error)) throw error;
      if (attempt >= policy.attempts) {
        throw new RetriesExhausted(attempt, Date.now() - started, error);
      }
      const delayMs = backoffDelay(attempt, policy, hooks.random);
      hooks.onRetry?.(attempt, delayMs, error);
      await sleepFor(delayMs, undefined, { signal: hooks.signal });
    }
  }
}

/**
 * Connecting that ran out of attempts ({@link RetriesExhausted}) as the error
 * naming the brokers of `--brokers`; null for any other error.
 */
export function unreachableBrokersError(
  error: unknown,
  brokers: readonly string[],
): BrokersUnreachableError | null {
  if (!(error instanceof RetriesExhausted)) return null;
  return new BrokersUnreachableError(brokers, error.attempts, error.elapsedMs, error.cause);
}
