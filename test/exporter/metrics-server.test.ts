import { request } from 'node:http';
import { createServer } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import { MetricsServer, type MetricsSource } from '../../src/exporter/metrics-server.js';
import type { Readiness } from '../../src/exporter/readiness.js';
import { UsageError } from '../../src/errors/usage-error.js';

const started: MetricsServer[] = [];
afterEach(async () => {
  for (const server of started.splice(0)) await server.close();
});

function source(state: Readiness = { ready: true, reasons: ['ready'] }): MetricsSource {
  return {
    metrics: async () => '# HELP x_total a test\n# TYPE x_total counter\nx_total 3\n',
    contentType: 'text/plain; version=0.0.4; charset=utf-8',
    readiness: () => state,
  };
}

async function start(metricsSource = source(), port = 0): Promise<MetricsServer> {
  const server = await MetricsServer.start({ host: '127.0.0.1', port, source: metricsSource });
  started.push(server);
  return server;
}

function fetchText(
  server: MetricsServer,
  path: string,
  method = 'GET',
): Promise<{ status: number; type: string; body: string }> {
  return new Promise((resolve, reject) => {
    const call = request(
      { host: server.host, port: server.port, path, method, agent: false },
      (response) => {
        let body = '';
        response.setEncoding('utf8');
        response.on('data', (chunk: string) => (body += chunk));
        response.on('end', () =>
          resolve({
            status: response.statusCode ?? 0,
            type: String(response.headers['content-type']),
            body,
          }),
        );
      },
    );
    call.on('error', reject);
    call.end();
  });
}

describe('MetricsServer', () => {
  it('binds an ephemeral port on loopback when asked for port 0', async () => {
    const server = await start();
    expect(server.host).toBe('127.0.0.1');
    expect(server.port).toBeGreaterThan(0);
    expect(server.url).toBe(`http://127.0.0.1:${server.port}/metrics`);
  });

  it('serves the metrics text with its content type', async () => {
    const server = await start();
    const answer = await fetchText(server, '/metrics');
    expect(answer).toEqual({
      status: 200,
      type: 'text/plain; version=0.0.4; charset=utf-8',
      body: '# HELP x_total a test\n# TYPE x_total counter\nx_total 3\n',
    });
    // A query string (some scrapers add one) changes nothing.
    expect((await fetchText(server, '/metrics?name[]=x')).status).toBe(200);
    expect(await fetchText(server, '/metrics', 'HEAD')).toMatchObject({ status: 200, body: '' });
  });

  it('answers /healthz while up and /readyz by the readiness, 503 with reasons when not', async () => {
    const ready = await start();
    expect(await fetchText(ready, '/healthz')).toMatchObject({ status: 200, body: 'ok\n' });
    expect(await fetchText(ready, '/readyz')).toMatchObject({ status: 200, body: 'ready\n' });
    const notReady = await start(
      source({ ready: false, reasons: ['source: stalled', 'windows: none closed yet'] }),
    );
    expect(await fetchText(notReady, '/healthz')).toMatchObject({ status: 200 });
    expect(await fetchText(notReady, '/readyz')).toMatchObject({
      status: 503,
      body: 'source: stalled\nwindows: none closed yet\n',
    });
  });

  it('serves nothing else', async () => {
    const server = await start();
    expect((await fetchText(server, '/')).status).toBe(404);
    expect((await fetchText(server, '/metrics/../etc/passwd')).status).toBe(404);
    expect((await fetchText(server, '/metrics', 'POST')).status).toBe(405);
    expect((await fetchText(server, '/metrics', 'DELETE')).status).toBe(405);
  });

  it('shares one render among concurrent scrapes, and renders again for a later one', async () => {
    let renders = 0;
    const server = await start({
      ...source(),
      metrics: async () => {
        renders++;
        await new Promise((resolve) => setTimeout(resolve, 100));
        return `x_total ${renders}\n`;
      },
    });
    const answers = await Promise.all(
      Array.from({ length: 5 }, () => fetchText(server, '/metrics')),
    );
    expect(answers.map((answer) => answer.body)).toEqual(Array(5).fill('x_total 1\n'));
    expect(renders).toBe(1);
    expect((await fetchText(server, '/metrics')).body).toBe('x_total 2\n');
  });

  it('answers 500 when the metrics cannot be produced', async () => {
    const server = await start({
      ...source(),
      metrics: async () => {
        throw new Error('collector failed');
      },
    });
    expect(await fetchText(server, '/metrics')).toMatchObject({
      status: 500,
      body: 'cannot produce /metrics: collector failed\n',
    });
  });

  it('reports a port in use as a UsageError on --metrics-port', async () => {
    const holder = createServer();
    await new Promise<void>((resolve) => holder.listen(0, '127.0.0.1', resolve));
    const port = (holder.address() as { port: number }).port;
    try {
      const error = await start(source(), port).catch((caught: unknown) => caught);
      expect(error).toBeInstanceOf(UsageError);
      expect((error as UsageError).option).toBe('--metrics-port');
      expect((error as Error).message).toBe(
        `--metrics-port: "${port}" is in use on 127.0.0.1 (choose another port, or 0 for any free one)`,
      );
    } finally {
      await new Promise((resolve) => holder.close(resolve));
    }
  });

  it('reports an address of another machine as a UsageError on --metrics-host', async () => {
    // 192.0.2.1 is TEST-NET-1 (RFC 5737): never assigned to a local interface.
    const error = await MetricsServer.start({ host: '192.0.2.1', port: 0, source: source() }).catch(
      (caught: unknown) => caught,
    );
    expect(error).toBeInstanceOf(UsageError);
    expect((error as UsageError).option).toBe('--metrics-host');
    expect((error as Error).message).toBe(
      '--metrics-host: "192.0.2.1" is not an address of this machine (EADDRNOTAVAIL)',
    );
  });

  it('stops listening when closed', async () => {
    const server = await MetricsServer.start({ host: '127.0.0.1', port: 0, source: source() });
    await server.close();
    await expect(fetchText(server, '/healthz')).rejects.toThrow(/ECONNREFUSED/);
  });
});
