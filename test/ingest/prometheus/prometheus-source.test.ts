import { createServer, type Server } from 'node:http';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { SourceItem } from '../../../src/ingest/file-source.js';
import { PrometheusSource } from '../../../src/ingest/prometheus/prometheus-source.js';

// A loopback node:http server playing Prometheus's part: it stores the literal samples
// below and answers `POST /api/v1/query` with `query=SELECTOR[RANGEms]` and `time` by the
// samples stored in (time - range, time], as a matrix with timestamps in seconds and values
// as strings (Prometheus documentation, "HTTP API": instant queries, range vectors, the
// matrix result format; prometheus.io). Expected records: each increment between
// consecutive samples, stamped at the later one; a drop is a counter reset whose increment
// is the new value, as Prometheus's increase() counts it (same documentation, "Functions").
// Worked out by hand.

const base = Date.parse('2026-03-01T00:00:00Z');
const s = (seconds: number) => base + seconds * 1000;

const stored = [
  {
    metric: { __name__: 'requests_total', job: 'cache', shard: 's-1' },
    samples: [0, 5, 12, 12, 3, 10, 15],
  },
  {
    metric: { __name__: 'requests_total', job: 'cache', shard: 's-2' },
    samples: [100, 100, 101, 110, 120, 120, 200],
  },
].map(({ metric, samples }) => ({
  metric,
  samples: samples.map((value, at) => [s(at * 10), value] as const),
}));

let server: Server;
let url = '';
const queries: string[] = [];
/** The server's clock when a query gives no time (a live read), epoch ms. */
let serverNow = 0;

beforeAll(async () => {
  server = createServer((request, response) => {
    let text = '';
    request.on('data', (chunk: Buffer) => (text += chunk.toString()));
    request.on('end', () => {
      const form = new URLSearchParams(text);
      const query = form.get('query') ?? '';
      queries.push(query);
      const match = /^requests_total\{job="cache"\}\[(\d+)ms\]$/.exec(query);
      if (request.url !== '/api/v1/query' || match === null) {
        response.writeHead(400, { 'content-type': 'application/json' });
        response.end(JSON.stringify({ status: 'error', errorType: 'bad_data', error: 'no' }));
        return;
      }
      const time = form.has('time') ? Math.round(Number(form.get('time')) * 1000) : serverNow;
      const range = Number(match[1]);
      const result = stored.map(({ metric, samples }) => ({
        metric,
        values: samples
          .filter(([ts]) => ts > time - range && ts <= time)
          .map(([ts, value]) => [ts / 1000, String(value)]),
      }));
      response.writeHead(200, { 'content-type': 'application/json' });
      response.end(
        JSON.stringify({
          status: 'success',
          data: { resultType: 'matrix', result: result.filter((r) => r.values.length > 0) },
        }),
      );
    });
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  url = `http://127.0.0.1:${(server.address() as { port: number }).port}`;
});

afterAll(async () => {
  await new Promise((resolve) => server.close(resolve));
});

async function all(source: PrometheusSource): Promise<SourceItem[]> {
  const items: SourceItem[] = [];
  for await (const batch of source.batches()) items.push(...batch);
  return items;
}

describe('PrometheusSource over a range (review)', () => {
  it('gives the counters’ increments in [since, until), samples before since as baselines', async () => {
    const progress: string[] = [];
    const notes: string[] = [];
    const source = new PrometheusSource({
      connection: { url },
      selector: 'requests_total{job="cache"}',
      shardLabel: 'shard',
      windows: { windowMs: 10_000, hopMs: 10_000 },
      range: { sinceMs: s(20), untilMs: s(60) },
      samplesPerQuery: 4,
      onProgress: (text) => progress.push(text),
      onNote: (text) => notes.push(text),
    });
    expect(source.live).toBe(false);
    expect(source.label).toBe(`prometheus ${url} requests_total{job="cache"}`);
    expect(await source.open()).toEqual({
      partitions: 1,
      backlogPartitions: [],
      judgedThrough: null,
    });
    const items = await all(source);
    expect(items).toEqual([
      { ts: s(20), shard: 's-1', count: 7, partition: 0 },
      { ts: s(20), shard: 's-2', count: 1, partition: 0 },
      { ts: s(30), shard: 's-2', count: 9, partition: 0 },
      { ts: s(40), shard: 's-1', count: 3, partition: 0 },
      { ts: s(40), shard: 's-2', count: 10, partition: 0 },
      { ts: s(50), shard: 's-1', count: 7, partition: 0 },
    ]);
    // The sample at 60 s is outside the range; 12 -> 12 and 120 -> 120 add nothing.
    expect(source.account).toEqual({ series: 2, resets: 1, gaps: 0 });
    expect(notes).toEqual([
      'prometheus: 1 counter reset (a value below the one before, counted from zero as Prometheus does)',
    ]);
    // Baseline: 5 minutes before since, at since - 1 ms; then chunks of 4 samples / 2
    // series x 10 s = 20 s: [20 s, 40 s) and [40 s, 60 s).
    expect(queries.slice(-3)).toEqual([
      'requests_total{job="cache"}[300000ms]',
      'requests_total{job="cache"}[20000ms]',
      'requests_total{job="cache"}[20000ms]',
    ]);
    expect(progress.at(-1)).toBe(
      'reading requests_total{job="cache"}: 2 queries, through 2026-03-01T00:01:00.000Z, 2 series',
    );
  });
});

describe('PrometheusSource live (watch)', () => {
  it('releases increments in time order through what every series was scraped to, polling a poll interval apart', async () => {
    serverNow = s(25);
    const notes: string[] = [];
    const source = new PrometheusSource({
      connection: { url },
      selector: 'requests_total{job="cache"}',
      shardLabel: 'shard',
      windows: { windowMs: 10_000, hopMs: 10_000 },
      onNote: (text) => notes.push(text),
      clock: () => serverNow,
    });
    expect(source.live).toBe(true);
    expect(source.pollMs).toBe(5_000);
    await source.open();
    // Opened at 25 s: the window open then starts at 20 s, so its samples count from there.
    // Hold-back: the poll (5 s) + 4 scrape intervals (10 s) + 1 s = 46 s.
    expect(notes).toEqual([
      'prometheus: 2 series match requests_total{job="cache"}, scraped every 10 s; verdicts trail the wall clock by about 46 s plus the lateness',
    ]);
    const batches: SourceItem[][] = [];
    serverNow = s(100);
    for await (const batch of source.batches()) {
      batches.push(batch);
      // First: what the opening read brought (the 20 s samples), released through
      // min(100 s - 46 s, scraped through 20 s). The next poll comes a poll interval of
      // the clock later: at 200 s it reads through 60 s and releases all of it.
      if (batches.length === 1) serverNow = s(200);
      else break;
    }
    expect(batches).toEqual([
      [
        { ts: s(20), shard: 's-1', count: 7, partition: 0 },
        { ts: s(20), shard: 's-2', count: 1, partition: 0 },
      ],
      [
        { ts: s(30), shard: 's-2', count: 9, partition: 0 },
        { ts: s(40), shard: 's-1', count: 3, partition: 0 },
        { ts: s(40), shard: 's-2', count: 10, partition: 0 },
        { ts: s(50), shard: 's-1', count: 7, partition: 0 },
        { ts: s(60), shard: 's-1', count: 5, partition: 0 },
        { ts: s(60), shard: 's-2', count: 80, partition: 0 },
      ],
    ]);
    await source.close();
  });
});
