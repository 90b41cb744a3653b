// One window of the Prometheus source at 1e4 series: the query over HTTP, the JSON decode
// and the increments (CounterLedger.add and release), as `watch --prometheus` does it per
// poll. A local node:http server answers /api/v1/query with a matrix of 1e4 counter series
// (labels job, instance, shard, status as a typical exporter has them; 1 s scrapes, one
// 10 s window plus its margin: 16 samples per series), in the answer shape of the
// Prometheus HTTP API (Prometheus documentation, from memory). Target: under 1 s.
// Run: npx tsx bench/prometheus-source.bench.ts [series, default 10000] [rounds, default 10]
import { createServer } from 'node:http';
import { CounterLedger } from '../src/ingest/prometheus/counter-ledger.js';
import { readRangeVector } from '../src/ingest/prometheus/prometheus-api.js';

const seriesCount = Number(process.argv[2] ?? 10_000);
const rounds = Number(process.argv[3] ?? 10);
if (!Number.isSafeInteger(seriesCount) || seriesCount < 1 || !Number.isSafeInteger(rounds)) {
  throw new Error('usage: prometheus-source.bench.ts [series] [rounds]');
}
const samplesPerSeries = 16;
const windowMs = 10_000;
const startMs = 1_764_590_400_000;

/** The answer of round `round`: every series advanced by one window. */
function answer(round: number): string {
  const result = [];
  for (let series = 0; series < seriesCount; series++) {
    const values: [number, string][] = [];
    for (let sample = 0; sample < samplesPerSeries; sample++) {
      const ts = startMs + round * windowMs + (sample - 6) * 1000 + (series % 1000);
      values.push([ts / 1000, String((round * 10 + sample) * ((series % 7) + 1) * 3)]);
    }
    result.push({
      metric: {
        __name__: 'cache_requests_total',
        job: 'seat-cache',
        instance: `cache-${series % 40}.seat.svc:9100`,
        shard: `s-${Math.floor(series / 40) % 1024}`,
        status: series % 3 === 0 ? '500' : '200',
        route: `/r/${Math.floor(series / 40960)}`,
      },
      values,
    });
  }
  return JSON.stringify({ status: 'success', data: { resultType: 'matrix', result } });
}

const bodies = Array.from({ length: rounds + 2 }, (_, round) => answer(round));
let served = 0;
const server = createServer((request, response) => {
  request.resume();
  request.on('end', () => {
    response.writeHead(200, { 'content-type': 'application/json' });
    response.end(bodies[served++ % bodies.length]);
  });
});
await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
const url = `http://127.0.0.1:${(server.address() as { port: number }).port}`;

const ledger = new CounterLedger('shard');
const times: number[] = [];
const cpuTimes: number[] = [];
let records = 0;
for (let round = 0; round < rounds + 2; round++) {
  const started = performance.now();
  const cpu = process.cpuUsage();
  const read = await readRangeVector({ url }, 'cache_requests_total{job="seat-cache"}', 16_000);
  ledger.add(read);
  records += ledger.release(ledger.scrapedThrough()).length;
  const elapsed = performance.now() - started;
  const used = process.cpuUsage(cpu);
  // The first two rounds warm up (the first also only sets baselines).
  if (round >= 2) {
    times.push(elapsed);
    // This process's CPU (both threads of the answer: server and client run here too).
    cpuTimes.push((used.user + used.system) / 1000);
  }
}
server.close();
times.sort((a, b) => a - b);
cpuTimes.sort((a, b) => a - b);
const at = (list: number[], q: number) =>
  list[Math.min(list.length - 1, Math.floor(q * list.length))];
console.log(
  `| series | samples per query | answer MiB | wall median ms | wall p90 ms | CPU median ms | records per window | target |`,
);
console.log(`| --- | --- | --- | --- | --- | --- | --- | --- |`);
console.log(
  `| ${seriesCount} | ${seriesCount * samplesPerSeries} | ${(bodies[0].length / 2 ** 20).toFixed(1)} | ${at(times, 0.5).toFixed(0)} | ${at(times, 0.9).toFixed(0)} | ${at(cpuTimes, 0.5).toFixed(0)} | ${Math.round(records / (rounds + 1))} | < 1000 ms |`,
);
