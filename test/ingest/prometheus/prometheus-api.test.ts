// The HTTP side of the Prometheus source against a loopback node:http server that plays
// the server's part. Sources of truth: the credentials' header forms of RFC 6750 (section
// 2.1, `Authorization: Bearer TOKEN`) and RFC 7617 (section 2, `Basic` and the base64 of
// user:password); the query API's request and answer shapes (`POST /api/v1/query` with a
// form body, `{"status":"success","data":{"resultType":"matrix","result":[...]}}`, errors
// as `{"status":"error","errorType":"bad_data","error":...}` with HTTP 400), Prometheus
// documentation, from memory. The real server is exercised in
// test/e2e/prometheus-source.test.ts.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { createServer, type IncomingMessage, type Server } from 'node:http';
import { createServer as createTlsServer } from 'node:https';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { SecretText } from '../../../src/ingest/kafka/connection.js';
import {
  PrometheusQueryError,
  readRangeVector,
} from '../../../src/ingest/prometheus/prometheus-api.js';
import { PrometheusSource } from '../../../src/ingest/prometheus/prometheus-source.js';
import { UsageError } from '../../../src/errors/usage-error.js';

interface Seen {
  method: string;
  url: string;
  authorization: string | undefined;
  form: URLSearchParams;
}

const seen: Seen[] = [];
let server: Server;
let base = '';

function body(request: IncomingMessage): Promise<string> {
  return new Promise((resolve) => {
    let text = '';
    request.on('data', (chunk: Buffer) => (text += chunk.toString()));
    request.on('end', () => resolve(text));
  });
}

beforeAll(async () => {
  server = createServer(async (request, response) => {
    const form = new URLSearchParams(await body(request));
    seen.push({
      method: request.method ?? '',
      url: request.url ?? '',
      authorization: request.headers.authorization,
      form,
    });
    const query = form.get('query') ?? '';
    if (request.url === '/locked/api/v1/query' && request.headers.authorization === undefined) {
      response.writeHead(401, 'Unauthorized', { 'content-type': 'text/plain' });
      response.end('Unauthorized\n');
      return;
    }
    if (query.startsWith('bad{')) {
      response.writeHead(400, { 'content-type': 'application/json' });
      response.end(
        JSON.stringify({
          status: 'error',
          errorType: 'bad_data',
          error: '1:5: parse error: unexpected "}" in label matching\u001b[2J',
        }),
      );
      return;
    }
    response.writeHead(200, { 'content-type': 'application/json' });
    response.end(
      JSON.stringify({
        status: 'success',
        data: {
          resultType: 'matrix',
          result: [
            {
              metric: { __name__: 'requests_total', shard: 's-1' },
              values: [
                [1764590400, '10'],
                [1764590401.5, '25'],
              ],
            },
          ],
        },
      }),
    );
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  base = `http://127.0.0.1:${(server.address() as { port: number }).port}`;
});

afterAll(async () => {
  await new Promise((resolve) => server.close(resolve));
});

describe('readRangeVector', () => {
  it('posts the range-vector query as a form and decodes the matrix to ms and numbers', async () => {
    const read = await readRangeVector(
      { url: base },
      'requests_total{job="x"}',
      60_000,
      1_764_590_402_000,
    );
    const request = seen.at(-1)!;
    expect(request.method).toBe('POST');
    expect(request.url).toBe('/api/v1/query');
    expect(request.form.get('query')).toBe('requests_total{job="x"}[60000ms]');
    expect(request.form.get('time')).toBe('1764590402.000');
    expect(read).toEqual([
      {
        labels: { __name__: 'requests_total', shard: 's-1' },
        timestamps: [1_764_590_400_000, 1_764_590_401_500],
        values: [10, 25],
      },
    ]);
  });

  it('sends a bearer token and basic credentials in the RFC 6750 and RFC 7617 forms', async () => {
    await readRangeVector(
      { url: `${base}/locked`, auth: { kind: 'bearer', token: new SecretText('t0ken') } },
      'x',
      1000,
    );
    expect(seen.at(-1)!.authorization).toBe('Bearer t0ken');
    await readRangeVector(
      {
        url: `${base}/locked/`,
        auth: { kind: 'basic', user: 'Aladdin', password: new SecretText('open sesame') },
      },
      'x',
      1000,
    );
    // RFC 7617 section 2's own example.
    expect(seen.at(-1)!.authorization).toBe('Basic QWxhZGRpbjpvcGVuIHNlc2FtZQ==');
    expect(seen.at(-1)!.url).toBe('/locked/api/v1/query');
  });

  it('names what failed: the HTTP status, a refused query, an unreachable server', async () => {
    await expect(readRangeVector({ url: `${base}/locked` }, 'x', 1000)).rejects.toMatchObject({
      failure: 'status',
      status: 401,
      message: 'answered HTTP 401 Unauthorized',
    });
    await expect(readRangeVector({ url: base }, 'bad{', 1000)).rejects.toMatchObject({
      failure: 'bad query',
      status: 400,
    });
    // A port nothing listens on: the server's own port once it is closed is not at hand,
    // so port 1 (tcpmux), which nothing on a test machine serves.
    const refused = readRangeVector({ url: 'http://127.0.0.1:1' }, 'x', 1000);
    await expect(refused).rejects.toBeInstanceOf(PrometheusQueryError);
    await expect(refused).rejects.toMatchObject({ failure: 'unreachable' });
  });
});

describe('PrometheusSource errors at open', () => {
  const windows = { windowMs: 10_000, hopMs: 10_000 };

  it('a refused selector is a usage error naming --series, with the server text quoted', async () => {
    const source = new PrometheusSource({
      connection: { url: base },
      selector: 'bad{',
      shardLabel: 'shard',
      windows,
      range: { sinceMs: 1_764_590_400_000, untilMs: 1_764_590_460_000 },
    });
    const error = await source.open().then(
      () => null,
      (failure: unknown) => failure,
    );
    expect(error).toBeInstanceOf(UsageError);
    expect((error as UsageError).option).toBe('--series');
    // The server's text arrives quoted as a JSON string: its escape sequence stays inert.
    expect((error as Error).message).toBe(
      '--series: "bad{" is refused by Prometheus (bad_data: "1:5: parse error: unexpected \\"}\\" in label matching\\u001b[2J")',
    );
  });

  it('an unreachable server fails naming --prometheus and the URL', async () => {
    const source = new PrometheusSource({
      connection: { url: 'http://127.0.0.1:1' },
      selector: 'x',
      shardLabel: 'shard',
      windows,
    });
    await expect(source.open()).rejects.toThrow(
      /^--prometheus "http:\/\/127\.0\.0\.1:1" cannot be reached \(connect ECONNREFUSED/,
    );
  });
});

describe('--prometheus-ca', () => {
  it('trusts a server certificate signed by the given authority, and refuses it without', async () => {
    // A self-signed certificate for 127.0.0.1 made by openssl (as the Kafka TLS test makes
    // its own); TLS clients refuse a chain they cannot verify (RFC 5280 path validation).
    const dir = mkdtempSync(join(tmpdir(), 'shardwise-prometheus-tls-'));
    try {
      execFileSync(
        'openssl',
        [
          'req',
          '-x509',
          '-newkey',
          'ec',
          '-pkeyopt',
          'ec_paramgen_curve:P-256',
          '-nodes',
          '-keyout',
          'key.pem',
          '-out',
          'cert.pem',
          '-days',
          '1',
          '-subj',
          '/CN=127.0.0.1',
          '-addext',
          'subjectAltName=IP:127.0.0.1',
        ],
        { cwd: dir, stdio: 'ignore' },
      );
      const cert = readFileSync(join(dir, 'cert.pem'), 'utf8');
      const tls = createTlsServer(
        { cert, key: readFileSync(join(dir, 'key.pem'), 'utf8') },
        (_request, response) => {
          response.writeHead(200, { 'content-type': 'application/json' });
          response.end('{"status":"success","data":{"resultType":"matrix","result":[]}}');
        },
      );
      await new Promise<void>((resolve) => tls.listen(0, '127.0.0.1', resolve));
      const url = `https://127.0.0.1:${(tls.address() as { port: number }).port}`;
      try {
        expect(await readRangeVector({ url, ca: cert }, 'x', 1000)).toEqual([]);
        await expect(readRangeVector({ url }, 'x', 1000)).rejects.toMatchObject({
          failure: 'unreachable',
        });
      } finally {
        await new Promise((resolve) => tls.close(resolve));
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
