// `watch --prometheus` and `review --prometheus` against a real Prometheus server (Debian's
// /usr/bin/prometheus on 127.0.0.1, temporary data directory, 1 s scrapes) scraping three
// exporter instances written here (node:http, text exposition format). Request counters
// per shard: s-3 carries 3x the traffic of the others, instance C restarts its counters
// mid-run (a counter reset), instance B stops answering mid-run (no more scrapes).
//
// Sources of truth:
// - the expected per-window totals are computed from the samples Prometheus itself stored,
//   read back raw through its HTTP API (`/api/v1/query` of a range vector returns the stored
//   samples unextrapolated), with the counter rule of the Prometheus documentation, from
//   memory: a counter only rises, a drop is a reset after which it counts from zero, so the
//   rise across a reset is the new value; a series' first sample has no rise of its own;
// - the number of resets is Prometheus's own `resets()` over the same samples;
// - the instance that stops is told by Prometheus's own `up` series and its stored samples.
import { execFile } from 'node:child_process';
import { createServer, type Server } from 'node:http';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { afterAll, describe, expect, it } from 'vitest';
import {
  repositoryRoot,
  requirePrometheus,
  sleep,
  startPrometheus,
  startWatch,
  type Child,
} from './prometheus-fixtures.js';

const run = promisify(execFile);
const shards = Array.from({ length: 8 }, (_, shard) => `s-${shard}`);
const hotShard = 's-3';
const selector = 'cache_requests_total{job="seat-cache"}';

const dir = mkdtempSync(join(tmpdir(), 'shardwise-prometheus-source-'));
const children: Child[] = [];
const exporters: Exporter[] = [];

afterAll(async () => {
  for (const child of children.splice(0).reverse()) await child.stop();
  for (const exporter of exporters.splice(0)) await exporter.stop();
  rmSync(dir, { recursive: true, force: true });
});

/** One instance of the cache: request counters per shard and status, served as text. */
class Exporter {
  readonly counters = new Map<string, number>();
  private readonly server: Server;
  private readonly timer: NodeJS.Timeout;
  private seed: number;
  port = 0;

  constructor(seed: number, withUnlabelled: boolean) {
    this.seed = seed;
    for (const shard of shards) this.counters.set(`shard="${shard}",status="200"`, 0);
    this.counters.set('shard="s-0",status="500"', 0);
    // A series without the shard label: its records are rejected as "missing shard".
    if (withUnlabelled) this.counters.set('status="200"', 0);
    this.timer = setInterval(() => this.serve(), 100);
    this.server = createServer((request, response) => {
      if (request.url !== '/metrics') {
        response.writeHead(404).end();
        return;
      }
      const lines = [
        '# HELP cache_requests_total Requests served.',
        '# TYPE cache_requests_total counter',
      ];
      for (const [labels, value] of this.counters)
        lines.push(`cache_requests_total{${labels}} ${value}`);
      response.writeHead(200, { 'content-type': 'text/plain; version=0.0.4' });
      response.end(lines.join('\n') + '\n');
    });
  }

  async start(): Promise<void> {
    await new Promise<void>((resolve) => this.server.listen(0, '127.0.0.1', resolve));
    this.port = (this.server.address() as { port: number }).port;
  }

  /** 100 ms of traffic: 4 to 6 requests per shard, three times that on the hot shard. */
  private serve(): void {
    for (const [labels, value] of this.counters) {
      this.seed = (this.seed * 1103515245 + 12345) % 2147483648;
      const base = 4 + (this.seed % 3);
      const add = labels.includes(`"${hotShard}"`) ? 3 * base : labels.includes('500') ? 1 : base;
      this.counters.set(labels, value + add);
    }
  }

  /** The process restarts: every counter starts again from zero. */
  reset(): void {
    for (const labels of this.counters.keys()) this.counters.set(labels, 0);
  }

  /** Stops answering: Prometheus's scrapes of it fail from now on. */
  async stop(): Promise<void> {
    clearInterval(this.timer);
    if (!this.server.listening) return;
    this.server.closeAllConnections();
    await new Promise((resolve) => this.server.close(resolve));
  }
}

interface Matrix {
  metric: Record<string, string>;
  values: [number, string][];
}

async function api<T>(url: string, params: Record<string, string>): Promise<T> {
  const response = await fetch(`${url}/api/v1/query?${new URLSearchParams(params).toString()}`);
  const body = (await response.json()) as { status: string; data: { result: T } };
  expect(body.status).toBe('success');
  return body.data.result;
}

/** Rises between consecutive stored samples, per shard, at the later sample's time. */
function rises(matrix: readonly Matrix[]): { ts: number; shard: string; count: number }[] {
  const out: { ts: number; shard: string; count: number }[] = [];
  for (const series of matrix) {
    const shard = series.metric.shard;
    if (shard === undefined) continue;
    for (let at = 1; at < series.values.length; at++) {
      const before = Number(series.values[at - 1][1]);
      const value = Number(series.values[at][1]);
      out.push({
        ts: Math.round(series.values[at][0] * 1000),
        shard,
        count: value < before ? value : value - before,
      });
    }
  }
  return out;
}

interface RecordedLine {
  window: { start: string; end: string };
  counts?: number[];
  shardIds?: string[];
  requests: number;
  late: number;
  rejected: Record<string, number>;
  flagged: { shard: string; finding: string }[];
  opened: { shard: string; finding: string }[];
  coverage?: { series: number; missing: string[]; complete: boolean; resets: number };
}

describe('the Prometheus source on a real Prometheus server', () => {
  it('counts exactly what the counters rose, finds the hot shard live and in review, says the reset and marks the missing scrapes', async () => {
    requirePrometheus();
    const instances = [new Exporter(1, true), new Exporter(2, false), new Exporter(3, false)];
    exporters.push(...instances);
    for (const exporter of instances) await exporter.start();
    const [, b, c] = instances;
    const targets = instances.map((exporter) => `'127.0.0.1:${exporter.port}'`).join(', ');
    const prometheus = await startPrometheus(
      dir,
      [
        'global:',
        '  scrape_interval: 1s',
        '  evaluation_interval: 1s',
        'scrape_configs:',
        '  - job_name: seat-cache',
        '    static_configs:',
        `      - targets: [${targets}]`,
        '',
      ].join('\n'),
    );
    children.push(prometheus.child);
    const url = prometheus.url;
    // Until every target has been scraped a few times.
    for (let tries = 0; ; tries++) {
      const up = await api<{ value: [number, string] }[]>(url, {
        query: 'count_over_time(up{job="seat-cache"}[1m]) >= 3',
      });
      if (up.length === 3) break;
      expect(tries).toBeLessThan(60);
      await sleep(500);
    }

    const recording = join(dir, 'watch.jsonl');
    const { child: watch } = await startWatch([
      '--prometheus',
      url,
      '--series',
      selector,
      '--shard-label',
      'shard',
      '--window',
      '2s',
      '--record',
      recording,
    ]);
    children.push(watch);
    await watch.stderrMatch(/series match/, 30_000);
    await sleep(6000);
    c.reset();
    await sleep(6000);
    await b.stop();
    const bStoppedAt = Date.now();
    await sleep(22_000);
    expect(await watch.stop()).toBe(0);

    // What Prometheus stored, read back raw.
    const matrix = await api<Matrix[]>(url, { query: `${selector}[5m]` });
    expect(matrix.length).toBe(3 * 9 + 1);
    const expected = rises(matrix);

    const lines = readFileSync(recording, 'utf8')
      .trim()
      .split('\n')
      .map((line) => JSON.parse(line) as RecordedLine);
    expect(lines.length).toBeGreaterThanOrEqual(10);
    let ids: string[] = [];
    let resetsSaid = 0;
    const bSeries = matrix
      .filter((series) => series.metric.instance === `127.0.0.1:${b.port}`)
      .map((series) => series.metric);
    const bLast = Math.max(
      ...matrix
        .filter((series) => series.metric.instance === `127.0.0.1:${b.port}`)
        .map((series) => Math.round(series.values.at(-1)![0] * 1000)),
    );
    // B's last stored sample is from before it stopped (Prometheus's own record).
    expect(bLast).toBeLessThanOrEqual(bStoppedAt);
    let markedAfterStop = 0;
    for (const line of lines) {
      if (line.shardIds !== undefined) ids = line.shardIds;
      const start = Date.parse(line.window.start);
      const end = Date.parse(line.window.end);
      const want = new Map<string, number>();
      for (const rise of expected) {
        if (rise.ts >= start && rise.ts < end) {
          want.set(rise.shard, (want.get(rise.shard) ?? 0) + rise.count);
        }
      }
      const got = new Map<string, number>();
      line.counts!.forEach((count, shard) => {
        if (count > 0) got.set(ids[shard], count);
      });
      // Exactly the counters' own rise in the window, shard by shard.
      expect(Object.fromEntries(got), line.window.start).toEqual(
        Object.fromEntries([...want].filter(([, count]) => count > 0)),
      );
      expect(line.late).toBe(0);
      expect(Object.keys(line.rejected).filter((reason) => reason !== 'missing shard')).toEqual([]);
      resetsSaid += line.coverage?.resets ?? 0;
      if (start >= bLast) {
        // Every series of B is listed as missing from windows after its last sample.
        expect(line.coverage?.complete, line.window.start).toBe(false);
        expect(line.coverage!.missing.length).toBe(bSeries.length);
        for (const missing of line.coverage!.missing) {
          expect(missing).toContain(`instance="127.0.0.1:${b.port}"`);
        }
        markedAfterStop++;
      } else if (end <= bLast) {
        expect(line.coverage?.complete ?? true, line.window.start).toBe(true);
      }
    }
    expect(markedAfterStop).toBeGreaterThanOrEqual(3);
    // The unlabelled series of A was rejected, never counted.
    expect(lines.some((line) => (line.rejected['missing shard'] ?? 0) > 0)).toBe(true);
    // No count is negative or out of scale: each window's total is at most what the three
    // instances can serve in 2 s (20 ticks x 9 series x at most 18 requests each).
    for (const line of lines) {
      expect(line.requests).toBeGreaterThan(0);
      expect(line.requests).toBeLessThan(3 * 20 * 9 * 18);
    }
    // The reset: as many as Prometheus's own resets() finds, all of them C's.
    const resets = await api<{ metric: Record<string, string>; value: [number, string] }[]>(url, {
      query: `resets(${selector}[5m]) > 0`,
    });
    expect(resets.every((series) => series.metric.instance === `127.0.0.1:${c.port}`)).toBe(true);
    expect(resets.length).toBe(9);
    expect(resetsSaid).toBe(resets.reduce((sum, series) => sum + Number(series.value[1]), 0));
    expect(watch.stderr).toMatch(/9 counter resets/);
    expect(watch.stderr).toMatch(/judged incomplete: 9 of 28 series not scraped/);
    // The hot shard, live: flagged, and an incident opened on it.
    expect(
      lines.filter((line) =>
        line.flagged.some((f) => f.shard === hotShard && f.finding === 'hotspot'),
      ).length,
    ).toBeGreaterThanOrEqual(lines.length - 1);
    expect(watch.stderr).toMatch(new RegExp(`hotspot on ${hotShard} since`));

    // The review of the same span, read from Prometheus again.
    const since = Date.parse(lines[0].window.start);
    const until = Date.parse(lines.at(-1)!.window.end);
    const { stdout, stderr } = await run(
      process.execPath,
      [
        '--import',
        'tsx',
        'src/cli/main.ts',
        'review',
        '--prometheus',
        url,
        '--series',
        selector,
        '--shard-label',
        'shard',
        '--since',
        String(since),
        '--until',
        String(until),
        '--window',
        '2s',
        '--markdown',
        '-',
      ],
      { cwd: repositoryRoot },
    );
    const total = expected
      .filter((rise) => rise.ts >= since && rise.ts < until)
      .reduce((sum, rise) => sum + rise.count, 0);
    expect(stdout).toContain(`- **requests**: ${total.toLocaleString('en-US')}`);
    expect(stdout).toMatch(new RegExp(`\\| hotspot \\| ${hotShard} \\|`));
    expect(stdout).toMatch(/9 counter resets/);
    expect(stdout).toMatch(
      // Quotes stay as written in the Markdown (only what could open HTML is escaped).
      new RegExp(`series not scraped[^\\n]*instance="127\\.0\\.0\\.1:${b.port}"`),
    );
    expect(stderr).toMatch(/episodes/);
  });

  it('fails at start naming the option: a selector Prometheus refuses (its own text), an unreachable server', async () => {
    const own = mkdtempSync(join(tmpdir(), 'shardwise-prometheus-errors-'));
    const prometheus = await startPrometheus(own, 'scrape_configs: []\n');
    children.push(prometheus.child);
    const cli = async (args: string[]) =>
      run(process.execPath, ['--import', 'tsx', 'src/cli/main.ts', ...args], {
        cwd: repositoryRoot,
      }).then(
        ({ stderr }) => ({ code: 0, stderr }),
        (error: { code: number; stderr: string }) => ({ code: error.code, stderr: error.stderr }),
      );
    try {
      // A parse error and a range of something that is no series selector: HTTP 400,
      // errorType bad_data (Prometheus documentation, from memory).
      for (const bad of ['cache_requests_total{job=}', 'rate(cache_requests_total[5m])']) {
        const watch = await cli([
          'watch',
          '--prometheus',
          prometheus.url,
          '--series',
          bad,
          '--shard-label',
          'shard',
          '--no-ui',
          '--no-metrics',
        ]);
        expect(watch.code).toBe(2);
        expect(watch.stderr).toContain(
          `shardwise watch: --series: ${JSON.stringify(bad)} is refused by Prometheus (bad_data: "`,
        );
      }
      const review = await cli([
        'review',
        '--prometheus',
        'http://127.0.0.1:1',
        '--series',
        selector,
        '--shard-label',
        'shard',
        '--since',
        '2025-12-01T14:00:00Z',
        '--until',
        '2025-12-01T15:00:00Z',
      ]);
      expect(review.code).toBe(1);
      expect(review.stderr).toMatch(
        /^shardwise review: --prometheus "http:\/\/127\.0\.0\.1:1" cannot be reached \(connect ECONNREFUSED/,
      );
    } finally {
      await prometheus.child.stop();
      rmSync(own, { recursive: true, force: true });
    }
  });
});
