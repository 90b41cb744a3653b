// Decode + window throughput on one core: writes a temporary JSON Lines file
// of count reports from the `chance` scenario (64 shards, one report per
// shard per second), then counts it into 10 s windows three ways (a sink, read
// batches, single items), each in a fresh process so peak RSS is its own.
// Run: npx tsx bench/decode-window.bench.ts [records, default 2000000]
import { spawnSync } from 'node:child_process';
import { closeSync, mkdtempSync, openSync, rmSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { encodeJsonLine } from '../src/ingest/encode.js';
import { FileSource, type SourceItem } from '../src/ingest/file-source.js';
import { runScenario } from '../src/scenario/scenario-run.js';
import type { Rejection } from '../src/window/count-record.js';
import { EventTimeWindows } from '../src/window/event-time-window.js';
import { ShardUniverse } from '../src/window/shard-universe.js';

type Mode = 'sink' | 'batches' | 'items' | 'sink, growing universe';
const modes: readonly Mode[] = ['sink', 'batches', 'items', 'sink, growing universe'];

interface Measurement {
  mode: Mode;
  records: number;
  seconds: number;
  windows: number;
  peakRssMiB: number;
}

async function measure(path: string, mode: Mode): Promise<Measurement> {
  const universe =
    mode === 'sink, growing universe'
      ? ShardUniverse.growing()
      : ShardUniverse.fromShardsOption('seat-00..seat-63');
  let windows = 0;
  const counter = new EventTimeWindows(universe, { windowMs: 10_000, latenessMs: 2_000 }, () => {
    windows++;
  });
  const source = new FileSource(path);
  const count = (item: SourceItem): void => {
    if ((item as Rejection).reason !== undefined) counter.reject((item as Rejection).reason);
    else counter.addRecord(item as Exclude<SourceItem, Rejection>);
  };
  const started = performance.now();
  if (mode === 'batches') {
    for await (const batch of source.batches()) for (const item of batch) count(item);
  } else if (mode === 'items') {
    for await (const item of source) count(item);
  } else {
    await source.decodeInto({
      record: (ts, shard, records) => counter.add(ts, shard, records),
      reject: (reason) => counter.reject(reason),
    });
  }
  counter.closeAll();
  const seconds = (performance.now() - started) / 1000;
  const totals = counter.totals;
  return {
    mode,
    records: totals.records + Object.values(totals.rejected).reduce((sum, value) => sum + value, 0),
    seconds,
    windows,
    peakRssMiB: process.resourceUsage().maxRSS / 1024,
  };
}

function writeRecords(path: string, records: number): void {
  const run = runScenario('chance', {
    seed: 1,
    startMs: Date.UTC(2025, 11, 1),
    durationMs: Math.ceil(records / 64) * 1000,
  });
  const file = openSync(path, 'w');
  let buffered: string[] = [];
  let written = 0;
  for (const record of run.records()) {
    if (written++ === records) break;
    buffered.push(encodeJsonLine(record));
    if (buffered.length === 65_536) {
      writeSync(file, buffered.join('\n') + '\n');
      buffered = [];
    }
  }
  if (buffered.length > 0) writeSync(file, buffered.join('\n') + '\n');
  closeSync(file);
}

const [, , first, second] = process.argv;
if (first === '--measure') {
  const [path, mode] = second.split('|');
  console.log(JSON.stringify(await measure(path, mode as Mode)));
} else {
  const records = first === undefined ? 2_000_000 : Number(first);
  const directory = mkdtempSync(join(tmpdir(), 'shardwise-bench-'));
  const path = join(directory, 'records.jsonl');
  try {
    writeRecords(path, records);
    console.log(
      `${records} count records (JSON Lines), 64 shards, 10 s windows, node ${process.version}`,
    );
    for (const mode of modes) {
      const child = spawnSync(
        process.execPath,
        [...process.execArgv, fileURLToPath(import.meta.url), '--measure', `${path}|${mode}`],
        { encoding: 'utf8' },
      );
      if (child.status !== 0) throw new Error(`${mode}: ${child.stderr}`);
      const result = JSON.parse(child.stdout.trim().split('\n').pop() as string) as Measurement;
      const rate = result.records / result.seconds;
      console.log(
        `${mode.padEnd(24)} ${(rate / 1e6).toFixed(2)} M records/s  ${result.seconds.toFixed(2)} s  ` +
          `${result.windows} windows  peak RSS ${result.peakRssMiB.toFixed(0)} MiB`,
      );
    }
  } finally {
    rmSync(directory, { recursive: true, force: true });
  }
}
