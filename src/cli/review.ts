import { access, constants, writeFile } from 'node:fs/promises';
import type { Readable } from 'node:stream';
import { describeKafkaEvent } from '../ingest/kafka/events.js';
import { fileRecordSource, kafkaRecordSource } from '../ingest/record-source.js';
import { parseIsoTimestamp } from '../ingest/timestamp.js';
import { Judge } from '../judge/judge.js';
import { judgeSettingsOf } from '../judge/judge-settings.js';
import { describeSpan } from '../judge/time-span.js';
import type { RecordedSettings } from '../record/recording-line.js';
import { readRecording, type RecordedWindow } from '../record/recording-reader.js';
import { htmlReport } from '../review/html-report.js';
import { markdownReport } from '../review/markdown-report.js';
import { renderCharts } from '../review/report-charts.js';
import { formatTime } from '../review/report-text.js';
import { ReviewBuilder } from '../review/review-model.js';
import type { ReviewWindow } from '../review/review-window.js';
import { rejudgeRecording } from '../review/rejudge.js';
import { UsageError } from '../errors/usage-error.js';
import { ShardUniverse } from '../window/shard-universe.js';
import { terminalMessage } from '../window/visible-text.js';
import type { Command, CommandIO } from './command.js';
import { summaryOf } from './command-list.js';
import { judgeOptionNames, judgeOptionSpec, readJudgeSettings } from './judge-options.js';
import {
  kafkaConnectionOptionSpec,
  parseKafkaConnection,
  parseShardFrom,
  parseTopic,
} from './kafka-options.js';
import { duration, parseOptions, refuseGiven } from './option-values.js';
import { ProgressLine } from './progress-line.js';
import { PrometheusSource } from '../ingest/prometheus/prometheus-source.js';
import {
  prometheusOptionSpec,
  prometheusOptionsHelp,
  readPrometheusOptions,
  type ParsedPrometheusSource,
} from './prometheus-options.js';
import { feedRecords } from './record-feed.js';
import {
  buildPipeline,
  readKeySettings,
  reviewSettingsOf,
  type RunSettings,
} from './run-settings.js';
import { terminalSafe } from '../ui/terminal-text.js';
import {
  maxAheadHelp,
  readUniverseOptions,
  readWindowOptions,
  windowOptionSpec,
} from './window-options.js';

const help = `Usage: shardwise review (--recording FILE... | --input FILE|- | --brokers H:P --topic T --since TIME [--until TIME] |
                        --prometheus URL --series SELECTOR --shard-label NAME --since TIME [--until TIME]) [options]

A post-incident review: reads judged windows (or records, and judges them), finds the
episodes (a shard flagged with the same finding in consecutive windows, or a
window-wide finding holding), and writes a self-contained HTML report and a
Markdown summary. Verdicts are statistical evidence under the null model they
name, not certainty; operators decide.

Input (exactly one):
  --recording FILE        a recording made by watch --record FILE; repeat it for a
                          rotated one, oldest first (--recording FILE.1 --recording
                          FILE). Its verdicts are shown as recorded unless a judging
                          option or --window is given: then every window is judged
                          again on its recorded count vector. A torn last line (a
                          run stopped mid-write) is skipped with a note.
  --input FILE|-          a record file (JSON Lines or CSV count reports, count
                          batches or request events, as watch reads), judged afresh
                          through the same pipeline as watch
  --brokers H:P[,H:P] --topic T --since TIME [--until TIME]
                          the records of a Kafka topic whose message timestamps
                          lie in [--since, --until) (ISO-8601 with a zone, or
                          epoch ms; --until defaults to now), found by timestamp
                          and judged afresh. Offsets are never committed: the
                          review moves no consumer group's position.
    --shard-from field|key|partition|field:NAME
                          where a record's shard comes from (default field)
    --tls, --tls-ca FILE, --tls-cert FILE, --tls-key FILE, --sasl-mechanism M,
    --sasl-username NAME, --sasl-password-file FILE   as for watch (the password
                          may also come from SHARDWISE_SASL_PASSWORD)
${prometheusOptionsHelp}
    --since TIME [--until TIME]
                          the counters' rise in [--since, --until) (ISO-8601 with a
                          zone, or epoch ms; --until defaults to now): each rise
                          between two stored samples is one record stamped at the
                          later one (a drop is a counter reset, counted from
                          zero), the last sample before --since (5 minutes back at
                          most) the baseline. Read in chunks of about 1e6 samples
                          (series x chunk / scrape interval), far under the
                          server's query.max-samples; scrape gaps (a series more
                          than 3 of its scrape intervals behind the others) and
                          counter resets are listed in the report's notes.

Shard universe (--input, Kafka and Prometheus; a recording carries its own):
  --shards N|A..B|a,b,c   declare the shards, equal shares
  --shard-map FILE        declare the shards with relative weights
  --max-shards N          most shards accepted (default 100000); without
                          --shards or --shard-map, ids that stop reporting
                          retire as in watch

Windows:
  --window D              window length (default 10s). On a recording: a whole
                          multiple of its window length, merging that many
                          consecutive windows (a recording keeps one count vector
                          per window, so windows can be merged, never cut; a
                          recording of sliding windows cannot be re-windowed)
  --hop D                 distance between window starts (--input and Kafka only)
  --lateness D            how long to wait for late records (default 2s; --input
                          and Kafka only)
${maxAheadHelp}
                          (--input and Kafka only)
  Records are windowed as watch windows them: event time per source partition,
  long stretches without records skipped as gaps and listed in the report.

Keys (--input and Kafka only): request events with "key" get the same key
analysis as in watch (hot key, placement, moved); --no-keys turns it off.

Judging (on a recording, absent options keep the recorded settings):
  --alpha A               significance level of every test (default 0.001)
  --null uniform|map|baseline
                          the shares expected under random placement (map needs a
                          shard map, a scenario's recording, or recorded shares)
  --spread exact|robust|auto
                          how over-dispersed counts are judged (default auto)
  --min-excess X, --min-dispersion F, --max-detectable F, --baseline N,
  --confirm K, --clear J, --max-flagged N
                          as for watch

Output:
  --out FILE              the HTML report: one file, inline SVG charts, no script
                          and no external reference, readable offline and printable
  --markdown FILE|-       the Markdown summary (summary, episodes, method); - is
                          standard output. With neither --out nor --markdown the
                          Markdown summary goes to standard output.

Report: the summary; the episodes (finding, shard, start, end, duration, peak
relative load, requests above the fair share and beyond the chance ceiling or
floor); charts of the fullest shard against the chance ceiling, a heat strip of
the most loaded shards, the load spread at the peak window beside the spread
random placement predicts, p-values over time on a log scale and the findings
over time; and the method (null model, alpha, window, assumptions, cautions).

Progress goes to stderr while reading, only when stderr is a terminal. Exit
status: 0 when the report was written, 2 for bad usage, 1 for a failure while
running (a stack trace only with --debug).
`;

/** The options parseArgs accepts; exported so a test can hold --help to naming every one. */
export const reviewOptions = {
  recording: { type: 'string', multiple: true },
  input: { type: 'string' },
  ...kafkaConnectionOptionSpec,
  ...prometheusOptionSpec,
  topic: { type: 'string' },
  since: { type: 'string' },
  until: { type: 'string' },
  'shard-from': { type: 'string' },
  ...windowOptionSpec,
  'no-keys': { type: 'boolean' },
  ...judgeOptionSpec,
  out: { type: 'string' },
  markdown: { type: 'string' },
} as const;

type Values = ReturnType<typeof parseOptions<typeof reviewOptions>>;

export const reviewCommand: Command = {
  name: 'review',
  summary: summaryOf('review'),
  help,
  async run(argv, io) {
    return review(parseOptions(argv, reviewOptions), io);
  },
};

/** Where the report goes. */
interface Outputs {
  readonly html: string | null;
  /** A path, '-' for standard output, or null. */
  readonly markdown: string | null;
}

async function review(values: Values, io: CommandIO): Promise<number> {
  const given = [
    values.recording === undefined ? null : '--recording',
    values.input === undefined ? null : '--input',
    values.brokers === undefined ? null : '--brokers',
    values.prometheus === undefined ? null : '--prometheus',
  ].filter((name) => name !== null);
  if (given.length === 0) {
    throw new UsageError(
      '--recording',
      '',
      'is missing: give --recording FILE, --input FILE|-, --brokers H:P --topic T --since TIME or --prometheus URL --series SELECTOR --shard-label NAME --since TIME (see --help)',
    );
  }
  if (given.length > 1) {
    const second = given[1] as string;
    throw new UsageError(
      second,
      String(
        second === '--input'
          ? values.input
          : second === '--brokers'
            ? values.brokers
            : values.prometheus,
      ),
      `cannot be combined with ${given[0]} (one input at a time)`,
    );
  }
  const outputs: Outputs = {
    html: values.out ?? null,
    markdown: values.markdown ?? (values.out === undefined ? '-' : null),
  };
  if (outputs.html !== null && outputs.html === outputs.markdown) {
    throw new UsageError('--markdown', outputs.markdown, 'is the same file as --out');
  }
  // Also refuses a Prometheus option given without --prometheus.
  const prometheus = readPrometheusOptions(values, { env: io.env });
  const progress = new ProgressLine(io.stderr);
  const notes: string[] = [];
  const onNote = (note: string) => notes.push(note);
  let builder: ReviewBuilder | null;
  if (values.recording !== undefined) {
    builder = await reviewRecording(values, values.recording, progress, onNote);
  } else {
    builder = await reviewRecords(values, io, progress, onNote, prometheus);
  }
  progress.done();
  for (const note of notes) {
    io.stderr.write(`shardwise review: note: ${terminalMessage(note)}\n`);
    builder?.note(note);
  }
  if (builder === null) throw new Error('there is no window to review: the input holds none');
  const model = builder.build();
  if (model.windows === 0) throw new Error('there is no window to review: the input holds none');
  const now = new Date();
  if (outputs.html !== null) {
    const charts = await renderCharts(model);
    await writeOutput('--out', outputs.html, htmlReport(model, charts, now));
  }
  if (outputs.markdown === '-') io.stdout.write(markdownReport(model, now));
  else if (outputs.markdown !== null) {
    await writeOutput('--markdown', outputs.markdown, markdownReport(model, now));
  }
  const written = [outputs.html, outputs.markdown === '-' ? null : outputs.markdown].filter(
    (path) => path !== null,
  );
  io.stderr.write(
    `shardwise review: ${model.windows} windows from ${formatTime(model.from)} to ${formatTime(model.to)}, ${model.episodes.length} episodes${written.length > 0 ? `; wrote ${written.join(' and ')}` : ''}\n`,
  );
  return 0;
}

async function writeOutput(option: string, path: string, text: string): Promise<void> {
  try {
    await writeFile(path, text);
  } catch (error) {
    throw new Error(
      `${option} ${JSON.stringify(path)} cannot be written (${(error as Error).message})`,
      {
        cause: error,
      },
    );
  }
}

/** The review of a recording: as recorded, or judged again when a judging option says so. */
async function reviewRecording(
  values: Values,
  paths: readonly string[],
  progress: ProgressLine,
  onNote: (note: string) => void,
): Promise<ReviewBuilder | null> {
  refuseGiven(
    values,
    [
      'shards',
      'shard-map',
      'max-shards',
      'hop',
      'lateness',
      'max-ahead',
      'no-keys',
      'since',
      'until',
      'topic',
      'shard-from',
    ],
    (name) =>
      name === 'hop' || name === 'lateness' || name === 'max-ahead' || name === 'no-keys'
        ? 'applies only to --input and Kafka (a recording has its windows already)'
        : 'applies only to --input and Kafka (a recording carries its own universe and source)',
  );
  for (const path of paths) await checkReadable('--recording', path);
  const windowMs = values.window === undefined ? null : duration('--window', values.window);
  const rejudging =
    windowMs !== null ||
    judgeOptionNames.some((name) => values[name as keyof typeof judgeOptionSpec] !== undefined);
  const recorded = recordedWindows(paths, onNote);
  let builder: ReviewBuilder | null = null;
  let count = 0;
  const describe = `recording ${paths.join(', ')}`;
  if (!rejudging) {
    for await (const window of recorded) {
      builder ??= new ReviewBuilder({
        source: describeRecording(describe, window.settings),
        judgedHere: false,
        settings: reviewSettingsOf(
          window.settings,
          window.settings.windowMs,
          window.settings.hopMs,
        ),
      });
      builder.add(window);
      count++;
      progress.update(
        () => `reading ${paths.join(', ')}: ${count} windows, at ${formatTime(window.start)}`,
      );
    }
    return builder;
  }
  // The first line's settings are the base the options change, so read it before judging.
  const iterator = recorded[Symbol.asyncIterator]();
  const first = await iterator.next();
  if (first.done === true) return null;
  const base = first.value.settings;
  const settings = readJudgeSettings(values, {
    sharesDeclared: first.value.shares !== null || base.null === 'map',
    hopMs: windowMs ?? base.hopMs,
    base: judgeSettingsOf(base),
  });
  const replay: AsyncIterable<RecordedWindow> = {
    [Symbol.asyncIterator]: () => {
      let sentFirst = false;
      return {
        next: async () => {
          if (!sentFirst) {
            sentFirst = true;
            return first;
          }
          return iterator.next();
        },
        return: async () => {
          await iterator.return?.();
          return { value: undefined, done: true };
        },
      };
    },
  };
  const effectiveWindow = windowMs ?? base.windowMs;
  builder = new ReviewBuilder({
    source: `${describeRecording(describe, base)}, judged again${windowMs !== null && windowMs !== base.windowMs ? ` in ${values.window} windows (${windowMs / base.windowMs} recorded windows each)` : ''}`,
    judgedHere: true,
    settings: reviewSettingsOf(
      { ...base, ...settings },
      effectiveWindow,
      windowMs === null ? base.hopMs : windowMs,
    ),
  });
  for await (const window of rejudgeRecording(replay, {
    settings,
    windowMs,
    ...(values.window === undefined ? {} : { windowText: values.window }),
    onNote,
  })) {
    builder.add(window);
    count++;
    progress.update(
      () => `judging ${paths.join(', ')}: ${count} windows, at ${formatTime(window.start)}`,
    );
  }
  return builder;
}

/** The windows of the recording files in order; a file out of order is an error. */
async function* recordedWindows(
  paths: readonly string[],
  onNote: (note: string) => void,
): AsyncGenerator<RecordedWindow, void, undefined> {
  let last = Number.NEGATIVE_INFINITY;
  for (const path of paths) {
    for await (const window of readRecording(path, { onNote })) {
      if (window.start <= last) {
        throw new Error(
          `--recording ${JSON.stringify(path)} line ${window.line}: the window starting ${formatTime(window.start)} is not after the one before; give the files oldest first (FILE.1 before FILE)`,
        );
      }
      last = window.start;
      yield window;
    }
  }
}

function describeRecording(text: string, settings: RecordedSettings): string {
  const source = settings.source ?? {};
  const origin =
    typeof source.scenario === 'string'
      ? `scenario ${source.scenario} (seed ${String(source.seed)})`
      : typeof source.topic === 'string'
        ? `topic ${source.topic}`
        : typeof source.input === 'string'
          ? `file ${source.input}`
          : 'an unnamed source';
  return `${text} (watch on ${origin})`;
}

/** The review of records (a file or a Kafka range), judged through watch's pipeline. */
async function reviewRecords(
  values: Values,
  io: CommandIO,
  progress: ProgressLine,
  onNote: (note: string) => void,
  prometheus: ParsedPrometheusSource | null,
): Promise<ReviewBuilder | null> {
  const { windowMs, hopMs, latenessMs, maxAheadMs, maxShards } = readWindowOptions(values);
  const kafka = values.brokers !== undefined ? kafkaRange(values, io) : null;
  const promRange = prometheus === null ? null : prometheusRange(values, prometheus, io);
  if (kafka === null && promRange === null) {
    refuseGiven(
      values,
      ['since', 'until', 'topic', 'shard-from'],
      'applies only to a Kafka range (--brokers)',
    );
    if (values.input !== '-') await checkReadable('--input', values.input as string);
  }
  const { universe, sharesDeclared } = await readUniverseOptions(values, {
    maxShards,
    byPartition: kafka?.shardFrom.kind === 'partition',
  });
  const run: RunSettings = {
    windowMs,
    hopMs,
    latenessMs,
    maxAheadMs,
    judge: readJudgeSettings(values, { sharesDeclared, hopMs }),
    keys: readKeySettings(values),
  };
  const prometheusSource =
    promRange === null
      ? null
      : new PrometheusSource({
          ...promRange.source,
          windows: { windowMs, hopMs },
          range: { sinceMs: promRange.sinceMs, untilMs: promRange.untilMs },
          onNote,
          onProgress: (text) => progress.update(() => text),
        });
  const source =
    kafka === null
      ? (prometheusSource ??
        fileRecordSource(values.input as string, io.stdin as unknown as Readable))
      : kafkaRecordSource({
          ...kafka.connection,
          topic: kafka.topic,
          from: { kind: 'time', ms: kafka.sinceMs },
          untilMs: kafka.untilMs,
          commitOffsets: false,
          shardFrom: kafka.shardFrom,
          windows: { windowMs, hopMs, latenessMs },
          onEvent: (event) => {
            if (event.type === 'client-log' && event.level !== 'error') return;
            const line = describeKafkaEvent(event);
            if (
              line &&
              event.type !== 'start-positions' &&
              event.type !== 'connected' &&
              event.type !== 'caught-up'
            ) {
              progress.done();
              io.stderr.write(`shardwise review: ${terminalSafe(line)}\n`);
            }
          },
        });
  const start = await source.open();
  const counted = universe ?? ShardUniverse.ofCount(start.partitions);
  const judge = new Judge(counted, run.judge);
  // A file read to its end is a replay, whatever the command; so is a past Kafka range.
  const pipeline = buildPipeline(counted, judge, run, false);
  const builder = new ReviewBuilder({
    source:
      promRange !== null
        ? `Prometheus ${promRange.source.connection.url}, counters ${promRange.source.selector} by label ${promRange.source.shardLabel}, their rise from ${formatTime(promRange.sinceMs)} to ${formatTime(promRange.untilMs)}, judged by this review`
        : kafka === null
          ? values.input === '-'
            ? 'records from standard input, judged by this review'
            : `record file ${values.input}, judged by this review`
          : `topic ${kafka.topic}, messages from ${formatTime(kafka.sinceMs)} to ${formatTime(kafka.untilMs)}, judged by this review (no offsets committed)`,
    judgedHere: true,
    settings: reviewSettingsOf(
      { ...run.judge, declaredUniverse: counted.declared },
      windowMs,
      hopMs,
    ),
  });
  let sharesSize = -1;
  let shares: Float64Array | null = null;
  let windows = 0;
  pipeline.events.on('window judged', ({ window, judgement }) => {
    if (window.counts.length !== sharesSize) {
      sharesSize = window.counts.length;
      shares = unequalShares(counted, sharesSize);
    }
    const reviewed: ReviewWindow = {
      start: window.start,
      end: window.end,
      counts: window.counts,
      total: window.total,
      shardIds: counted.ids,
      shares,
      judgement,
    };
    builder.add(reviewed);
    windows++;
  });
  let outside = 0;
  const label =
    promRange !== null
      ? `Prometheus ${promRange.source.selector}`
      : kafka === null
        ? String(values.input)
        : `topic ${kafka.topic}`;
  try {
    await feedRecords(source, start, pipeline, {
      keep:
        kafka === null
          ? undefined
          : (record) => {
              if (record.ts >= kafka.sinceMs && record.ts < kafka.untilMs) return true;
              outside++;
              return false;
            },
      afterBatch: () =>
        progress.update(
          () =>
            `reading ${terminalSafe(label)}: ${pipeline.totals.recordsSeen} records, ${windows} windows judged`,
        ),
    });
    pipeline.finish();
  } finally {
    await source.close();
  }
  const totals = pipeline.totals;
  const rejected = Object.values(totals.rejected).reduce((sum, n) => sum + (n ?? 0), 0);
  if (rejected > 0) {
    onNote(
      `${rejected} records were rejected (${Object.entries(totals.rejected)
        .map(([reason, n]) => `${reason} ${n}`)
        .join(', ')})`,
    );
  }
  if (outside > 0) {
    onNote(`${outside} records whose own ts lies outside --since/--until were left out`);
  }
  if (totals.gapCount > 0) {
    onNote(
      `${totals.gapCount} stretch${totals.gapCount === 1 ? '' : 'es'} without records (${totals.quietWindowsSkipped} windows) skipped as gaps, not judged: ${totals.gaps
        .map(
          (gap) =>
            `${formatTime(gap.start)} to ${formatTime(gap.end)} (${describeSpan(gap.end - gap.start)})`,
        )
        .join('; ')}${totals.gapCount > totals.gaps.length ? '; and more' : ''}`,
    );
  }
  return windows === 0 ? null : builder;
}

function unequalShares(universe: ShardUniverse, size: number): Float64Array | null {
  const all = universe.shares;
  for (let shard = 1; shard < size; shard++) {
    if (all[shard] !== all[0]) return all.slice(0, size);
  }
  return null;
}

/** --since/--until for a Prometheus source; --topic and --shard-from do not apply. */
function prometheusRange(values: Values, source: ParsedPrometheusSource, io: CommandIO) {
  for (const warning of source.warnings) io.stderr.write(`shardwise review: warning: ${warning}\n`);
  refuseGiven(values, ['topic', 'shard-from'], 'applies only to a Kafka range (--brokers)');
  return { source, ...timeRange(values, '--prometheus') };
}

/** --since (required with `source`) and --until (default now), the range to review. */
function timeRange(values: Values, source: '--prometheus' | '--brokers') {
  if (values.since === undefined) {
    throw new UsageError(
      '--since',
      '',
      `is required with ${source} (the start of the range to review)`,
    );
  }
  const sinceMs = instant('--since', values.since);
  const untilMs = values.until === undefined ? Date.now() : instant('--until', values.until);
  if (untilMs <= sinceMs) {
    throw new UsageError('--until', values.until ?? 'now', `is not after --since ${values.since}`);
  }
  return { sinceMs, untilMs };
}

function kafkaRange(values: Values, io: CommandIO) {
  const { connection, warnings } = parseKafkaConnection(
    { ...values, group: undefined, from: undefined },
    { env: io.env },
  );
  for (const warning of warnings) io.stderr.write(`shardwise review: warning: ${warning}\n`);
  if (values.topic === undefined) throw new UsageError('--topic', '', 'is required with --brokers');
  const { sinceMs, untilMs } = timeRange(values, '--brokers');
  return {
    connection,
    topic: parseTopic(values.topic),
    sinceMs,
    untilMs,
    shardFrom: parseShardFrom(values['shard-from'] ?? 'field'),
  };
}

function instant(option: string, raw: string): number {
  const text = raw.trim();
  const ms = /^\d+$/.test(text) ? Number(text) : parseIsoTimestamp(text);
  if (!Number.isSafeInteger(Math.floor(ms)) || ms < 0) {
    throw new UsageError(
      option,
      raw,
      'is not a time (ISO-8601 with a zone, e.g. 2025-12-01T10:00:00Z, or epoch milliseconds)',
    );
  }
  return Math.floor(ms);
}

async function checkReadable(option: string, path: string): Promise<void> {
  try {
    await access(path, constants.R_OK);
  } catch (error) {
    throw new UsageError(option, path, `cannot be read (${(error as Error).message})`, {
      cause: error,
    });
  }
}
