// Aggregate throughput of `shardwise count` with 1, 2 and 3 instances in one group on the
// test broker (start it first: bash scripts/kafka-broker.sh start; and npm run build).
//   npx tsx bench/scale-out.bench.ts [records] [rounds]
// Each round: a fresh 12-partition topic holding `records` count reports over 60 windows,
// k instances started from earliest, timed from the first instance's start until every
// partition has published its part of the last full window (read off the summary topic).
import { spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Kafka, logLevel, Partitioners, type Message } from 'kafkajs';
import { brokerAddress } from '../test/e2e/kafka-env.js';
import { createTopicsReady } from '../test/e2e/kafka-fixtures.js';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const cli = join(root, 'dist', 'cli', 'main.js');
const records = Number(process.argv[2] ?? 600_000);
const rounds = Number(process.argv[3] ?? 1);
const partitions = 12;
const windows = 60;
const t0 = 1_700_000_000_000;
const brokers = brokerAddress();
const kafka = new Kafka({
  clientId: 'bench',
  brokers: brokers.split(','),
  logLevel: logLevel.NOTHING,
});

async function fill(topic: string): Promise<void> {
  const producer = kafka.producer({
    createPartitioner: Partitioners.DefaultPartitioner,
    idempotent: true,
    maxInFlightRequests: 1,
  });
  await producer.connect();
  const perWindow = Math.ceil(records / windows);
  let batch: Message[] = [];
  for (let i = 0; i < records + partitions; i++) {
    const flush = i >= records;
    const window = flush ? windows + 1 : Math.floor(i / perWindow);
    const ts = t0 + window * 1000 + (i % 1000);
    batch.push({
      partition: i % partitions,
      value: JSON.stringify({ ts, shard: `s-${i % 256}`, count: 1 }),
      timestamp: String(ts),
    });
    if (batch.length === 5000) {
      await producer.send({ topic, messages: batch, acks: -1 });
      batch = [];
    }
  }
  if (batch.length > 0) await producer.send({ topic, messages: batch, acks: -1 });
  await producer.disconnect();
}

async function round(instances: number): Promise<number> {
  const admin = kafka.admin();
  await admin.connect();
  const topic = `bench-scale-${randomUUID().slice(0, 8)}`;
  const summaries = `${topic}-sum`;
  await createTopicsReady(admin, [
    { topic, numPartitions: partitions },
    { topic: summaries, numPartitions: 1 },
  ]);
  await fill(topic);
  const lastEnd = t0 + windows * 1000;
  const done = new Set<number>();
  const consumer = kafka.consumer({ groupId: `${summaries}-reader`, maxWaitTimeInMs: 100 });
  await consumer.connect();
  await consumer.subscribe({ topics: [summaries], fromBeginning: true });
  let finish: () => void = () => undefined;
  const finished = new Promise<void>((resolve) => (finish = resolve));
  await consumer.run({
    eachMessage: async ({ message }) => {
      const summary = JSON.parse(message.value!.toString()) as {
        end: number;
        parts: { partition: number }[];
      };
      if (summary.end !== lastEnd) return;
      for (const part of summary.parts) done.add(part.partition);
      if (done.size === partitions) finish();
    },
  });
  const started = performance.now();
  const children: ChildProcess[] = [];
  for (let k = 0; k < instances; k++) {
    children.push(
      spawn(
        'node',
        [
          cli,
          'count',
          '--brokers',
          brokers,
          '--topic',
          topic,
          '--group',
          `${topic}-g`,
          '--summaries',
          summaries,
          '--from',
          'earliest',
          '--window',
          '1s',
          '--lateness',
          '0s',
          '--idle',
          '600s',
          '--session-timeout',
          '10s',
        ],
        { stdio: 'ignore' },
      ),
    );
  }
  await finished;
  const seconds = (performance.now() - started) / 1000;
  for (const child of children) child.kill('SIGTERM');
  await consumer.disconnect();
  await admin.deleteTopics({ topics: [topic, summaries] }).catch(() => undefined);
  await admin.disconnect();
  return seconds;
}

console.log(`records ${records}, ${partitions} partitions, ${windows} windows of 1 s`);
console.log('instances | wall s (best of rounds) | records/s');
for (const instances of [1, 2, 3]) {
  let best = Infinity;
  for (let r = 0; r < rounds; r++) best = Math.min(best, await round(instances));
  console.log(`${instances} | ${best.toFixed(2)} | ${Math.round(records / best)}`);
}
