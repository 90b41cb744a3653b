import { request as httpRequest, type IncomingMessage } from 'node:http';
import { request as httpsRequest } from 'node:https';
import type { SecretText } from '../kafka/connection.js';
import type { CounterSeries } from './counter-ledger.js';
import { ShardwiseError } from '../../errors/shardwise-error.js';

/** How to reach a Prometheus server's HTTP API. */
export interface PrometheusConnection {
  /** Base URL, e.g. `http://prometheus:9090` or `https://host/prometheus` (a path prefix is kept). */
  readonly url: string;
  /** A bearer token, or a basic-auth user and password; none by default. */
  readonly auth?:
    | { readonly kind: 'bearer'; readonly token: SecretText }
    | { readonly kind: 'basic'; readonly user: string; readonly password: SecretText };
  /** PEM certificate authorities to trust for https (`--prometheus-ca`). */
  readonly ca?: string;
  /** Longest wait for one answer, ms (default 30 s). */
  readonly timeoutMs?: number;
}

/** Why a query failed: the server could not be reached, refused the query, or answered oddly. */
export type PrometheusFailure = 'unreachable' | 'bad query' | 'status' | 'bad answer';

/** A failed query, with Prometheus's own error text when it gave one. */
export class PrometheusQueryError extends ShardwiseError {
  readonly failure: PrometheusFailure;
  /** The HTTP status, when there was an answer. */
  readonly status: number | undefined;

  constructor(
    failure: PrometheusFailure,
    message: string,
    status?: number,
    options?: { cause?: unknown },
  ) {
    super(message, { cause: options?.cause });
    this.name = 'PrometheusQueryError';
    this.failure = failure;
    this.status = status;
  }
}

/**
 * The raw samples of every series `selector` matches in the `rangeMs` before `timeMs`
 * (the server's now when omitted), through an instant query of a range vector:
 * `POST /api/v1/query` with `query=SELECTOR[RANGEms]` and `time`. The answer is a matrix
 * of the samples as stored, unextrapolated, in (time - range, time] (Prometheus 3; 2.x
 * includes the left end too), each series with its labels, timestamps in seconds and
 * values as strings (Prometheus documentation, from memory). Values that are no number
 * (`NaN`, `+Inf`) come back as NaN. O(answer size).
 */
export async function readRangeVector(
  connection: PrometheusConnection,
  selector: string,
  rangeMs: number,
  timeMs?: number,
): Promise<CounterSeries[]> {
  const form = new URLSearchParams({ query: `${selector}[${Math.max(1, Math.ceil(rangeMs))}ms]` });
  if (timeMs !== undefined) form.set('time', (timeMs / 1000).toFixed(3));
  const { status, statusText, body } = await post(connection, 'api/v1/query', form.toString());
  let answer: unknown;
  try {
    answer = JSON.parse(body);
  } catch (error) {
    throw new PrometheusQueryError(
      status === 200 ? 'bad answer' : 'status',
      `answered HTTP ${status} ${statusText}${status === 200 ? ' with a body that is not JSON' : ''}`,
      status,
      { cause: error },
    );
  }
  const reply = answer as {
    status?: string;
    errorType?: string;
    error?: string;
    data?: { resultType?: string; result?: unknown };
  };
  if (reply.status !== 'success') {
    // Quoted as a JSON string: the server's text stays on one line and its controls inert.
    const text = `${reply.errorType ?? 'error'}: ${JSON.stringify(reply.error ?? '')}`;
    // 400 bad_data: the query does not parse or is no range vector; 422: it cannot run.
    const failure = status === 400 || status === 422 ? 'bad query' : 'status';
    throw new PrometheusQueryError(
      failure,
      failure === 'bad query'
        ? `is refused by Prometheus (${text})`
        : `answered HTTP ${status} ${statusText} (${text})`,
      status,
    );
  }
  if (status !== 200) {
    throw new PrometheusQueryError('status', `answered HTTP ${status} ${statusText}`, status);
  }
  if (reply.data?.resultType !== 'matrix' || !Array.isArray(reply.data.result)) {
    throw new PrometheusQueryError(
      'bad answer',
      `answered a ${String(reply.data?.resultType)} where a matrix of raw samples was asked for`,
      status,
    );
  }
  return decodeMatrix(reply.data.result);
}

/** The series of a matrix result; samples as epoch ms and numbers. O(samples). */
export function decodeMatrix(result: readonly unknown[]): CounterSeries[] {
  const series: CounterSeries[] = new Array(result.length);
  for (let at = 0; at < result.length; at++) {
    const entry = result[at] as { metric?: Record<string, string>; values?: [number, string][] };
    const samples = entry.values ?? [];
    const timestamps = new Array<number>(samples.length);
    const values = new Array<number>(samples.length);
    for (let sample = 0; sample < samples.length; sample++) {
      timestamps[sample] = Math.round(samples[sample][0] * 1000);
      values[sample] = Number(samples[sample][1]);
    }
    series[at] = { labels: entry.metric ?? {}, timestamps, values };
  }
  return series;
}

function post(
  connection: PrometheusConnection,
  path: string,
  form: string,
): Promise<{ status: number; statusText: string; body: string }> {
  const base = connection.url.endsWith('/') ? connection.url : `${connection.url}/`;
  const url = new URL(path, base);
  const headers: Record<string, string> = {
    'content-type': 'application/x-www-form-urlencoded',
    'content-length': String(Buffer.byteLength(form)),
    accept: 'application/json',
  };
  const auth = connection.auth;
  if (auth?.kind === 'bearer') headers.authorization = `Bearer ${auth.token.reveal()}`;
  else if (auth?.kind === 'basic') {
    const pair = `${auth.user}:${auth.password.reveal()}`;
    headers.authorization = `Basic ${Buffer.from(pair).toString('base64')}`;
  }
  const send = url.protocol === 'https:' ? httpsRequest : httpRequest;
  const timeoutMs = connection.timeoutMs ?? 30_000;
  return new Promise((resolve, reject) => {
    const unreachable = (error: Error) =>
      reject(
        new PrometheusQueryError('unreachable', `cannot be reached (${error.message})`, undefined, {
          cause: error,
        }),
      );
    const call = send(
      url,
      {
        method: 'POST',
        headers,
        ...(connection.ca === undefined ? {} : { ca: connection.ca }),
      },
      (response: IncomingMessage) => {
        const chunks: Buffer[] = [];
        response.on('data', (chunk: Buffer) => chunks.push(chunk));
        response.on('error', unreachable);
        response.on('end', () =>
          resolve({
            status: response.statusCode ?? 0,
            statusText: response.statusMessage ?? '',
            body: Buffer.concat(chunks).toString('utf8'),
          }),
        );
      },
    );
    call.setTimeout(timeoutMs, () =>
      call.destroy(new Error(`no answer within ${Math.round(timeoutMs / 1000)} s`)),
    );
    call.on('error', unreachable);
    call.end(form);
  });
}
