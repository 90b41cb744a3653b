// Kafka ingest throughput on the real test broker, on the same topic in the same run:
// - raw: a kafkajs consumer that only counts messages;
// - raw-json: the same, parsing each message value as JSON (the least a judge must do);
// - ours: our source (fetch, decode, dedupe and offset ledger, partition alignment)
//   feeding EventTimeWindows in this process;
// - cli: the built CLI, `node dist/cli/main.js watch --brokers ... --topic ... --from
//   earliest --no-ui --metrics-port 0` (windows judged, verdicts written to a pipe this
//   bench drains), its progress read from shardwise_records_total on /metrics every 20 ms;
//   it is done once every record is read and the verdict of every window those records
//   close is out: as many as `ours` closed in the same round but the last, partial one
//   (`ours` closes it at the end; a live run closes it once the topic has been quiet).
//   Windows are judged on a second thread, so reading alone would finish early.
// Each measurement runs in a fresh process with a fresh consumer group, alternating raw and
// ours, so neither inherits the other's JIT or page-cache warmth.
//
// Run: npx tsx bench/kafka-throughput.bench.ts [records, default 1000000] [rounds, default 3]
// Needs the test broker (bash scripts/kafka-broker.sh start) and the build (npm run build).
import { spawn, spawnSync } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { setTimeout as sleep } from 'node:timers/promises';
import { fileURLToPath } from 'node:url';
import { Kafka, logLevel } from 'kafkajs';
import { encodeJsonLine } from '../src/ingest/encode.js';
import { produceToKafka } from '../src/ingest/kafka/sink.js';
import { KafkaSource } from '../src/ingest/kafka/source.js';
import { runScenario } from '../src/scenario/scenario-run.js';
import { EventTimeWindows } from '../src/window/event-time-window.js';
import { ShardUniverse } from '../src/window/shard-universe.js';
import { brokerList } from '../test/e2e/kafka-env.js';
import { createTopicsReady } from '../test/e2e/kafka-fixtures.js';

const partitions = 4;
const modes = ['raw', 'raw-json', 'ours', 'cli'] as const;
type Mode = (typeof modes)[number];
/** The fetch settings both consumers use (our source's defaults). */
const fetch = { maxBytesPerPartition: 4 << 20, maxBytes: 16 << 20, maxWaitTimeInMs: 500 };

interface Measurement {
  mode: Mode;
  records: number;
  /** From the first message handed over to the last, s. */
  seconds: number;
  /** From consumer start (connect, join) to the last message, s. */
  totalSeconds: number;
  windows: number;
}

function scenarioRecords(count: number) {
  // The `chance` scenario: 64 shards, one count report per shard per second.
  const run = runScenario('chance', {
    seed: 1,
    startMs: Date.UTC(2025, 11, 1),
    durationMs: Math.ceil(count / 64) * 1000,
  });
  const records = [];
  for (const record of run.records()) {
    if (records.length === count) break;
    records.push(record);
  }
  return records;
}

async function measureRaw(topic: string, expected: number, json: boolean): Promise<Measurement> {
  const kafka = new Kafka({ brokers: brokerList(), logLevel: logLevel.NOTHING });
  const consumer = kafka.consumer({ groupId: `bench-raw-${randomUUID()}`, ...fetch });
  const started = performance.now();
  let first = Number.NaN;
  let last = Number.NaN;
  let count = 0;
  let done: () => void = () => undefined;
  const finished = new Promise<void>((resolve) => (done = resolve));
  await consumer.connect();
  await consumer.subscribe({ topics: [topic], fromBeginning: true });
  await consumer.run({
    autoCommit: false,
    eachBatch: async ({ batch }) => {
      if (Number.isNaN(first)) first = performance.now();
      if (json) {
        for (const message of batch.messages) {
          const value = JSON.parse((message.value as Buffer).toString()) as { count?: number };
          if (typeof value.count === 'number') count++;
        }
      } else count += batch.messages.length;
      if (count >= expected) {
        last = performance.now();
        done();
      }
    },
  });
  await finished;
  await consumer.disconnect();
  return {
    mode: json ? 'raw-json' : 'raw',
    records: count,
    seconds: (last - first) / 1000,
    totalSeconds: (last - started) / 1000,
    windows: 0,
  };
}

async function measureOurs(topic: string): Promise<Measurement> {
  const universe = ShardUniverse.fromShardsOption('seat-00..seat-63');
  let windows = 0;
  const source: KafkaSource = new KafkaSource({
    brokers: brokerList(),
    topic,
    from: { kind: 'earliest' },
    windows: { windowMs: 10_000, latenessMs: 2000 },
    stopAtEnd: true,
    maxBytesPerPartition: fetch.maxBytesPerPartition,
    maxBytes: fetch.maxBytes,
    maxWaitTimeMs: fetch.maxWaitTimeInMs,
  });
  const counter = new EventTimeWindows(universe, { windowMs: 10_000, latenessMs: 2000 }, (w) => {
    windows++;
    source.markJudgedUpTo(w.end);
  });
  const started = performance.now();
  let first = Number.NaN;
  await source.decodeInto({
    record(ts, shard, count) {
      if (first !== first) first = performance.now();
      counter.add(ts, shard, count);
    },
    reject(reason) {
      counter.reject(reason);
    },
  });
  const last = performance.now();
  counter.closeAll();
  await source.close();
  const totals = counter.totals;
  if (totals.lateRecords !== 0) throw new Error(`${totals.lateRecords} records came late`);
  return {
    mode: 'ours',
    records: totals.records,
    seconds: (last - first) / 1000,
    totalSeconds: (last - started) / 1000,
    windows,
  };
}

/** The built CLI's watch on the topic, until /metrics counts every record accepted. */
async function measureCli(
  topic: string,
  expected: number,
  expectedWindows: number,
): Promise<Measurement> {
  const root = fileURLToPath(new URL('..', import.meta.url));
  const started = performance.now();
  const watch = spawn(
    process.execPath,
    [
      'dist/cli/main.js',
      'watch',
      '--brokers',
      brokerList().join(','),
      '--topic',
      topic,
      '--from',
      'earliest',
      '--shards',
      'seat-00..seat-63',
      '--window',
      '10s',
      '--lateness',
      '2s',
      '--metrics-port',
      '0',
      '--no-ui',
    ],
    { cwd: root, stdio: ['ignore', 'pipe', 'pipe'] },
  );
  let verdicts = 0;
  watch.stdout.on('data', (chunk: Buffer) => {
    for (const byte of chunk) if (byte === 10) verdicts++;
  });
  let stderr = '';
  watch.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  try {
    let url: string | undefined;
    while (url === undefined) {
      url = /metrics at (http:\/\/\S+\/metrics)/.exec(stderr)?.[1];
      if (watch.exitCode !== null) throw new Error(`watch ended:\n${stderr}`);
      await sleep(20);
    }
    const accepted = /^shardwise_records_total\{outcome="accepted"\} (\S+)$/m;
    let first = Number.NaN;
    let records = 0;
    while (records < expected) {
      if (watch.exitCode !== null) throw new Error(`watch ended:\n${stderr}`);
      const text = await (await globalThis.fetch(url)).text();
      records = Number(accepted.exec(text)?.[1] ?? 0);
      if (records > 0 && Number.isNaN(first)) first = performance.now();
      if (performance.now() - started > 280_000) throw new Error(`stuck at ${records} records`);
      if (records < expected) await sleep(20);
    }
    // Then the verdicts of the windows those records closed (stdout is read as it comes).
    while (verdicts < expectedWindows) {
      if (watch.exitCode !== null) throw new Error(`watch ended:\n${stderr}`);
      if (performance.now() - started > 280_000) throw new Error(`stuck at ${verdicts} verdicts`);
      await sleep(2);
    }
    const last = performance.now();
    return {
      mode: 'cli',
      records,
      seconds: (last - first) / 1000,
      totalSeconds: (last - started) / 1000,
      windows: verdicts,
    };
  } finally {
    watch.kill('SIGTERM');
    if (watch.exitCode === null) await new Promise((resolve) => watch.once('exit', resolve));
  }
}

const [, , first, second, third] = process.argv;
if (first === '--measure') {
  const [mode, topic, expected] = [second, third, Number(process.argv[5])];
  const result =
    mode === 'raw' || mode === 'raw-json'
      ? await measureRaw(topic, expected, mode === 'raw-json')
      : mode === 'cli'
        ? await measureCli(topic, expected, Number(process.argv[6]))
        : await measureOurs(topic);
  console.log(JSON.stringify(result));
} else {
  const count = first === undefined ? 1_000_000 : Number(first);
  const rounds = second === undefined ? 3 : Number(second);
  const kafka = new Kafka({ brokers: brokerList(), logLevel: logLevel.NOTHING });
  const admin = kafka.admin();
  await admin.connect();
  const topic = `shardwise-bench-${randomUUID().slice(0, 8)}`;
  await createTopicsReady(admin, [{ topic, numPartitions: partitions }]);
  try {
    const records = scenarioRecords(count);
    const bytes = records.reduce((sum, record) => sum + encodeJsonLine(record).length, 0);
    const produceStarted = performance.now();
    const sent = await produceToKafka(records, { brokers: brokerList(), topic, batchSize: 10_000 });
    const produceSeconds = (performance.now() - produceStarted) / 1000;
    console.log(
      `${sent.records} count reports (JSON, ${(bytes / count).toFixed(1)} bytes a value, key = shard id), ` +
        `${partitions} partitions, node ${process.version}; produced in ${produceSeconds.toFixed(1)} s ` +
        `(${(sent.records / produceSeconds / 1000).toFixed(0)} k/s, idempotent, 10000 a request)`,
    );
    console.log(
      `fetch: maxBytesPerPartition ${fetch.maxBytesPerPartition >> 20} MiB, maxBytes ${fetch.maxBytes >> 20} MiB, ` +
        `maxWait ${fetch.maxWaitTimeInMs} ms; ours: 10 s windows, 2 s lateness (1 s alignment), 64 declared shards`,
    );
    const results: Measurement[] = [];
    for (let round = 0; round < rounds; round++) {
      let oursWindows = 0;
      for (const mode of modes) {
        const child = spawnSync(
          process.execPath,
          [
            ...process.execArgv,
            fileURLToPath(import.meta.url),
            '--measure',
            mode,
            topic,
            String(count),
            String(oursWindows),
          ],
          { encoding: 'utf8', timeout: 300_000 },
        );
        if (child.status !== 0) throw new Error(`${mode}: ${child.stderr}`);
        const result = JSON.parse(child.stdout.trim().split('\n').pop() as string) as Measurement;
        results.push(result);
        if (mode === 'ours') oursWindows = result.windows - 1;
        console.log(
          `round ${round + 1} ${mode.padEnd(8)} ${(result.records / result.seconds / 1000).toFixed(0).padStart(5)} k records/s ` +
            `(${result.seconds.toFixed(2)} s first to last, ${result.totalSeconds.toFixed(2)} s with connect and join)` +
            (mode === 'ours' || mode === 'cli' ? `, ${result.windows} windows` : ''),
        );
      }
    }
    const median = (mode: Mode): number => {
      const rates = results
        .filter((result) => result.mode === mode)
        .map((result) => result.records / result.seconds)
        .sort((a, b) => a - b);
      return rates[Math.floor(rates.length / 2)];
    };
    const rate = (mode: Mode) => `${mode} ${(median(mode) / 1000).toFixed(0)} k/s`;
    const share = (mode: Mode, of: Mode) => `${((median(mode) / median(of)) * 100).toFixed(0)}%`;
    console.log(`median: ${modes.map(rate).join(', ')}`);
    console.log(
      `ours = ${share('ours', 'raw')} of raw, ${share('ours', 'raw-json')} of raw-json; ` +
        `cli = ${share('cli', 'raw')} of raw, ${share('cli', 'raw-json')} of raw-json ` +
        `(target: cli >= 70% of raw-json)`,
    );
  } finally {
    await admin.deleteTopics({ topics: [topic] }).catch(() => undefined);
    await admin.disconnect();
  }
}
