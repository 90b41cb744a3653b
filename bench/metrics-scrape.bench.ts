// /metrics latency under load while watch ingests, all on loopback.
//
// A generator process writes live count reports (64 shards, event time = now) at a paced
// rate into the standard input of `shardwise watch --input - --shards 64 --window 1s
// --metrics-port 0`, and this process scrapes /metrics open-loop at a fixed rate with a
// small keep-alive HTTP client: each request is due at its slot, and its latency counts
// from that slot, so a stalled server cannot hide behind requests never sent. The number
// of requests is fixed; at most `maxInFlight` may be outstanding (the rest count as
// dropped), and each has a timeout. The target is p99 under 50 ms at about 200 scrapes/s.
//
// Before that, in this process and without the load: the CPU time of one /metrics render
// with a judged window in the registry (64 shards, 8 flagged), the registry's full render
// beside the exporter's (window metrics kept per judged window), which a loaded machine's
// scheduling cannot blur.
//
// Run: npx tsx bench/metrics-scrape.bench.ts [scrapes per second, default 200]
//        [seconds, default 20] [records per second, default 100000]
import { spawn } from 'node:child_process';
import { Agent, request } from 'node:http';
import { loadavg } from 'node:os';
import { fileURLToPath } from 'node:url';
import { setTimeout as sleep } from 'node:timers/promises';
import { VerdictMetrics } from '../src/exporter/verdict-metrics.js';
import { Judge } from '../src/judge/judge.js';
import { defaultJudgeSettings } from '../src/judge/judge-settings.js';
import { JudgingPipeline } from '../src/judge/judging-pipeline.js';
import { runScenario } from '../src/scenario/scenario-run.js';

const shards = 64;
const maxInFlight = 64;
const requestTimeoutMs = 2000;
const targetP99Ms = 50;

function parsePositive(raw: string | undefined, fallback: number, what: string): number {
  const value = raw === undefined ? fallback : Number(raw);
  if (!Number.isFinite(value) || value <= 0) throw new Error(`${what} must be above 0, got ${raw}`);
  return value;
}

/** Generator mode: paced JSON Lines count reports on stdout, until stdout closes. */
async function generate(recordsPerSecond: number): Promise<void> {
  const sliceMs = 10;
  const started = Date.now();
  let sent = 0;
  let shard = 0;
  process.stdout.on('error', () => process.exit(0));
  for (;;) {
    const due = Math.floor(((Date.now() - started) / 1000) * recordsPerSecond);
    const lines: string[] = [];
    const ts = Date.now();
    for (; sent < due; sent++) {
      shard = (shard * 1103515245 + 12345) & 0x7fffffff;
      lines.push(`{"ts":${ts},"shard":"s-${shard % shards}","count":${1 + (sent % 7)}}`);
    }
    if (lines.length > 0 && !process.stdout.write(lines.join('\n') + '\n')) {
      await new Promise((resolve) => process.stdout.once('drain', resolve));
    }
    await sleep(sliceMs);
  }
}

interface Result {
  readonly latencies: number[];
  readonly errors: number;
  readonly dropped: number;
  readonly bytes: number;
}

/** Open-loop scrapes: `count` requests due every 1000 / rate ms; latency from the due time. */
async function scrape(url: string, rate: number, count: number): Promise<Result> {
  const agent = new Agent({ keepAlive: true, maxSockets: maxInFlight });
  const latencies: number[] = [];
  let errors = 0;
  let dropped = 0;
  let bytes = 0;
  let inFlight = 0;
  const pending: Promise<void>[] = [];
  const started = performance.now();
  const one = (due: number) =>
    new Promise<void>((resolve) => {
      inFlight++;
      const done = (ok: boolean) => {
        inFlight--;
        if (ok) latencies.push(performance.now() - due);
        else errors++;
        resolve();
      };
      const call = request(url, { agent, timeout: requestTimeoutMs }, (response) => {
        response.on('data', (chunk: Buffer) => (bytes += chunk.length));
        response.on('end', () => done(response.statusCode === 200));
        response.on('error', () => done(false));
      });
      call.on('timeout', () => call.destroy(new Error('timeout')));
      call.on('error', () => done(false));
      call.end();
    });
  for (let sent = 0; sent < count;) {
    const now = performance.now();
    while (sent < count && started + (sent * 1000) / rate <= now) {
      const due = started + (sent * 1000) / rate;
      if (inFlight >= maxInFlight) dropped++;
      else pending.push(one(due));
      sent++;
    }
    await sleep(1);
  }
  await Promise.all(pending);
  agent.destroy();
  return { latencies, errors, dropped, bytes };
}

function quantile(sorted: readonly number[], q: number): number {
  return sorted[Math.min(sorted.length - 1, Math.ceil(q * sorted.length) - 1)];
}

async function metricValue(url: string, pattern: RegExp): Promise<number> {
  const text = await (await fetch(url)).text();
  const match = pattern.exec(text);
  if (match === null) throw new Error(`${pattern} not in /metrics`);
  return Number(match[1]);
}

/** CPU time of one render, µs (median of 2000 after 200 warm-ups), full and kept. */
async function renderCost(): Promise<void> {
  const startMs = Date.UTC(2025, 11, 1);
  const run = runScenario('hotspot', { seed: 5, startMs, durationMs: 90_000 });
  const settings = { ...defaultJudgeSettings, null: 'map' as const, hopMs: 1000 };
  const judge = new Judge(run.universe, settings);
  const pipeline = new JudgingPipeline(
    run.universe,
    { windowMs: 1000, latenessMs: 0 },
    judge,
    () => startMs + 100_000,
  );
  const metrics = new VerdictMetrics(pipeline, { settings, windowMs: 1000, latenessMs: 0 });
  for (const record of run.records()) pipeline.record(record.ts, record.shard, record.count);
  const time = async (render: () => Promise<string>) => {
    const times: number[] = [];
    for (let i = 0; i < 2200; i++) {
      const t = process.cpuUsage();
      await render();
      const used = process.cpuUsage(t);
      if (i >= 200) times.push(used.user + used.system);
    }
    times.sort((a, b) => a - b);
    return times[times.length >> 1];
  };
  const full = await time(() => metrics.registry.metrics());
  const kept = await time(() => metrics.render());
  console.log(
    `one /metrics render, CPU µs (median): registry render ${full}, exporter's kept render ${kept}`,
  );
  metrics.close();
}

async function bench(): Promise<void> {
  await renderCost();
  const rate = parsePositive(process.argv[2], 200, 'scrapes per second');
  const seconds = parsePositive(process.argv[3], 20, 'seconds');
  const recordsPerSecond = parsePositive(process.argv[4], 100_000, 'records per second');
  const root = fileURLToPath(new URL('..', import.meta.url));
  const generator = spawn(
    process.execPath,
    [...process.execArgv, fileURLToPath(import.meta.url), '--generate', String(recordsPerSecond)],
    { stdio: ['ignore', 'pipe', 'inherit'] },
  );
  const watch = spawn(
    process.execPath,
    [
      '--import',
      'tsx',
      'src/cli/main.ts',
      'watch',
      '--input',
      '-',
      '--shards',
      `s-0..s-${shards - 1}`,
      '--window',
      '1s',
      '--lateness',
      '1s',
      '--metrics-port',
      '0',
      '--no-ui',
    ],
    { cwd: root, stdio: [generator.stdout, 'ignore', 'pipe'] },
  );
  let stderr = '';
  watch.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  try {
    const deadline = Date.now() + 30_000;
    let address: RegExpExecArray | null = null;
    while (address === null) {
      address = /metrics at (http:\/\/127\.0\.0\.1:\d+\/metrics)/.exec(stderr);
      if (Date.now() > deadline || watch.exitCode !== null) {
        throw new Error(`watch did not start:\n${stderr}`);
      }
      await sleep(50);
    }
    const url = address[1];
    // Let windows start closing, so scrapes meet a full registry and judging is under way.
    await sleep(3000);
    const accepted = /^shardwise_records_total\{outcome="accepted"\} (\S+)$/m;
    const windows = /^shardwise_windows_closed_total (\S+)$/m;
    const cpu = /^process_cpu_seconds_total (\S+)$/m;
    const read = async () =>
      Promise.all([accepted, windows, cpu].map((pattern) => metricValue(url, pattern)));
    const before = await read();
    const loadBefore = loadavg()[0];
    const started = performance.now();
    const result = await scrape(url, rate, Math.round(rate * seconds));
    const elapsed = (performance.now() - started) / 1000;
    const after = await read();
    const sorted = [...result.latencies].sort((a, b) => a - b);
    const p99 = quantile(sorted, 0.99);
    console.log(
      `/metrics under ${rate} scrapes/s for ${seconds} s (open loop, keep-alive, ` +
        `at most ${maxInFlight} in flight), while watch ingests ${recordsPerSecond} records/s ` +
        `on ${shards} shards in 1 s windows; node ${process.version}`,
    );
    console.log(
      `scrapes ${sorted.length} ok, ${result.errors} failed, ${result.dropped} dropped; ` +
        `${(result.bytes / Math.max(sorted.length, 1) / 1024).toFixed(1)} KiB each; ` +
        `${(sorted.length / elapsed).toFixed(0)} answered/s`,
    );
    console.log(
      `latency ms: p50 ${quantile(sorted, 0.5).toFixed(2)}  p90 ${quantile(sorted, 0.9).toFixed(2)}  ` +
        `p99 ${p99.toFixed(2)}  max ${sorted[sorted.length - 1].toFixed(2)}  (target p99 < ${targetP99Ms})`,
    );
    console.log(
      `ingested meanwhile: ${((after[0] - before[0]) / elapsed).toFixed(0)} records/s accepted, ` +
        `${((after[1] - before[1]) / elapsed).toFixed(1)} windows/s judged`,
    );
    console.log(
      `watch used ${(((after[2] - before[2]) / elapsed) * 100).toFixed(0)}% of one core; ` +
        `1-minute load average ${loadBefore.toFixed(2)} before, ${loadavg()[0].toFixed(2)} ` +
        `after (2 cores here; other work on the machine lengthens the tail)`,
    );
    console.log(
      p99 < targetP99Ms && result.errors === 0 && result.dropped === 0 ? 'met' : 'NOT met',
    );
  } finally {
    generator.kill('SIGTERM');
    watch.kill('SIGTERM');
    const killer = setTimeout(() => watch.kill('SIGKILL'), 10_000);
    if (watch.exitCode === null) await new Promise((resolve) => watch.once('exit', resolve));
    clearTimeout(killer);
  }
}

if (process.argv[2] === '--generate') {
  await generate(parsePositive(process.argv[3], 100_000, 'records per second'));
} else {
  await bench();
}
