// Shared pieces of the Kafka e2e tests: fresh topics, producers (kafkajs and kcat), a
// collecting sink, and control of the test broker's process for the fault tests.
import { execFile, spawn } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { Kafka, Partitioners, logLevel, type Admin, type Message, type Producer } from 'kafkajs';
import type { RecordSink } from '../../src/ingest/decode.js';
import type { KafkaSourceEvent } from '../../src/ingest/kafka/events.js';
import type { KafkaSourceOptions } from '../../src/ingest/kafka/source.js';
import type { CountRecord, RejectionReason } from '../../src/window/count-record.js';
import { EventTimeWindows, type ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
import { bootstrapFile, brokerList } from './kafka-env.js';

const run = promisify(execFile);
const repoRoot = join(dirname(fileURLToPath(import.meta.url)), '..', '..');

/** A kafkajs client for setting up tests (not the code under test). */
export function testClient(): Kafka {
  return new Kafka({
    clientId: 'shardwise-e2e',
    brokers: brokerList(),
    logLevel: logLevel.NOTHING,
    retry: { retries: 8, initialRetryTime: 200, maxRetryTime: 2000 },
  });
}

/**
 * Creates topics (replication 1) and waits until the broker's metadata shows each with all
 * its partitions led. kafkajs's own `waitForLeaders` retries only LEADER_NOT_AVAILABLE, but
 * a KRaft broker answers UNKNOWN_TOPIC_OR_PARTITION until its metadata image has the new
 * topic (on Kafka 4.4.0 here, up to about 0.5 s after CreateTopics returns), which
 * kafkajs then throws out of `createTopics`.
 */
export async function createTopicsReady(
  admin: Admin,
  topics: readonly { topic: string; numPartitions: number }[],
  timeoutMs = 30_000,
): Promise<void> {
  const created = await admin.createTopics({
    topics: topics.map((entry) => ({ ...entry, replicationFactor: 1 })),
    waitForLeaders: false,
  });
  if (!created) throw new Error(`topics ${topics.map((entry) => entry.topic).join(', ')} exist`);
  const started = Date.now();
  let last = 'no answer yet';
  for (;;) {
    try {
      const { topics: described } = await admin.fetchTopicMetadata({
        topics: topics.map((entry) => entry.topic),
      });
      const ready = topics.every(({ topic, numPartitions }) => {
        const partitions = described.find((entry) => entry.name === topic)?.partitions ?? [];
        return partitions.length === numPartitions && partitions.every((p) => p.leader >= 0);
      });
      if (ready) return;
      last = 'partitions without a leader';
    } catch (error) {
      const type = (error as { type?: string }).type;
      if (type !== 'UNKNOWN_TOPIC_OR_PARTITION' && type !== 'LEADER_NOT_AVAILABLE') throw error;
      last = type;
    }
    if (Date.now() - started > timeoutMs) {
      throw new Error(
        `topics ${topics.map((entry) => entry.topic).join(', ')} not ready after ${timeoutMs} ms (${last})`,
      );
    }
    await new Promise((resolve) => setTimeout(resolve, 100));
  }
}

/** Creates and deletes the topics of one test file. */
export class TopicPool {
  private readonly kafka = testClient();
  private admin: Admin | null = null;
  private readonly created: string[] = [];

  /** A new topic with a unique name, leaders elected. */
  async fresh(label: string, partitions: number): Promise<string> {
    this.admin ??= this.kafka.admin();
    await this.admin.connect();
    const topic = `shardwise-e2e-${label}-${randomUUID().slice(0, 8)}`;
    await createTopicsReady(this.admin, [{ topic, numPartitions: partitions }]);
    this.created.push(topic);
    return topic;
  }

  /** Deletes the topics made so far and disconnects. */
  async cleanUp(): Promise<void> {
    if (this.admin === null) return;
    await this.admin.connect().catch(() => undefined);
    await this.admin.deleteTopics({ topics: this.created }).catch(() => undefined);
    await this.admin.disconnect();
    this.created.length = 0;
  }
}

/**
 * A kafkajs producer for test data: idempotent (acks from all in-sync replicas, one request
 * in flight), because kafkajs retries a whole request when one partition in it fails, and
 * without idempotence the partitions that had taken it get it twice. On Kafka 3.9.1 here a
 * partition answers NOT_LEADER_OR_FOLLOWER for a moment after its topic shows a leader, so
 * the first send to a new topic sometimes wrote duplicates.
 */
export function testProducer(): Producer {
  return testClient().producer({
    createPartitioner: Partitioners.DefaultPartitioner,
    idempotent: true,
    maxInFlightRequests: 1,
  });
}

/**
 * Produces messages with {@link testProducer}, `perRequest` a request: each request makes
 * one record batch per partition, the unit a fetch returns.
 */
export async function produceMessages(
  topic: string,
  messages: Message[],
  perRequest = 500,
): Promise<void> {
  const producer = testProducer();
  await producer.connect();
  try {
    for (let start = 0; start < messages.length; start += perRequest) {
      await producer.send({ topic, messages: messages.slice(start, start + perRequest), acks: -1 });
    }
  } finally {
    await producer.disconnect();
  }
}

/**
 * Produces `key<TAB>value` lines with Debian's kcat, an independent client, idempotent so
 * that each partition keeps the order of the lines. Kafka's producer documentation (the
 * `retries` setting) warns that retries without idempotence and with more than one request
 * in flight can change the order of records; librdkafka's default is a million in flight.
 * Here a partition of a new topic sometimes refuses the first request for a moment (see
 * {@link testProducer}), and without idempotence kcat then wrote that partition's first
 * lines after later ones: in 1 run of 10, 1,091 of a partition's 2,000 lines were out of
 * order, which at `--lateness 0s` are rightly too late.
 */
export async function produceWithKcat(topic: string, lines: string[]): Promise<void> {
  const bootstrap = brokerList().join(',');
  await new Promise<void>((resolve, reject) => {
    const args = ['-P', '-b', bootstrap, '-t', topic, '-K', '\t', '-X', 'enable.idempotence=true'];
    const child = spawn('kcat', args, { stdio: ['pipe', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
    child.on('error', (error: NodeJS.ErrnoException) =>
      reject(
        error.code === 'ENOENT'
          ? new Error("kcat is not on PATH; scripts/provision.sh installs Debian's kcat")
          : error,
      ),
    );
    child.on('close', (code) =>
      code === 0 ? resolve() : reject(new Error(`kcat exited ${code}: ${stderr}`)),
    );
    child.stdin.end(lines.map((line) => `${line}\n`).join(''));
  });
}

/** Records and rejections gathered from a source or a file, in arrival order. */
export class CollectingSink implements RecordSink {
  readonly records: { ts: number; shard: string; count: number; key?: string }[] = [];
  readonly rejected: Partial<Record<RejectionReason, number>> = {};

  record(ts: number, shard: string, count: number, key: string | undefined): void {
    this.records.push(key === undefined ? { ts, shard, count } : { ts, shard, count, key });
  }

  reject(reason: RejectionReason): void {
    this.rejected[reason] = (this.rejected[reason] ?? 0) + 1;
  }

  /** The records as sorted JSON text: a multiset to compare across partitions. */
  sorted(): string[] {
    return this.records.map((record) => JSON.stringify(record)).sort();
  }

  get load(): number {
    return this.records.reduce((sum, record) => sum + record.count, 0);
  }
}

/** Source settings for tests: the test broker, short waits, fast retries, 10 s windows. */
export function sourceOptions(
  topic: string,
  extra: Partial<KafkaSourceOptions> = {},
): KafkaSourceOptions {
  return {
    brokers: brokerList(),
    topic,
    windows: { windowMs: 10_000 },
    from: { kind: 'earliest' },
    maxWaitTimeMs: 100,
    commitIntervalMs: 200,
    connectRetry: { attempts: 10, initialDelayMs: 100, maxDelayMs: 1000 },
    consumerRestart: { attempts: 20, initialDelayMs: 200, maxDelayMs: 2000 },
    sessionTimeoutMs: 10_000,
    heartbeatIntervalMs: 1000,
    ...extra,
  };
}

/** Events of a source by type, for assertions. */
export class EventLog {
  readonly events: KafkaSourceEvent[] = [];
  readonly listener = (event: KafkaSourceEvent): void => {
    this.events.push(event);
  };

  of<T extends KafkaSourceEvent['type']>(type: T): Extract<KafkaSourceEvent, { type: T }>[] {
    return this.events.filter((event) => event.type === type) as Extract<
      KafkaSourceEvent,
      { type: T }
    >[];
  }
}

/** Waits until `check` is true, polling every 50 ms; throws after `timeoutMs` naming `what`. */
export async function waitFor(
  check: () => boolean,
  what: string,
  timeoutMs = 30_000,
): Promise<void> {
  const started = Date.now();
  while (!check()) {
    if (Date.now() - started > timeoutMs)
      throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
}

/** The pid of the test broker, from the pid file scripts/kafka-broker.sh writes. */
export function brokerPid(): number {
  const file = join(dirname(bootstrapFile()), 'kafka.pid');
  const pid = Number(readFileSync(file, 'utf8').trim());
  if (!Number.isSafeInteger(pid) || pid <= 1) throw new Error(`${file} holds no pid`);
  return pid;
}

/** SIGKILLs the test broker (no clean shutdown) and waits until the process is gone. */
export async function killBroker(): Promise<void> {
  const pid = brokerPid();
  process.kill(pid, 'SIGKILL');
  await waitFor(
    () => {
      try {
        process.kill(pid, 0);
        return false;
      } catch {
        return true;
      }
    },
    `broker pid ${pid} to exit`,
    10_000,
  );
}

/** Starts the test broker with the script and waits until it accepts clients. */
export async function startBroker(): Promise<void> {
  await run('bash', [join(repoRoot, 'scripts', 'kafka-broker.sh'), 'start'], {
    timeout: 120_000,
  });
}

/** One judged window, reduced to what the exactness tests compare. */
export interface JudgedWindow {
  readonly start: number;
  readonly end: number;
  readonly total: number;
  /** Load per shard id, shards with load only, sorted by id. */
  readonly byShard: Readonly<Record<string, number>>;
}

/**
 * The pipeline the Kafka source feeds in watch, cut down for tests: records go into
 * EventTimeWindows; each closed window is "judged" (kept here) and the source told so,
 * except windows a previous run on the group already judged.
 */
export class JudgingPipeline implements RecordSink {
  readonly judged: JudgedWindow[] = [];
  readonly windows: EventTimeWindows;
  records = 0;
  private readonly universe = ShardUniverse.growing();

  constructor(
    private readonly source: { markJudgedUpTo(end: number): void },
    windowMs: number,
    latenessMs: number,
    private readonly judgedBefore: number | null = null,
  ) {
    this.windows = new EventTimeWindows(this.universe, { windowMs, latenessMs }, (window) =>
      this.judge(window),
    );
  }

  record(ts: number, shard: string, count: number): void {
    this.records++;
    this.windows.add(ts, shard, count);
  }

  reject(reason: RejectionReason): void {
    this.windows.reject(reason);
  }

  private judge(window: ClosedWindow): void {
    if (this.judgedBefore !== null && window.end <= this.judgedBefore) return;
    const byShard: Record<string, number> = {};
    window.counts.forEach((load, index) => {
      if (load > 0) byShard[this.universe.idAt(index)] = load;
    });
    this.judged.push({
      start: window.start,
      end: window.end,
      total: window.total,
      byShard: sortKeys(byShard),
    });
    this.source.markJudgedUpTo(window.end);
  }
}

/** The windows a set of records falls into, as a pipeline would judge them with no loss. */
export function expectedWindows(
  records: readonly { ts: number; shard: string; count: number }[],
  windowMs: number,
): JudgedWindow[] {
  const byStart = new Map<number, { total: number; byShard: Record<string, number> }>();
  for (const { ts, shard, count } of records) {
    const start = Math.floor(ts / windowMs) * windowMs;
    let window = byStart.get(start);
    if (window === undefined) {
      window = { total: 0, byShard: {} };
      byStart.set(start, window);
    }
    window.total += count;
    window.byShard[shard] = (window.byShard[shard] ?? 0) + count;
  }
  return [...byStart.entries()]
    .sort(([a], [b]) => a - b)
    .map(([start, { total, byShard }]) => ({
      start,
      end: start + windowMs,
      total,
      byShard: sortKeys(byShard),
    }));
}

function sortKeys(record: Record<string, number>): Record<string, number> {
  return Object.fromEntries(
    Object.entries(record).sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)),
  );
}

/** Count records in event-time order: `perSecond` a second from `startMs`, `shards` shards. */
export function countRecords(
  startMs: number,
  seconds: number,
  perSecond: number,
  shards: number,
): CountRecord[] {
  const records: CountRecord[] = [];
  for (let i = 0; i < seconds * perSecond; i++) {
    records.push({
      ts: startMs + Math.floor((i * 1000) / perSecond),
      shard: `s-${(i * 7) % shards}`,
      count: (i % 5) + 1,
    });
  }
  return records;
}

/**
 * Reads a topic back with kcat to its end: per partition, its `key<TAB>value` lines in
 * offset order (for checking what a test wrote before judging it).
 */
export async function readLinesWithKcat(topic: string): Promise<Map<number, string[]>> {
  const bootstrap = brokerList().join(',');
  const format = '%p\t%k\t%s\n';
  const { stdout } = await run(
    'kcat',
    ['-C', '-b', bootstrap, '-t', topic, '-o', 'beginning', '-e', '-q', '-f', format],
    { timeout: 60_000, maxBuffer: 1 << 28 },
  );
  const byPartition = new Map<number, string[]>();
  for (const line of stdout.split('\n')) {
    if (line === '') continue;
    const tab = line.indexOf('\t');
    const partition = Number(line.slice(0, tab));
    let lines = byPartition.get(partition);
    if (lines === undefined) byPartition.set(partition, (lines = []));
    lines.push(line.slice(tab + 1));
  }
  return byPartition;
}
