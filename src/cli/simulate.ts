import { describeKafkaEvent } from '../ingest/kafka/events.js';
import { produceToKafka } from '../ingest/kafka/sink.js';
import { ScenarioSource } from '../ingest/scenario-source.js';
import type { ScenarioRun } from '../scenario/scenario-run.js';
import type { CommandIO } from './command.js';
import { summaryOf } from './command-list.js';
import {
  kafkaConnectionOptionSpec,
  parseKafkaConnection,
  parseTopic,
  saslPasswordVariable,
} from './kafka-options.js';
import { createWriteStream } from 'node:fs';
import { csvHeader, encodeCsvLine, encodeJsonLine } from '../ingest/encode.js';
import { runScenario, type PlantedEvent } from '../scenario/scenario-run.js';
import { UsageError } from '../errors/usage-error.js';
import type { Command } from './command.js';
import { parseOptions, refuseGiven } from './option-values.js';
import { durationOption, scenarioNamed, seedOption, startOption } from './scenario-options.js';

const help = `Usage: shardwise simulate --scenario NAME (--to FILE|- | --to kafka --brokers H:P --topic T) [options]

Writes the records of a built-in simulated cluster: per-second count reports
(or request events with keys, for zipf-keys, hot-key, biased-partitioner and
keyed-failover) with planted hotspots, dead shards, lulls, uneven spreads, hot
keys and a biased partitioner, for demos, drills and alert tests. The same
scenario, seed, start and duration always give the same records. What was
planted, and when, is printed on stderr.

  --scenario NAME         demo, chance, hotspot, dead-shard, failover,
                          zipf-keys, weighted, diurnal, hot-key,
                          biased-partitioner, keyed-failover
  --to FILE|-             where to write; - is standard output
  --to kafka              produce to Kafka instead: one message per record, keyed
                          by shard, message time = the record's ts, in the pace
                          given by --pace (default fast)
    --brokers H:P[,H:P]   bootstrap brokers; --topic T must exist
    --pace real-time|fast real-time releases each second of traffic once it has
                          passed (a live drill); fast writes as fast as it can
    (TLS and SASL options as for watch: --tls, --tls-ca, --tls-cert, --tls-key,
    --sasl-mechanism, --sasl-username, --sasl-password-file or ${saslPasswordVariable})
  --format jsonl|csv      record format (default: csv when FILE ends in .csv,
                          else jsonl); CSV has the header ts,shard,count,key
  --seed S                0..4294967295 (default 1)
  --duration D            length, e.g. 10m (default: the scenario's suggested
                          length, long enough for every plant to come and go)
  --start TIME            first instant, ISO-8601 with a zone or epoch ms
                          (default: now, rounded down to a whole minute)

Every timestamp is epoch milliseconds. The shards are seat-00..seat-63; judge
the file with
  shardwise watch --input FILE --shards seat-00..seat-63 --no-ui
(the weighted scenario's ring shares are not in the file, so against equal
shares expect "uneven": judge it with a shard map of the ring).
`;

/** The options parseArgs accepts; exported so a test can hold --help to naming every one. */
export const simulateOptions = {
  scenario: { type: 'string' },
  to: { type: 'string' },
  format: { type: 'string' },
  seed: { type: 'string' },
  duration: { type: 'string' },
  start: { type: 'string' },
  pace: { type: 'string' },
  topic: { type: 'string' },
  ...kafkaConnectionOptionSpec,
} as const;

/** Lines are written in blocks of about this many characters. */
const blockSize = 1 << 16;

export const simulateCommand: Command = {
  name: 'simulate',
  summary: summaryOf('simulate'),
  help,
  async run(argv, io) {
    const values = parseOptions(argv, simulateOptions);
    if (values.scenario === undefined) {
      throw new UsageError('--scenario', '', 'is missing: name a built-in scenario (see --help)');
    }
    if (values.to === undefined)
      throw new UsageError('--to', '', 'is missing: give a file or - for stdout');
    const definition = scenarioNamed(values.scenario);
    const to = values.to;
    const format = values.format ?? (to.toLowerCase().endsWith('.csv') ? 'csv' : 'jsonl');
    if (format !== 'jsonl' && format !== 'csv') {
      throw new UsageError('--format', format, 'is not jsonl or csv');
    }
    const seed = seedOption(values.seed);
    const startMs = startOption(values.start, Math.floor(Date.now() / 60_000) * 60_000);
    const durationMs = durationOption(values.duration, definition.suggestedDurationMs);
    const run = runScenario(definition, { seed, startMs, durationMs });
    if (to === 'kafka') return simulateToKafka(values, run, io);
    refuseGiven(values, ['brokers', 'topic', 'pace'], 'applies only to --to kafka');

    const out = to === '-' ? io.stdout : await openForWriting(to);
    const encode = format === 'csv' ? encodeCsvLine : encodeJsonLine;
    let block = format === 'csv' ? `${csvHeader}\n` : '';
    let records = 0;
    for (const record of run.records()) {
      block += encode(record) + '\n';
      records++;
      if (block.length >= blockSize) {
        await write(out, block);
        block = '';
      }
    }
    if (block.length > 0) await write(out, block);
    if (out !== io.stdout) await close(out);

    io.stderr.write(
      [
        `shardwise simulate: ${records} records of scenario ${definition.name} (seed ${seed}) from ${iso(startMs)} to ${iso(startMs + durationMs)}, ${format} to ${to === '-' ? 'stdout' : to}`,
        ...(run.truth.events.length === 0
          ? ['  planted: nothing (pure random placement)']
          : run.truth.events.map((event) => `  planted: ${describe(event)}`)),
      ].join('\n') + '\n',
    );
    return 0;
  },
};

function describe(event: PlantedEvent): string {
  const when =
    event.fullFrom === event.beginsAt && event.fullUntil === event.endsAt
      ? `${iso(event.beginsAt)} to ${iso(event.endsAt)}`
      : `${iso(event.beginsAt)} to ${iso(event.endsAt)} (full strength ${iso(event.fullFrom)} to ${iso(event.fullUntil)})`;
  switch (event.kind) {
    case 'hotspot':
      return `hotspot on ${event.shard}, ${event.factor}x its fair share, ${when}`;
    case 'dead':
      return `dead shard ${event.shard}, its traffic spread over the others, ${when}`;
    case 'failover':
      return `dead shard ${event.shard} failing over to ${event.to}, ${when}`;
    case 'lull':
      return `lull, traffic x ${event.factor}, ${when}`;
    case 'uneven':
      return `uneven spread, shares wobbling by ${event.amplitude}, ${when}`;
    case 'hot key':
      return `hot key ${JSON.stringify(event.key)} on ${event.shard}, ${event.share} of all traffic, ${when}`;
    case 'biased partitioner':
      return `biased partitioner sending ${event.factor}x its fair share of the keys to ${event.shard}, ${when}`;
  }
}

function iso(ms: number): string {
  return new Date(ms).toISOString();
}

/** `--to kafka`: the scenario's records as Kafka messages, batched, in the chosen pace. */
async function simulateToKafka(
  values: ReturnType<typeof parseOptions<typeof simulateOptions>>,
  run: ScenarioRun,
  io: CommandIO,
): Promise<number> {
  const pace = values.pace ?? 'fast';
  if (pace !== 'real-time' && pace !== 'fast')
    throw new UsageError('--pace', pace, 'is not real-time or fast');
  if (values.topic === undefined)
    throw new UsageError('--topic', '', 'is required with --to kafka');
  const { connection, warnings } = parseKafkaConnection(values, { env: io.env });
  for (const warning of warnings) io.stderr.write(`shardwise simulate: warning: ${warning}\n`);
  const stop = new AbortController();
  const interrupt = () => stop.abort();
  process.once('SIGINT', interrupt);
  try {
    const sent = await produceToKafka(new ScenarioSource(run, { pace }).batches(), {
      ...connection,
      topic: parseTopic(values.topic),
      signal: stop.signal,
      onEvent: (event) => {
        const line = describeKafkaEvent(event);
        if (line) io.stderr.write(`shardwise simulate: ${line}\n`);
      },
    });
    io.stderr.write(
      `shardwise simulate: ${sent.records} records in ${sent.requests} produce requests to ${values.topic}\n`,
    );
  } finally {
    process.removeListener('SIGINT', interrupt);
  }
  return 0;
}

/** Opens FILE for writing; failure is a usage error naming --to (the path is the user's to fix). */
async function openForWriting(path: string): Promise<NodeJS.WritableStream> {
  const stream = createWriteStream(path);
  await new Promise<void>((resolve, reject) => {
    stream.once('open', () => resolve());
    stream.once('error', (error) =>
      reject(
        new UsageError('--to', path, `cannot be written (${error.message})`, { cause: error }),
      ),
    );
  });
  return stream;
}

/** Writes a block, waiting for the stream to drain when its buffer is full. */
async function write(stream: NodeJS.WritableStream, text: string): Promise<void> {
  if (stream.write(text)) return;
  await new Promise<void>((resolve, reject) => {
    const onError = (error: Error) => {
      stream.removeListener('drain', onDrain);
      reject(error);
    };
    const onDrain = () => {
      stream.removeListener('error', onError);
      resolve();
    };
    stream.once('drain', onDrain);
    stream.once('error', onError);
  });
}

async function close(stream: NodeJS.WritableStream): Promise<void> {
  await new Promise<void>((resolve, reject) => {
    stream.once('error', reject);
    stream.end(() => resolve());
  });
}
