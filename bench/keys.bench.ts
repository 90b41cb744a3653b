// Throughput of request events with keys through the judging pipeline on one core: windows,
// judging and key analysis (Space-Saving heavy hitters, distinct keys, the key placement and
// re-placement tests, causes) against the same pipeline without key analysis. The events
// come from a keyed drill (64 shards, 6400 requests/s, 16 000 keys; hot-key has its hot key
// planted for half the run) and are drawn before timing. Also a stream of all-distinct keys
// (every key new: the sketches' worst case) and the key statistics alone. Target: at least
// 2e5 keyed events/s. Also prints the retained heap per open window.
// Run: npx tsx bench/keys.bench.ts [seconds of scenario traffic, default 240] [rounds, default 3]
import { Judge } from '../src/judge/judge.js';
import { defaultJudgeSettings } from '../src/judge/judge-settings.js';
import { JudgingPipeline } from '../src/judge/judging-pipeline.js';
import { KeyAnalysis } from '../src/keys/key-analysis.js';
import { KeyedWindows } from '../src/keys/keyed-windows.js';
import { defaultKeySketchSettings } from '../src/keys/window-key-stats.js';
import { runScenario } from '../src/scenario/scenario-run.js';
import type { CountRecord } from '../src/window/count-record.js';
import type { ShardUniverse } from '../src/window/shard-universe.js';

const seconds = Number(process.argv[2] ?? 240);
const rounds = Number(process.argv[3] ?? 3);
if (!(seconds > 0) || !Number.isSafeInteger(rounds) || rounds < 1) {
  throw new Error('usage: keys.bench.ts [seconds > 0] [rounds >= 1]');
}
const windowMs = 10_000;
const startMs = Date.UTC(2025, 11, 1);

function pipelineFor(universe: ShardUniverse, withKeys: boolean): JudgingPipeline {
  const judge = new Judge(universe, { ...defaultJudgeSettings, null: 'map', hopMs: windowMs });
  const keys = withKeys
    ? new KeyAnalysis(universe, {
        windowMs,
        hopMs: windowMs,
        sketch: defaultKeySketchSettings,
        simulations: 1000,
        alpha: defaultJudgeSettings.alpha,
        null: 'map',
        maxFlagged: defaultJudgeSettings.maxFlagged,
      })
    : undefined;
  return new JudgingPipeline(universe, { windowMs, latenessMs: 2_000 }, judge, Date.now, {
    keys,
  });
}

function timePipeline(records: readonly CountRecord[], universe: ShardUniverse, withKeys: boolean) {
  const pipeline = pipelineFor(universe, withKeys);
  let windows = 0;
  pipeline.events.on('window judged', () => windows++);
  const started = performance.now();
  for (const record of records) pipeline.record(record.ts, record.shard, record.count, record.key);
  pipeline.finish();
  const ms = performance.now() - started;
  return { perSecond: records.length / (ms / 1000), ms, windows };
}

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted[Math.floor(sorted.length / 2)];
}

// First, on a quiet heap: what one window of 64 000 all-distinct keys on 64 shards keeps
// (keys built and flattened before the first reading, so only the statistics count).
const gc = (globalThis as { gc?: () => void }).gc;
let heapNote = 'run with npx tsx --expose-gc for the memory one window keeps';
if (gc !== undefined) {
  const keys = Array.from({ length: 64_000 }, (_, at) => `order:${at}:${(at * 2654435761) >>> 0}`);
  let flat = 0;
  for (const key of keys) flat += key.charCodeAt(key.length - 1);
  // Twenty windows held at once, so that the statistics dwarf the heap's own noise.
  const copies = 20;
  const held = Array.from(
    { length: copies },
    () => new KeyedWindows(windowMs, windowMs, defaultKeySketchSettings),
  );
  gc();
  gc();
  const before = usedMemory();
  for (const windows of held) {
    for (let at = 0; at < keys.length; at++) windows.add(startMs, at % 64, keys[at], 1);
  }
  gc();
  gc();
  const after = usedMemory();
  const open = held.reduce((sum, windows) => sum + windows.openWindows, 0);
  heapNote = `memory kept per window of 64 000 all-distinct keys on 64 shards: ${((after - before) / copies / 1024).toFixed(0)} KiB (stated bound ${((64 * (16 * 320 + 4096 + 200)) / 1024).toFixed(0)} KiB; mean of ${open} windows, checksum ${flat % 10})`;
}

const rows: string[] = [];
for (const name of ['hot-key', 'biased-partitioner', 'keyed-failover']) {
  const run = runScenario(name, { seed: 7, startMs, durationMs: seconds * 1000 });
  const records = [...run.records()];
  timePipeline(records.slice(0, 200_000), run.universe, true);
  const withKeys: number[] = [];
  const without: number[] = [];
  let windows = 0;
  for (let round = 0; round < rounds; round++) {
    const keyed = timePipeline(records, run.universe, true);
    withKeys.push(keyed.perSecond);
    windows = keyed.windows;
    without.push(timePipeline(records, run.universe, false).perSecond);
  }
  rows.push(
    `| ${name} | ${records.length} | ${windows} | ${Math.round(median(withKeys)).toLocaleString('en-US')} | ${Math.round(median(without)).toLocaleString('en-US')} |`,
  );
}

// Worst case for the sketches: every key new, 64 shards, 64 000 events per window.
const distinct = runScenario('chance', { seed: 7, startMs, durationMs: 1000 }).universe;
const worst: CountRecord[] = [];
for (let at = 0; at < 1_000_000; at++) {
  const ts = startMs + Math.floor(at / 6.4);
  worst.push({
    ts,
    shard: distinct.idAt(at % 64),
    count: 1,
    key: `order:${at}:${(at * 2654435761) >>> 0}`,
  });
}
timePipeline(worst.slice(0, 100_000), distinct, true);
const worstRates: number[] = [];
for (let round = 0; round < rounds; round++)
  worstRates.push(timePipeline(worst, distinct, true).perSecond);
rows.push(
  `| every key new | ${worst.length} | ${Math.ceil(worst.length / 64_000)} | ${Math.round(median(worstRates)).toLocaleString('en-US')} | |`,
);

// The key statistics alone (no windows, no judging): a fresh set of windows per round.
const indexOf = new Map(distinct.ids.map((id, index) => [id, index]));
const statRates: number[] = [];
for (let round = 0; round < rounds; round++) {
  const stats = new KeyedWindows(windowMs, windowMs, defaultKeySketchSettings);
  const started = performance.now();
  for (const record of worst) {
    stats.add(record.ts, indexOf.get(record.shard) as number, record.key as string, record.count);
  }
  statRates.push(worst.length / ((performance.now() - started) / 1000));
}
console.log(`keyed events through the pipeline, ${rounds} rounds, median events/s (one core):`);
console.log('| traffic | events | windows | with key analysis | without |');
console.log('| --- | --- | --- | --- | --- |');
for (const row of rows) console.log(row);
console.log(
  `key statistics alone (hash, Space-Saving, distinct count), every key new: ${Math.round(median(statRates)).toLocaleString('en-US')} events/s`,
);
console.log(heapNote);

/** The JS heap plus memory outside it (typed arrays' backing stores live there). */
function usedMemory(): number {
  const usage = process.memoryUsage();
  return usage.heapUsed + usage.external;
}
