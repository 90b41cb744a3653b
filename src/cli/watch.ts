import { access, constants } from 'node:fs/promises';
import type { Readable } from 'node:stream';
import { metricsHost, metricsPort } from '../exporter/metrics-address.js';
import { startMetricsExporter } from '../exporter/metrics-exporter.js';
import { describeKafkaEvent } from '../ingest/kafka-events.js';
import { KafkaOffsetsSource } from '../ingest/kafka-offsets-source.js';
import {
  fileRecordSource,
  kafkaRecordSource,
  scenarioRecordSource,
  type RecordSource,
} from '../ingest/record-source.js';
import { Judge } from '../judge/judge.js';
import type { JudgingPipeline } from '../judge/judging-pipeline.js';
import { describeSpan } from '../judge/time-span.js';
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
import { rejectionReasons, type RejectionReason } from '../window/count-record.js';
import { UsageError } from '../window/errors.js';
import { ShardUniverse } from '../window/shard-universe.js';
import { jsonSafe, terminalMessage, terminalSafe } from '../window/visible-text.js';
import type { Command, CommandIO } from './command.js';
import { summaryOf } from './command-list.js';
import { maxAheadHelp, readUniverseOptions, readWindowOptions } from './window-options.js';
import { judgeOptionSpec, readJudgeSettings } from './judge-options.js';
import { byteSize, duration, parseOptions } from './option-values.js';
import {
  kafkaOptionsHelp,
  kafkaSourceOptionSpec,
  parseKafkaSource,
  type ParsedKafkaSource,
} from './kafka-options.js';
import { mergeOptionSpec, mergeOptionsHelp, readMergeSettings } from './merge-options.js';
import {
  prometheusOptionSpec,
  prometheusOptionsHelp,
  readPrometheusOptions,
  type ParsedPrometheusSource,
} from './prometheus-options.js';
import { PrometheusSource } from '../ingest/prometheus/prometheus-source.js';
import { MergeMetrics, SummaryMergeSource, type MergeSettings } from './watch-merge.js';
import { durationOption, scenarioNamed, seedOption, startOption } from './scenario-options.js';
import { chooseWatchOutput, WatchScreen } from './watch-screen.js';

const help = `Usage: shardwise watch (--input FILE|- | --scenario NAME | --brokers H:P --topic T |
                       --brokers H:P --merge SUMMARY_TOPIC |
                       --prometheus URL --series SELECTOR --shard-label NAME) [options]

Judges every closed window of per-shard request counts against random placement.
On a terminal it draws the live screen (keys below); otherwise, and with --no-ui,
it prints one verdict per window as a JSON object on its own line (stdout). A
summary goes to stderr at the end. Verdicts are statistical evidence under the
null model they name, not certainty.

Source (exactly one):
  --input FILE|-          JSON Lines or CSV records (count reports, count batches,
                          request events; CSV needs a ts,shard[,count] header).
                          - reads standard input, which counts as live: while it
                          is quiet, windows close as event time is taken to move
                          on with the wall clock.
  --scenario NAME         a built-in simulated cluster: demo, chance, hotspot,
                          dead-shard, failover, zipf-keys, weighted, diurnal
    --seed S              its seed, 0..4294967295 (default 1)
    --duration D          its length, e.g. 10m (default: with --pace fast the
                          scenario's suggested length, in real time until
                          interrupted)
    --start TIME          its first instant, ISO-8601 with a zone or epoch ms
                          (default: now, rounded down to a window boundary)
    --pace real-time|fast real-time releases each second of traffic once it
                          has passed (default); fast replays at full speed
${prometheusOptionsHelp}
                          Polled every min(window, 5s): each rise of a counter
                          between two scrapes is one record stamped at the later
                          scrape (a drop is a counter reset, counted from zero;
                          a series' first sample is only a baseline), so window
                          totals are the counters' own increase. Records are
                          released in time order once every live series has been
                          scraped past them; verdicts trail the wall clock by the
                          poll, four scrape intervals and 1s (said at start). A
                          series more than 3 of its scrape intervals behind the
                          others is stopped: windows it leaves uncovered carry
                          "coverage" (missing series, complete false) and are said
                          on stderr, as are counter resets.
${kafkaOptionsHelp}
${mergeOptionsHelp}
  --offsets-only          with --brokers and --topic: read no message, only the
                          topic's end offsets (high watermarks), once just after each
                          hop boundary. The shards are the partitions ("0", "1", ...,
                          as --shard-from partition names them) and a partition's
                          load in a window is how far its end offset grew. Offsets
                          are an upper bound on records (transaction markers and
                          compaction); partitions added mid-run join the universe.
  --session-timeout D     group session timeout (default 30s): how long the broker
                          keeps the partitions of a watch that stopped without
                          leaving (killed, host lost), so a restart on the same
                          --group waits at most this long; brokers accept 6s and
                          up by default (group.min.session.timeout.ms)
  With --group, offsets are committed only below windows still open, so a restart
  resumes after the last judged window; --from applies only to partitions the
  group has no position for. With --shard-from partition the universe is the
  topic's partitions.

Shard universe:
  --shards N|A..B|a,b,c   declare the shards, equal shares: a count (ids 0..N-1),
                          a range with a prefix (s-0..s-63) or a list
  --shard-map FILE        declare the shards with relative weights (hash-range
                          sizes, capacities): CSV shard,weight or JSON {"s-0": 1}
  --max-shards N          most shards accepted (default 100000)
  Without either the universe grows as shards report; a shard that never
  reports is then invisible, so the cold tests are off and the output says so.
  Ids that stop reporting retire where a window closes (none for 10 windows,
  or absent while k reporting shards average ln(1000 k)+ requests, or the
  universe is full), so m counts the shards reporting now (retiredShards).
  A scenario declares its own shards and shares.

Windows:
  --window D              window length (default 10s)
  --hop D                 distance between window starts; must divide --window
                          (default: --window, tumbling windows)
  --lateness D            how long to wait for late records (default 2s)
${maxAheadHelp}
  Event time is kept per source partition (each Kafka partition; a file, stdin or
  a scenario is one): a window closes once every partition still reporting has
  passed its end plus the lateness, so records in order within their partition
  are never late. A live partition quiet for a window plus the lateness stops
  holding the others back (the verdict notes say so). A stretch of more than 360
  windows without records is skipped as one gap, reported, not judged.

Judging:
  --alpha A               significance level of every test (default 0.001)
  --min-excess X          a hotspot must also carry at least (1 + X) times its
                          fair share (default 0.2): at huge N a tiny excess is
                          significant and irrelevant
  --min-dispersion F      "uneven" needs the dispersion index phi above F
                          times the cluster's learned phi (F times 1, random
                          placement, in exact mode and while it learns;
                          default 1.5)
  --max-detectable F      "too little traffic" when the smallest detectable
                          hotspot is above F times the fair share (default 3)
  --null uniform|map|baseline
                          shares expected under random placement: equal, from
                          the shard map (or the scenario), or learned from the
                          trailing windows; default map with --shard-map or
                          --scenario, else uniform. With unequal hash ranges
                          only map (or baseline) is honest.
  --baseline N            baseline span in windows (default 60): exponentially
                          weighted counts, shrunk toward the declared shares by
                          a prior worth 100 requests per shard; the declared
                          shares are used until N/4 windows are learned; windows
                          with an open incident or a flagged shard are not
                          learned
  --spread exact|robust|auto
                          exact: multinomial tests as they are; robust: counts
                          divided by the cluster's usual spread, learned over
                          the last 60 windows (mean squared Pearson residual
                          per shard, shards that stand out and flagged ones
                          left out; its upper 95% bound, matched on the tail
                          of clumped counts, floored at 1), so only shards
                          that stand out from it are flagged and "uneven"
                          means beyond it (after 10 windows of learning);
                          auto (default): exact unless the spread test rejects
                          or the learned phi is surely above 1, then robust
                          (with 16 shards or more: with fewer, one hot shard
                          moves every residual)
  --confirm K             consecutive flagged windows that open an incident
                          (default 3); a window with too little traffic does not
                          count, and two in a row break the run. A CUSUM per
                          shard (design excess --min-excess, off at 0) also opens
                          one on a small excess that lasts, at the same false-
                          incident rate
  --clear J               consecutive clean windows that clear it (default 5),
                          or J x 10 windows in a row without a flag
  --max-flagged N         most shards listed per window (default 10)

Keys (request events with "key"; Kafka message keys with --shard-from partition):
  --no-keys               no key analysis
  --key-counters K        heavy-hitter counters per shard and window (Space-Saving;
                          default 16): a key's count is overstated by at most the
                          stated overestimate, at most requests / K
  --key-registers R       distinct-key registers per shard and window (HyperLogLog,
                          a power of two, 16..65536; default 4096): exact up to R/16
                          keys per shard, then a standard error of 1.04/sqrt(R)
  --key-simulations S     most re-placement simulations per window (default 1000;
                          also capped at 2e7 key placements per window)
  Each hot shard gets a cause: "hot key" (one key surely carries at least half of
  its excess), "moved" (a cold shard in the same window lost about what it gained)
  or "placement" (the excess is spread over many keys, or its key count is off).
  Memory per window at most shards x (K x 320 + R + 200) bytes.

Output:
  --no-ui                 JSON Lines on stdout instead of the live screen (also
                          what runs, after a notice on stderr, when stdout is
                          not a terminal)
  --record FILE           also write a recording for shardwise review: each
                          closed window's verdict with its full count vector and
                          the settings, one JSON line per window, written to the
                          file before the next window is judged (no fsync), so a
                          run stopped mid-write leaves at most a torn last line,
                          which review skips with a note. FILE is replaced.
  --record-max-size S     rotate the recording once it would pass S bytes
                          (default 1GiB; e.g. 500MB, 64MiB, at least 4096):
                          FILE moves to FILE.1, replacing an older FILE.1, and a
                          fresh FILE starts with the shard ids again, so disk use
                          stays below 2 x S
  --metrics-port P        serve Prometheus metrics on /metrics, with /healthz and
                          /readyz, on port P (default 9464; 0 picks a free port);
                          the address is printed on stderr
  --metrics-host H        address to bind (default 127.0.0.1: loopback only)
  --no-metrics            no metrics endpoint

Live screen: the verdict on the newest closed window with its evidence, the
flagged and fullest shards drawn against the chance ceiling, the spread of loads
beside what random placement predicts, the recent windows, open incidents and
the source. It stays up when the input ends. Keys:
  p, space                pause / resume (windows are still judged while paused)
  left/right, [ ]         step back / forward through the last 360 windows
  s                       sort the shard rows: evidence, load, shard id
  ?, h                    help (Esc closes it)
  q, Ctrl+C               quit; the terminal is restored

Findings per window: hotspot, cold, uneven, chance, too little traffic; cold and
hotspot together are named pattern "failover". Exit status: 0 when the input
was read to its end (or the run was interrupted; an empty input says so), 2 for
bad usage, 1 for a failure while running or when every record of the input was
rejected (the summary names the first line of each kind of rejection).
`;

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
  shards: { type: 'string' },
  'shard-map': { type: 'string' },
  'max-shards': { type: 'string' },
  window: { type: 'string' },
  hop: { type: 'string' },
  lateness: { type: 'string' },
  'max-ahead': { type: 'string' },
  'offsets-only': { type: 'boolean' },
  ...judgeOptionSpec,
  'no-keys': { type: 'boolean' },
  'key-counters': { type: 'string' },
  'key-registers': { type: 'string' },
  'key-simulations': { type: 'string' },
  record: { type: 'string' },
  'record-max-size': { type: 'string' },
  'no-ui': { type: 'boolean' },
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
  /** Where to serve metrics; null with --no-metrics. */
  readonly metrics: { readonly host: string; readonly port: number } | null;
}

/** How often a live source's windows are checked against the wall clock. */
const livePollMs = 250;

export const watchCommand: Command = {
  name: 'watch',
  summary: summaryOf('watch'),
  help,
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
    for (const name of ['shards', 'shard-map'] as const) {
      if (values[name] !== undefined) {
        throw new UsageError(
          `--${name}`,
          values[name],
          'cannot be combined with --scenario (the scenario declares its shards)',
        );
      }
    }
    const definition = scenarioNamed(values.scenario);
    const pace = values.pace ?? 'real-time';
    if (pace !== 'real-time' && pace !== 'fast') {
      throw new UsageError('--pace', pace, 'is not real-time or fast');
    }
    const startMs = startOption(values.start, Math.floor(Date.now() / windowMs) * windowMs);
    const durationMs = durationOption(
      values.duration,
      pace === 'fast' ? definition.suggestedDurationMs : Number.POSITIVE_INFINITY,
    );
    const seed = seedOption(values.seed);
    const run = runScenario(definition, { seed, startMs, durationMs });
    source = { kind: 'scenario', name: definition.name, seed, startMs, durationMs, pace, run };
    universe = run.universe;
    sharesDeclared = true;
  } else {
    for (const name of ['seed', 'duration', 'start', 'pace'] as const) {
      if (values[name] !== undefined) {
        throw new UsageError(`--${name}`, values[name], 'applies only to --scenario');
      }
    }
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
    for (const name of ['metrics-port', 'metrics-host'] as const) {
      if (values[name] !== undefined) {
        throw new UsageError(`--${name}`, values[name], 'cannot be combined with --no-metrics');
      }
    }
  }
  return {
    source,
    universe,
    run: { windowMs, hopMs, latenessMs, maxAheadMs, judge, keys },
    recordPath: values.record,
    recordMaxBytes,
    noUi: values['no-ui'] === true,
    metrics:
      values['no-metrics'] === true ? null : { host: metricsHostValue, port: metricsPortValue },
  };
}

/** --offsets-only reads end offsets only: no group, no start, no records, no keys. */
function checkOffsetsOnly(values: Values): void {
  for (const name of ['group', 'from', 'shard-from', 'shards', 'shard-map'] as const) {
    if (values[name] !== undefined) {
      throw new UsageError(
        `--${name}`,
        values[name],
        name === 'shards' || name === 'shard-map'
          ? "cannot be combined with --offsets-only (the shards are the topic's partitions)"
          : 'cannot be combined with --offsets-only (no message is read)',
      );
    }
  }
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
  const pipeline = buildPipeline(
    universe,
    judge,
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
      screen = new WatchScreen({
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
    // Judge what is due before closing Kafka: a window judged after close would never be committed.
    if (connected) pipeline.tick();
    void source.close();
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
  }
  await output.drained();
  output.check();
  io.stderr.write(summary(windows, pipeline, incidents, interrupted, retired, firstRejected));
  return emptyRunVerdict(pipeline, interrupted || connected, io);
}

/**
 * A run that counted no record says so: an empty input exits 0 (an empty log is valid),
 * an input whose every record was rejected exits 1 (most likely the wrong file or format,
 * which a script should notice). Interrupted and live-connected runs say nothing more.
 */
function emptyRunVerdict(pipeline: JudgingPipeline, quiet: boolean, io: CommandIO): number {
  const totals = pipeline.totals;
  if (quiet || totals.records > 0) return 0;
  const rejected = Object.values(totals.rejected).reduce((sum, count) => sum + (count ?? 0), 0);
  if (rejected > 0) {
    io.stderr.write(
      `shardwise watch: every record was rejected, nothing was judged (reasons and first lines above)\n`,
    );
    return 1;
  }
  io.stderr.write('shardwise watch: the input held no records, nothing was judged\n');
  return 0;
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

function summary(
  windows: number,
  pipeline: JudgingPipeline,
  incidents: { opened: Incident[]; cleared: number; openAtEnd: readonly Incident[] },
  interrupted: boolean,
  retired: number,
  firstRejected: ReadonlyMap<RejectionReason, number>,
): string {
  const totals = pipeline.totals;
  const rejected = rejectionReasons
    .filter((reason) => (totals.rejected[reason] ?? 0) > 0)
    .map((reason: RejectionReason) => {
      const line = firstRejected.get(reason);
      return `${reason} ${totals.rejected[reason]}${line === undefined ? '' : `, first on line ${line}`}`;
    });
  const rejectedCount = Object.values(totals.rejected).reduce(
    (sum, count) => sum + (count ?? 0),
    0,
  );
  const lateByPartition = [...totals.lateByPartition].sort(([a], [b]) => a - b);
  const lines = [
    `shardwise watch: ${plural(windows, 'window')} judged, ${plural(totals.recordsSeen, 'record')} read, ${plural(totals.load, 'request')} counted`,
    `  rejected: ${rejectedCount}${rejected.length > 0 ? ` (${rejected.join(firstRejected.size > 0 ? '; ' : ', ')})` : ''}; late: ${plural(totals.late, 'request')} in ${plural(totals.lateRecords, 'record')}`,
  ];
  if (lateByPartition.length > 1 || (lateByPartition.length === 1 && lateByPartition[0][0] !== 0)) {
    lines.push(
      `  too late by source partition: ${lateByPartition.map(([partition, count]) => `${partition}: ${count}`).join(', ')}`,
    );
  }
  lines.push(
    `  incidents: ${incidents.opened.length} opened, ${incidents.cleared} cleared, ${incidents.openAtEnd.length} open at the end`,
    ...incidents.opened.map(
      (incident) =>
        `    ${incident.finding} on ${terminalSafe(incident.shard)} since ${incident.since}`,
    ),
  );
  if (totals.gapCount > 0) {
    lines.push(
      `  gaps without records, skipped and not judged: ${totals.gapCount} (${plural(totals.quietWindowsSkipped, 'window')})`,
      ...totals.gaps.map(
        (gap) =>
          `    ${new Date(gap.start).toISOString()} to ${new Date(gap.end).toISOString()} (${describeSpan(gap.end - gap.start)})`,
      ),
    );
    if (totals.gapCount > totals.gaps.length) {
      lines.push(`    and ${totals.gapCount - totals.gaps.length} more`);
    }
  }
  if (retired > 0) lines.push(`  shards retired: ${retired} (ids that stopped reporting left m)`);
  if (interrupted && pipeline.openWindows > 0) {
    lines.push(`  interrupted: ${plural(pipeline.openWindows, 'partial window')} not judged`);
  }
  return lines.join('\n') + '\n';
}

/** "1 window", "2 windows". */
function plural(count: number, noun: string): string {
  return `${count} ${noun}${count === 1 ? '' : 's'}`;
}

/**
 * Lines to a stream with backpressure: writes never wait, and the caller awaits
 * {@link drained} between batches so a slow reader (a pipe into a pager) holds the source
 * back instead of filling memory. A reader that goes away (EPIPE) ends the run quietly;
 * any other write error is kept and rethrown by {@link check}.
 */
class LineOutput {
  private readonly stream: NodeJS.WritableStream;
  private full = false;
  private failed: NodeJS.ErrnoException | null = null;

  constructor(stream: NodeJS.WritableStream) {
    this.stream = stream;
  }

  write(line: string): void {
    if (this.failed !== null) return;
    if (!this.stream.write(line + '\n')) this.full = true;
  }

  /** Calls `handler` once if writing fails; later writes are dropped. */
  onFailure(handler: () => void): void {
    this.stream.once('error', (error: NodeJS.ErrnoException) => {
      this.failed = error;
      handler();
    });
  }

  async drained(): Promise<void> {
    if (!this.full || this.failed !== null) return;
    this.full = false;
    await new Promise<void>((resolve) => {
      const done = () => {
        this.stream.removeListener('drain', done);
        this.stream.removeListener('error', done);
        resolve();
      };
      this.stream.once('drain', done);
      this.stream.once('error', done);
    });
  }

  /** Throws the write error, if any, unless it was only the reader going away. */
  check(): void {
    if (this.failed !== null && this.failed.code !== 'EPIPE') {
      throw new Error(`cannot write the verdicts (${this.failed.message})`, { cause: this.failed });
    }
  }
}
