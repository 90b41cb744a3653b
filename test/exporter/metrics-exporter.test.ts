import { request } from 'node:http';
import { describe, expect, it } from 'vitest';
import { startMetricsExporter } from '../../src/exporter/metrics-exporter.js';
import { UsageError } from '../../src/errors/usage-error.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { PipelineEvents } from '../../src/judge/pipeline-events.js';
import type { WindowTotals } from '../../src/window/event-time-window.js';
import { parseExposition, sampleOf } from './exposition.js';

// Source of truth: the endpoints documented in README.md ("/metrics", "/healthz" 200 `ok`,
// "/readyz" 503 with one line per reason until a record came and a window closed), the
// Prometheus text format 0.0.4 ("Exposition formats", prometheus.io; read by
// exposition.ts), and the literal totals of the fake pipeline below, by hand:
// accepted = records - (lateRecords - too late) = 5 - (1 - 1) = 5, late 1, rejected 2.

const totals: WindowTotals & { recordsSeen: number } = {
  records: 5,
  load: 40,
  late: 3,
  lateRecords: 1,
  rejected: { 'not JSON': 2, 'too late': 1 },
  windowsClosed: 0,
  quietWindowsSkipped: 0,
  gaps: [],
  gapCount: 0,
  lateByPartition: new Map([[0, 1]]),
  outOfOrderByPartition: new Map(),
  recordsSeen: 5,
};

function get(url: string): Promise<{ status: number; type: string; body: string }> {
  return new Promise((resolve, reject) => {
    const call = request(url, { agent: false }, (response) => {
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
    });
    call.on('error', reject);
    call.end();
  });
}

function options(events: PipelineEvents, port: number) {
  return {
    pipeline: { events, totals },
    settings: { ...defaultJudgeSettings, hopMs: 10_000 },
    windowMs: 10_000,
    latenessMs: 2_000,
    host: '127.0.0.1',
    port,
  };
}

describe('startMetricsExporter', () => {
  it('serves /metrics, /healthz and /readyz on the port it bound, and stops on close', async () => {
    const events = new PipelineEvents();
    const exporter = await startMetricsExporter(options(events, 0));
    expect(exporter.server.port).toBeGreaterThan(0);
    expect(exporter.url).toBe(`http://127.0.0.1:${exporter.server.port}/metrics`);
    expect(events.listens('window judged')).toBe(true);

    const metrics = await get(exporter.url);
    expect(metrics.status).toBe(200);
    expect(metrics.type).toBe('text/plain; version=0.0.4; charset=utf-8');
    const samples = parseExposition(metrics.body);
    expect(sampleOf(samples, 'shardwise_records_total', { outcome: 'accepted' }).value).toBe(5);
    expect(sampleOf(samples, 'shardwise_records_total', { outcome: 'late' }).value).toBe(1);
    expect(sampleOf(samples, 'shardwise_records_total', { outcome: 'rejected' }).value).toBe(2);

    const base = exporter.url.replace(/\/metrics$/, '');
    expect(await get(`${base}/healthz`)).toMatchObject({ status: 200, body: 'ok\n' });
    // Records came (5 counted, 3 rejected) but no window was judged yet.
    expect(await get(`${base}/readyz`)).toMatchObject({
      status: 503,
      body: 'windows: none closed yet\n',
    });

    await exporter.close();
    expect(events.listens('window judged')).toBe(false);
    await expect(get(exporter.url)).rejects.toThrow(/ECONNREFUSED/);
  });

  it('refuses a port in use with a UsageError naming it, and leaves the pipeline unheard', async () => {
    const first = await startMetricsExporter(options(new PipelineEvents(), 0));
    const events = new PipelineEvents();
    const port = first.server.port;
    const failed = startMetricsExporter(options(events, port));
    await expect(failed).rejects.toThrow(UsageError);
    await expect(failed).rejects.toThrow(`--metrics-port`);
    expect(events.listens('window judged')).toBe(false);
    await first.close();
  });
});
