import { access, constants } from 'node:fs/promises';
import type { Readable } from 'node:stream';
import { metricsHost, metricsPort } from '../exporter/metrics-address.js';
import { startMetricsExporter } from '../exporter/metrics-exporter.js';
import { describeKafkaEvent } from '../ingest/kafka/events.js';
import { KafkaOffsetsSource } from '../ingest/kafka/offsets-source.js';
import {
  fileRecordSource,
  kafkaRecordSource,
  scenarioRecordSource,
  type RecordSource,
} from '../ingest/record-source.js';
import { Judge } from '../judge/judge.js';
import type { JudgeSettings } from '../judge/judge-settings.js';
import { builtJudgeThreadEntry, JudgeThread } from './judge-thread.js';
import type { Incident } from '../judge/judgement.js';
import type { RecordedSettings } from '../record/recording-line.js';
import { defaultRecordingMaxBytes, WindowRecorder } from '../record/window-recorder.js';
import { runScenario, type ScenarioRun } from '../scenario/scenario-run.js';
import { feedRecords } from './record-feed.js';
import {
  buildPipeline,
  readKeySettings,
  recordedSettingsOf,
  type RunSettings,
} from './run-settings.js';
import type { RejectionReason } from '../window/count-record.js';
import { UsageError } from '../errors/usage-error.js';
import { ShardUniverse } from '../window/shard-universe.js';
import { jsonSafe, terminalMessage, terminalSafe } from '../window/visible-text.js';
import type { Command, CommandIO } from './command.js';
import { summaryOf } from './command-list.js';
import { readUniverseOptions, readWindowOptions, windowOptionSpec } from './window-options.js';
import { judgeOptionSpec, readJudgeSettings } from './judge-options.js';
import { byteSize, duration, parseOptions, refuseGiven } from './option-values.js';
import {
  kafkaSourceOptionSpec,
  parseKafkaSource,
  type ParsedKafkaSource,
} from './kafka-options.js';
import { mergeOptionSpec, readMergeSettings } from './merge-options.js';
import {
  prometheusOptionSpec,
  readPrometheusOptions,
  type ParsedPrometheusSource,
} from './prometheus-options.js';
import { PrometheusSource } from '../ingest/prometheus/prometheus-source.js';
import { MergeMetrics, SummaryMergeSource, type MergeSettings } from './watch-merge.js';
import { durationOption, scenarioNamed, seedOption, startOption } from './scenario-options.js';
import { chooseWatchOutput, WatchScreen } from './watch-screen.js';
import { watchHelp } from './watch-help.js';
import { emptyRunVerdict, summary } from './watch-summary.js';
import { LineOutput } from './line-output.js';

/** The options parseArgs accepts; exported so a test can hold --help to naming every one. */
export const watchOptions = {
  input: { type: 'string' },
  scenario: { type: 'string' },
  ...kafkaSourceOptionSpec,
  'session-timeout': { type: 'string' },
  ...mergeOptionSpec,
  ...prometheusOptionSpec,
  seed: { type: 'string' },
  duration: { type: 'string' },
  start: { type: 'string' },
  pace: { type: 'string' },
  ...windowOptionSpec,
  'offsets-only': { type: 'boolean' },
  ...judgeOptionSpec,
  'no-keys': { type: 'boolean' },
  'key-counters': { type: 'string' },
  'key-registers': { type: 'string' },
  'key-simulations': { type: 'string' },
  record: { type: 'string' },
  'record-max-size': { type: 'string' },
  'no-ui': { type: 'boolean' },
  'judge-inline': { type: 'boolean' },
  'metrics-port': { type: 'string' },
  'metrics-host': { type: 'string' },
  'no-metrics': { type: 'boolean' },
} as const;

type Values = ReturnType<typeof parseOptions<typeof watchOptions>>;

/** Where the records come from, once the options are read. */
type SourcePlan =
  | { readonly kind: 'file'; readonly path: string }
  | {
      readonly kind: 'kafka';
      readonly kafka: ParsedKafkaSource;
      /** `--session-timeout`, ms; undefined for the source's default. */
      readonly sessionTimeoutMs: number | undefined;
    }
  | { readonly kind: 'offsets'; readonly kafka: ParsedKafkaSource }
  | { readonly kind: 'merge'; readonly merge: MergeSettings }
  | { readonly kind: 'prometheus'; readonly prometheus: ParsedPrometheusSource }
  | {
      readonly kind: 'scenario';
      readonly name: string;
      readonly seed: number;
      readonly startMs: number;
      readonly durationMs: number;
      readonly pace: 'real-time' | 'fast';
      /** The seeded run: its universe is the one windows count under. */
      readonly run: ScenarioRun;
    };

/** Everything `watch` needs, validated before any record is read. */
interface WatchPlan {
  readonly source: SourcePlan;
  /** Null for --shard-from partition: the topic's partitions, read when connecting. */
  readonly universe: ShardUniverse | null;
  /** Windows, clock bound, judge and key analysis. */
  readonly run: RunSettings;
  readonly recordPath: string | undefined;
  /** `--record-max-size`: the recording rotates to FILE.1 past this size. */
  readonly recordMaxBytes: number;
  readonly noUi: boolean;
  /** --judge-inline: judge on the reading thread even when a second thread could. */
  readonly judgeInline: boolean;
  /** Where to serve metrics; null with --no-metrics. */
  readonly metrics: { readonly host: string; readonly port: number } | null;
}

/** How often a live source's windows are checked against the wall clock. */
const livePollMs = 250;

export const watchCommand: Command = {
  name: 'watch',
  summary: summaryOf('watch'),
  help: watchHelp,
  async run(argv, io) {
    return watch(await readPlan(parseOptions(argv, watchOptions), io), io);
  },
};

async function readPlan(values: Values, io: CommandIO): Promise<WatchPlan> {
  const sourcesGiven = [values.input, values.scenario, values.brokers, values.prometheus].filter(
    (v) => v !== undefined,
  );
  if (sourcesGiven.length > 1 && values.prometheus !== undefined) {
    throw new UsageError(
      '--prometheus',
      values.prometheus,
      'cannot be combined with --input, --scenario or --brokers (one source at a time)',
    );
  }
  if (sourcesGiven.length > 1 && values.brokers !== undefined) {
    throw new UsageError(
      '--brokers',
      values.brokers,
      'cannot be combined with --input or --scenario (one source at a time)',
    );
  }
  if (values.input !== undefined && values.scenario !== undefined) {
    throw new UsageError(
      '--input',
      values.input,
      'cannot be combined with --scenario (one source at a time)',
    );
  }
  if (sourcesGiven.length === 0) {
    throw new UsageError(
      '--input',
      '',
      'is missing: give --input FILE|-, --scenario NAME, --brokers H:P --topic T or --prometheus URL (see --help)',
    );
  }
  if (
    values['session-timeout'] !== undefined &&
    (values.brokers === undefined || values.merge !== undefined)
  ) {
    throw new UsageError(
      '--session-timeout',
      values['session-timeout'],
      'applies only to a Kafka source (--brokers H:P --topic T)',
    );
  }
  const { windowMs, hopMs, latenessMs, maxAheadMs, maxShards } = readWindowOptions(values);
  if (values['offsets-only'] === true && values.brokers === undefined) {
    throw new UsageError('--offsets-only', '', 'needs --brokers H:P and --topic T');
  }
  // Also refuses a Prometheus option given without --prometheus.
  const prometheus = readPrometheusOptions(values, { env: io.env });

  let source: SourcePlan;
  let universe: ShardUniverse | null;
  let sharesDeclared: boolean;
  if (values.scenario !== undefined) {
    refuseGiven(
      values,
      ['shards', 'shard-map'],
      'cannot be combined with --scenario (the scenario declares its shards)',
    );
    const definition = scenarioNamed(values.scenario);
    const pace = values.pace ?? 'real-time';
    if (pace !== 'real-time' && pace !== 'fast') {
      throw new UsageError('--pace', pace, 'is not real-time or fast');
    }
    const durationMs = durationOption(
      values.duration,
      pace === 'fast' ? definition.suggestedDurationMs : Number.POSITIVE_INFINITY,
    );
    // A fast replay is of traffic that has already happened: it ends at about now, so no
    // window is stamped ahead of the wall clock. In real time the run starts now.
    const now = Date.now();
    const startMs = startOption(
      values.start,
      Math.floor((pace === 'fast' ? now - durationMs : now) / windowMs) * windowMs,
    );
    const seed = seedOption(values.seed);
    const run = runScenario(definition, { seed, startMs, durationMs });
    source = { kind: 'scenario', name: definition.name, seed, startMs, durationMs, pace, run };
    universe = run.universe;
    sharesDeclared = true;
  } else {
    refuseGiven(values, ['seed', 'duration', 'start', 'pace'], 'applies only to --scenario');
    if (values.merge !== undefined || values['merge-deadline'] !== undefined) {
      const { settings, warnings } = readMergeSettings(values, { env: io.env });
      for (const warning of warnings) io.stderr.write(`shardwise watch: warning: ${warning}\n`);
      source = { kind: 'merge', merge: settings };
    } else if (prometheus !== null) {
      for (const warning of prometheus.warnings) {
        io.stderr.write(`shardwise watch: warning: ${warning}\n`);
      }
      source = { kind: 'prometheus', prometheus };
    } else if (values.brokers !== undefined) {
      const kafka = parseKafkaSource(values, { env: io.env });
      for (const warning of kafka.warnings)
        io.stderr.write(`shardwise watch: warning: ${warning}\n`);
      const sessionTimeout = values['session-timeout'];
      if (values['offsets-only'] === true) {
        source = { kind: 'offsets', kafka };
        checkOffsetsOnly(values);
      } else {
        source = {
          kind: 'kafka',
          kafka,
          sessionTimeoutMs:
            sessionTimeout === undefined
              ? undefined
              : duration('--session-timeout', sessionTimeout),
        };
      }
    } else {
      const path = values.input as string;
      if (path !== '-') await checkReadable(path);
      source = { kind: 'file', path };
    }
    ({ universe, sharesDeclared } = await readUniverseOptions(values, {
      maxShards,
      byPartition:
        source.kind === 'offsets' ||
        (source.kind === 'kafka' && source.kafka.shardFrom.kind === 'partition'),
    }));
  }

  const judge = readJudgeSettings(values, { sharesDeclared, hopMs });
  const recordMaxBytes =
    values['record-max-size'] === undefined
      ? defaultRecordingMaxBytes
      : byteSize('--record-max-size', values['record-max-size'], 4096);
  if (values['record-max-size'] !== undefined && values.record === undefined) {
    throw new UsageError('--record-max-size', values['record-max-size'], 'needs --record FILE');
  }
  const keys = readKeySettings(values);
  const metricsHostValue = metricsHost(values['metrics-host']);
  const metricsPortValue = metricsPort(values['metrics-port']);
  if (values['no-metrics'] === true) {
    refuseGiven(values, ['metrics-port', 'metrics-host'], 'cannot be combined with --no-metrics');
  }
  return {
    source,
    universe,
    run: { windowMs, hopMs, latenessMs, maxAheadMs, judge, keys },
    recordPath: values.record,
    recordMaxBytes,
    noUi: values['no-ui'] === true,
    judgeInline: values['judge-inline'] === true,
    metrics:
      values['no-metrics'] === true ? null : { host: metricsHostValue, port: metricsPortValue },
  };
}

/** --offsets-only reads end offsets only: no group, no start, no records, no keys. */
function checkOffsetsOnly(values: Values): void {
  refuseGiven(values, ['group', 'from', 'shard-from', 'shards', 'shard-map'], (name) =>
    name === 'shards' || name === 'shard-map'
      ? "cannot be combined with --offsets-only (the shards are the topic's partitions)"
      : 'cannot be combined with --offsets-only (no message is read)',
  );
}

async function checkReadable(path: string): Promise<void> {
  try {
    await access(path, constants.R_OK);
  } catch (error) {
    throw new UsageError('--input', path, `cannot be read (${(error as Error).message})`, {
      cause: error,
    });
  }
}

/** Runs the pipeline over the source; resolves to the exit code. */
async function watch(plan: WatchPlan, io: CommandIO): Promise<number> {
  // Set once the live screen is up; until then Kafka's events go to stderr as lines.
  let screen: WatchScreen | null = null;
  const kafkaEvent = (event: Parameters<typeof describeKafkaEvent>[0]) => {
    // The screen shows the connection instead: a stderr line would scribble over it.
    if (screen !== null) return screen.kafkaEvent(event);
    const line = describeKafkaEvent(event);
    if (line) io.stderr.write(`shardwise watch: ${terminalSafe(line)}\n`);
  };
  // Kafka connects first: unreachable brokers fail here (exit 1), and --shard-from
  // partition takes its universe from the topic's partition count.
  // --offsets-only: the topic's partitions are the shards, and it may gain some mid-run.
  const grown: { universe: ShardUniverse | null } = { universe: null };
  // A Prometheus source's notes (gaps, resets, incomplete windows) would scribble over the screen.
  const sourceNote = (text: string) => {
    if (screen === null) io.stderr.write(`shardwise watch: ${terminalMessage(text)}\n`);
  };
  const recordSource =
    plan.source.kind === 'merge'
      ? null
      : openSource(
          plan,
          io,
          kafkaEvent,
          (count) => grown.universe?.growNumbered(count),
          sourceNote,
        );
  const opened = recordSource === null ? null : await recordSource.open();
  const universe = plan.universe ?? ShardUniverse.ofCount(opened?.partitions ?? 1);
  grown.universe = universe;
  // Built before the record file is opened, so a bad setting leaves no file behind.
  const judge = new Judge(universe, plan.run.judge);
  const thread = plan.judgeInline ? null : judgeThreadFor(universe, plan.run.judge);
  const pipeline = buildPipeline(
    universe,
    thread ?? judge,
    plan.run,
    recordSource === null ? true : recordSource.live,
  );
  const mergeSource =
    plan.source.kind === 'merge'
      ? new SummaryMergeSource({
          settings: plan.source.merge,
          universe,
          pipeline,
          windowMs: plan.run.windowMs,
          onIncomplete: (window) => {
            const text = `window ${new Date(window.start).toISOString()} judged incomplete: partitions ${window.coverage.missing.join(', ')} of ${window.coverage.partitions} missing`;
            if (screen !== null) {
              screen.kafkaEvent({
                type: 'client-log',
                level: 'warn',
                namespace: 'merge',
                message: text,
              });
            } else io.stderr.write(`shardwise watch: ${text}\n`);
          },
          onRefused: (reason) => {
            if (screen === null) {
              io.stderr.write(`shardwise watch: summary refused: ${terminalSafe(reason)}\n`);
            }
          },
        })
      : null;
  const source: RecordSource = mergeSource ?? recordSource!;
  const start = opened ?? (await source.open());
  const resumedThrough = start.judgedThrough;
  // Bound before the record file is opened too: a port in use is a bad setting.
  const exporter =
    plan.metrics === null
      ? null
      : await startMetricsExporter({
          pipeline,
          settings: plan.run.judge,
          windowMs: plan.run.windowMs,
          latenessMs: plan.run.latenessMs,
          ...plan.metrics,
        });
  let recorder: WindowRecorder | null;
  try {
    recorder =
      plan.recordPath === undefined
        ? null
        : openRecording(
            plan.recordPath,
            recordedSettingsOf(plan.run, recordedSource(plan), plan.universe?.declared ?? true),
            plan.recordMaxBytes,
          );
  } catch (error) {
    await exporter?.close();
    throw error;
  }
  const choice = chooseWatchOutput(
    plan.noUi,
    io,
    plan.source.kind === 'file' && plan.source.path === '-',
  );
  if (choice.kind === 'lines' && choice.notice !== null) io.stderr.write(`${choice.notice}\n`);
  if (exporter !== null) {
    io.stderr.write(`shardwise watch: metrics at ${exporter.url} (also /healthz, /readyz)\n`);
  }
  const connected =
    plan.source.kind === 'kafka' ||
    plan.source.kind === 'merge' ||
    plan.source.kind === 'offsets' ||
    plan.source.kind === 'prometheus';
  if (choice.kind === 'screen') {
    try {
      screen = await WatchScreen.open({
        pipeline,
        universe,
        io,
        keys: choice.keys,
        ownsKeys: choice.ownsKeys,
        sourceState: connected ? 'connected' : 'reading',
        judgedThrough: resumedThrough,
        context: {
          sourceLabel:
            plan.source.kind === 'scenario'
              ? `scenario ${plan.source.name} (seed ${plan.source.seed})`
              : source.label,
          windowMs: plan.run.windowMs,
          latenessMs: plan.run.latenessMs,
          confirm: plan.run.judge.confirm,
          clear: plan.run.judge.clear,
          maxDetectable: plan.run.judge.maxDetectable,
        },
      });
    } catch (error) {
      recorder?.close();
      await exporter?.close();
      throw error;
    }
  }
  const output = new LineOutput(io.stdout);
  const incidents: { opened: Incident[]; cleared: number; openAtEnd: readonly Incident[] } = {
    opened: [],
    cleared: 0,
    openAtEnd: [],
  };
  let windows = 0;
  let retired = 0;
  const mergeMetrics =
    mergeSource === null || exporter === null
      ? null
      : new MergeMetrics(exporter.metrics.registry, mergeSource);
  pipeline.events.on('window judged', ({ window, judgement: verdict }) => {
    // A merged window's verdict also says which source partitions it rests on.
    const coverage = source.coverageOf?.(window);
    const merged = mergeSource?.coverageOf(window);
    if (merged !== undefined) mergeMetrics?.observe(merged);
    const judgement = coverage === undefined ? verdict : { ...verdict, coverage };
    // After a resume with sliding windows, windows already judged by the last run close again.
    if (resumedThrough !== null && window.end <= resumedThrough) return;
    windows++;
    retired += judgement.retiredShards ?? 0;
    incidents.openAtEnd = judgement.incidents;
    // The screen subscribes itself; the lines are for everything else.
    if (screen === null) output.write(jsonSafe(JSON.stringify(judgement)));
    recorder?.record(window, judgement, universe);
    // Last, once the verdict is out: Kafka may now commit past this window's records.
    source.markJudgedUpTo(window.end);
  });
  // Where each kind of rejection first happened, for the summary (file sources have lines).
  const firstRejected = new Map<RejectionReason, number>();
  pipeline.events.on('record rejected', ({ reason, line }) => {
    if (line !== undefined && !firstRejected.has(reason)) firstRejected.set(reason, line);
  });
  pipeline.events.on('incident opened', (incident) => incidents.opened.push(incident));
  pipeline.events.on('incident cleared', () => incidents.cleared++);
  pipeline.events.on('source stalled', ({ quietMs }) => {
    if (screen !== null) return;
    io.stderr.write(
      `shardwise watch: no records for ${Math.round(quietMs / 1000)} s; windows now close on the wall clock\n`,
    );
  });

  let interrupted = false;
  const interrupt = () => {
    interrupted = true;
    // Judge what is due before closing Kafka: a window judged after close would never be
    // committed (its verdict may come back from the judging thread a little later).
    if (connected) pipeline.tick();
    void pipeline
      .settled()
      .catch(() => undefined)
      .then(() => source.close());
    screen?.quit();
  };
  process.once('SIGINT', interrupt);
  process.once('SIGTERM', interrupt);
  output.onFailure(interrupt);
  screen?.onQuit(() => {
    if (!interrupted) interrupt();
  });
  const poll = source.live ? setInterval(() => pipeline.tick(), livePollMs) : null;
  try {
    await feedRecords(source, start, pipeline, {
      afterBatch: async (batch) => {
        await output.drained();
        if (screen !== null) await screen.batchDone(batch);
      },
      stopped: () => interrupted,
    });
    // An interrupted run keeps the windows already due and drops the partial ones: a
    // half-filled window would read as a lull.
    if (interrupted) {
      if (!connected) pipeline.tick();
    } else if (!connected) {
      pipeline.finish();
    }
    await pipeline.settled();
    // Read to its end, the run stays on the screen until the user quits.
    if (screen !== null && !interrupted) await screen.untilQuit();
  } finally {
    // First, so the terminal is back whatever fails next.
    await screen?.close();
    if (poll !== null) clearInterval(poll);
    process.removeListener('SIGINT', interrupt);
    process.removeListener('SIGTERM', interrupt);
    recorder?.close();
    await exporter?.close();
    await thread?.close();
  }
  await output.drained();
  output.check();
  io.stderr.write(summary(windows, pipeline, incidents, interrupted, retired, firstRejected));
  return emptyRunVerdict(pipeline, interrupted || connected, io);
}

/**
 * A judge on a second thread for a declared universe when the built worker is at hand (see
 * judge-thread.ts), else null: the Judge on this thread judges.
 */
function judgeThreadFor(universe: ShardUniverse, settings: JudgeSettings): JudgeThread | null {
  const description = universe.describe();
  const entry = builtJudgeThreadEntry();
  if (description === null || entry === null) return null;
  return new JudgeThread(description, settings, entry);
}

/** The source a plan names, not yet open (a --merge source is built with the pipeline). */
function openSource(
  plan: WatchPlan,
  io: CommandIO,
  onEvent: (event: Parameters<typeof describeKafkaEvent>[0]) => void,
  onPartitions: (count: number) => void,
  onNote: (text: string) => void,
): RecordSource {
  const source = plan.source;
  switch (source.kind) {
    case 'offsets':
      return new KafkaOffsetsSource({
        ...source.kafka.connection,
        topic: source.kafka.topic,
        hopMs: plan.run.hopMs,
        onPartitions,
        onWarning: (text) =>
          onEvent({ type: 'client-log', level: 'warn', namespace: 'offsets', message: text }),
      });
    case 'file':
      return fileRecordSource(source.path, io.stdin as unknown as Readable);
    case 'scenario':
      return scenarioRecordSource(source.run, source.pace, `scenario ${source.name}`);
    case 'kafka':
      return kafkaRecordSource({
        ...source.kafka.connection,
        topic: source.kafka.topic,
        groupId: source.kafka.groupId,
        from: source.kafka.from,
        shardFrom: source.kafka.shardFrom,
        sessionTimeoutMs: source.sessionTimeoutMs,
        windows: {
          windowMs: plan.run.windowMs,
          hopMs: plan.run.hopMs,
          latenessMs: plan.run.latenessMs,
        },
        onEvent,
      });
    case 'prometheus':
      return new PrometheusSource({
        connection: source.prometheus.connection,
        selector: source.prometheus.selector,
        shardLabel: source.prometheus.shardLabel,
        windows: { windowMs: plan.run.windowMs, hopMs: plan.run.hopMs },
        onNote,
      });
    case 'merge':
      throw new Error('a --merge source is built with its pipeline');
  }
}

function openRecording(path: string, settings: RecordedSettings, maxBytes: number): WindowRecorder {
  try {
    return new WindowRecorder({ path, settings, maxBytes });
  } catch (error) {
    throw new UsageError('--record', path, `cannot be written (${(error as Error).message})`, {
      cause: error,
    });
  }
}

/** How a recording names its source. */
function recordedSource(plan: WatchPlan): Readonly<Record<string, unknown>> {
  const source = plan.source;
  switch (source.kind) {
    case 'file':
      return { input: source.path };
    case 'merge':
      return { merge: source.merge.topic, group: source.merge.groupId ?? null };
    case 'offsets':
      return { topic: source.kafka.topic, offsetsOnly: true };
    case 'prometheus':
      return {
        prometheus: source.prometheus.connection.url,
        series: source.prometheus.selector,
        shardLabel: source.prometheus.shardLabel,
      };
    case 'kafka':
      return {
        topic: source.kafka.topic,
        group: source.kafka.groupId ?? null,
        shardFrom: source.kafka.shardFrom,
      };
    case 'scenario':
      return {
        scenario: source.name,
        seed: source.seed,
        start: new Date(source.startMs).toISOString(),
        durationMs: Number.isFinite(source.durationMs) ? source.durationMs : null,
        pace: source.pace,
      };
  }
}
