import { KafkaSummaryPublisher } from '../ingest/kafka/summary-publisher.js';
import { kafkaGroupRecordSource } from '../ingest/record-source.js';
import { PartialCountSink } from '../partials/partial-count-sink.js';
import { UsageError } from '../errors/usage-error.js';
import type { Command } from './command.js';
import { summaryOf } from './command-list.js';
import {
  kafkaConnectionOptionSpec,
  parseGroup,
  parseKafkaConnection,
  parseShardFrom,
  parseTopic,
} from './kafka-options.js';
import { duration, parseOptions } from './option-values.js';
import { PartialCounting } from './partial-counting.js';

const help = `Usage: shardwise count --brokers H:P --topic T --group G --summaries SUMMARY_TOPIC [options]

One counting instance of a scaled-out watch. Start several with the same --group:
Kafka spreads the partitions of --topic over them and moves them when one stops or
a new one joins. Each counts the partitions it holds into windows, each partition
on its own watermark, and when a window closes on a partition publishes its part
(sparse per-shard counts, the partition and the offset range read, the settings,
an instance id) in a partial summary to SUMMARY_TOPIC. Offsets are committed only
after that summary is acknowledged by all in-sync replicas, and never past a
record of an open window, so a partition that moves is counted on from the last
published window: nothing lost, and a window made twice (a crash between publish
and commit) is dropped by the judge. Judge with:
  shardwise watch --brokers H:P --merge SUMMARY_TOPIC [--group J] [judging options]
Runs until interrupted (SIGINT, SIGTERM), then leaves the group.

Options:
  --brokers H:P[,H:P]      bootstrap brokers (and the security options of watch)
  --topic T                the source topic (must exist)
  --group G                the consumer group the counting instances share (required)
  --summaries TOPIC        where partial summaries go (must exist; not --topic)
  --from latest|earliest   where partitions without a committed position start
                           (default latest)
  --shard-from field|key|partition|field:NAME   as for watch (default field)
  --window D               tumbling window length (default 10s); the judge's --window
                           must be the same
  --lateness D             how long a partition waits for late records after its
                           newest one (default 2s)
  --idle D                 a partition that has caught up and brought nothing for D
                           closes its windows on the newest watermark of the instance's
                           other partitions (default: --window + --lateness)
  --session-timeout D      group session timeout (default 30s): how long a stopped
                           instance keeps its partitions before they move
`;

export const countOptions = {
  ...kafkaConnectionOptionSpec,
  topic: { type: 'string' },
  group: { type: 'string' },
  summaries: { type: 'string' },
  from: { type: 'string' },
  'shard-from': { type: 'string' },
  window: { type: 'string' },
  lateness: { type: 'string' },
  idle: { type: 'string' },
  'session-timeout': { type: 'string' },
} as const;

export const countCommand: Command = {
  name: 'count',
  summary: summaryOf('count'),
  help,
  async run(argv, io) {
    const values = parseOptions(argv, countOptions);
    const { connection, warnings } = parseKafkaConnection(values, { env: io.env });
    for (const warning of warnings) io.stderr.write(`shardwise count: warning: ${warning}\n`);
    const required = (name: 'topic' | 'group' | 'summaries'): string => {
      const value = values[name];
      if (value === undefined) throw new UsageError(`--${name}`, '', 'is required');
      return value;
    };
    const topic = parseTopic(required('topic'));
    const summaryTopic = parseTopic(required('summaries'), '--summaries');
    const groupId = parseGroup(required('group')) as string;
    const from = values.from ?? 'latest';
    if (from !== 'latest' && from !== 'earliest') {
      throw new UsageError('--from', from, 'is not latest or earliest');
    }
    const shardFromText = values['shard-from'] ?? 'field';
    const windowMs = values.window === undefined ? 10_000 : duration('--window', values.window);
    const latenessMs =
      values.lateness === undefined
        ? 2_000
        : duration('--lateness', values.lateness, { allowZero: true });
    const idleMs =
      values.idle === undefined ? windowMs + latenessMs : duration('--idle', values.idle);
    const sessionTimeoutMs =
      values['session-timeout'] === undefined
        ? 30_000
        : duration('--session-timeout', values['session-timeout']);
    const groupSource = kafkaGroupRecordSource({
      ...connection,
      topic,
      groupId,
      from,
      shardFrom: parseShardFrom(shardFromText),
      windowMs,
      sessionTimeoutMs,
      onEvent: (event) => {
        if (event.type === 'joined') {
          sink.revokeAll();
          io.stderr.write(
            `shardwise count: joined (epoch ${event.epoch}), partitions ${JSON.stringify(event.partitions)}\n`,
          );
        } else if (event.type === 'partition-started') {
          sink.startPartition(event.partition, event.offset, event.judgedThrough, Date.now());
        } else if (event.type === 'commit-failed') {
          io.stderr.write(`shardwise count: commit failed (${event.error})\n`);
        }
      },
    });
    const sink = new PartialCountSink({ windowMs, latenessMs, idleMs });
    const publisher = new KafkaSummaryPublisher({
      ...connection,
      topic,
      summaryTopic,
      windowMs,
      latenessMs,
      shardFromText,
    });
    const counting = new PartialCounting(groupSource, sink, (windows, epoch, partitions) =>
      publisher.publish(windows, epoch, partitions),
    );
    const stop = () => void counting.stop();
    process.once('SIGINT', stop);
    process.once('SIGTERM', stop);
    try {
      const { partitions } = await groupSource.open();
      await publisher.connect();
      io.stderr.write(
        `shardwise count: instance ${publisher.instance} on ${topic} (${partitions} partitions), group ${groupId}\n`,
      );
      await counting.run();
    } finally {
      process.removeListener('SIGINT', stop);
      process.removeListener('SIGTERM', stop);
      await counting.stop();
      await publisher.close();
    }
    io.stderr.write(
      `shardwise count: ${groupSource.group.stats.messages} messages counted, ${publisher.stats.summaries} summaries published\n`,
    );
    return 0;
  },
};
