// The alert rules on the exporter's real output: seeded scenarios run through the judging
// pipeline and the exporter, scraped every 10 s of scenario time into a promtool unit test
// (series in, alerts expected out). Planted faults fire their alert; pure random placement
// fires none of the five over 35 minutes. Annotations are checked by the hand-written
// cases in dashboards/shardwise-alerts.test.yml; here they are left out of a copy of the
// rules so the expected alerts need only their labels.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { VerdictMetrics } from '../../src/exporter/verdict-metrics.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings, type JudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement, NullModelName } from '../../src/judge/judgement.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import type { CountRecord } from '../../src/window/count-record.js';
import { parseExposition } from '../exporter/exposition.js';
import { promtool } from './promtool.js';

const rulesFile = fileURLToPath(
  new URL('../../dashboards/shardwise-alerts.rules.yml', import.meta.url),
);
const scratch = mkdtempSync(join(tmpdir(), 'shardwise-scenario-alerts-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

const alertNames = [
  'ShardwiseHotspotSustained',
  'ShardwiseShardCold',
  'ShardwiseLoadUneven',
  'ShardwiseTelemetryStalled',
  'ShardwiseRejectionsHigh',
] as const;
type AlertName = (typeof alertNames)[number];

const windowSeconds = 10;
const target = { job: 'shardwise', instance: 'scenario:9464' };

interface ScrapedRun {
  /** Series text (name{labels}) to one value per 10 s step from 0 s; undefined = no sample. */
  readonly series: Map<string, (number | undefined)[]>;
  readonly judgements: Judgement[];
  readonly steps: number;
}

/**
 * Runs a scenario as `watch --pace real-time` would see it: each second's records arrive
 * at the end of that second, the live poll ticks, and a scrape every 10 s reads the
 * registry. `silentFromSecond` stops the records there (reporters gone; the clock runs
 * on); `rejectEvery` adds one "not JSON" rejection per that many records.
 */
async function scrapeScenario(options: {
  scenario: string;
  minutes: number;
  null?: NullModelName;
  silentFromSecond?: number;
  rejectEvery?: number;
}): Promise<ScrapedRun> {
  const durationMs = options.minutes * 60_000;
  const run = runScenario(options.scenario, { seed: 11, startMs: 0, durationMs });
  const settings: JudgeSettings = {
    ...defaultJudgeSettings,
    null: options.null ?? 'map',
    hopMs: windowSeconds * 1000,
  };
  let now = 0;
  const clock = () => now;
  const pipeline = new JudgingPipeline(
    run.universe,
    { windowMs: windowSeconds * 1000, latenessMs: 0 },
    new Judge(run.universe, settings),
    clock,
  );
  const metrics = new VerdictMetrics(pipeline, {
    settings,
    windowMs: windowSeconds * 1000,
    latenessMs: 0,
    clock,
  });
  const judgements: Judgement[] = [];
  pipeline.events.on('window judged', ({ judgement }) => judgements.push(judgement));
  const series = new Map<string, (number | undefined)[]>();
  const steps = durationMs / 1000 / windowSeconds;
  const records = run.records()[Symbol.iterator]();
  let next: IteratorResult<CountRecord> = records.next();
  let fed = 0;
  for (let second = 0; second <= durationMs / 1000; second++) {
    while (!next.done && next.value.ts < (second + 1) * 1000) {
      if (options.silentFromSecond === undefined || second < options.silentFromSecond) {
        pipeline.record(next.value.ts, next.value.shard, next.value.count);
        fed++;
        if (options.rejectEvery !== undefined && fed % options.rejectEvery === 0) {
          pipeline.reject('not JSON');
        }
      }
      next = records.next();
    }
    now = (second + 1) * 1000;
    pipeline.tick();
    if (second % windowSeconds !== 0) continue;
    const step = second / windowSeconds;
    for (const sample of parseExposition(await metrics.registry.metrics())) {
      if (!sample.name.startsWith('shardwise_')) continue;
      const labels = { ...sample.labels, ...target };
      const key = `${sample.name}{${Object.entries(labels)
        .map(([name, value]) => `${name}=${JSON.stringify(value)}`)
        .join(',')}}`;
      const values = series.get(key) ?? new Array<number | undefined>(steps + 1).fill(undefined);
      values[step] = sample.value;
      series.set(key, values);
    }
  }
  metrics.close();
  return { series, judgements, steps };
}

interface Expectation {
  /** Evaluation time, seconds from the start. */
  readonly at: number;
  /**
   * Alerts firing then, with their labels beyond alertname (one set per alert of that name,
   * e.g. one per shard); every other alert is quiet.
   */
  readonly firing: Partial<Record<AlertName, Record<string, string> | Record<string, string>[]>>;
}

/** Writes the promtool test for one run and runs it; returns promtool's output. */
async function promtoolOn(name: string, run: ScrapedRun, expectations: Expectation[]) {
  const rules = readFileSync(rulesFile, 'utf8');
  writeFileSync(join(scratch, `${name}.rules.yml`), withoutAnnotations(rules));
  const checks = expectations.flatMap((expectation) =>
    alertNames.map((alertname) => {
      const labels = expectation.firing[alertname];
      const all = labels === undefined ? [] : Array.isArray(labels) ? labels : [labels];
      return {
        eval_time: `${expectation.at}s`,
        alertname,
        exp_alerts: all.map((set) => ({ exp_labels: set })),
      };
    }),
  );
  const test = {
    rule_files: [`${name}.rules.yml`],
    evaluation_interval: `${windowSeconds}s`,
    tests: [
      {
        interval: `${windowSeconds}s`,
        input_series: [...run.series].map(([series, values]) => ({
          series,
          values: withStaleness(values).join(' '),
        })),
        alert_rule_test: checks,
      },
    ],
  };
  const file = join(scratch, `${name}.test.yml`);
  // JSON is YAML: promtool reads it as a test file.
  writeFileSync(file, JSON.stringify(test));
  return promtool(['test', 'rules', file], scratch);
}

/**
 * A series as Prometheus stores its scrapes: a series a scrape no longer has gets a
 * staleness marker (common practice: Prometheus's staleness handling), so it is gone at
 * once rather than seen for the 5-minute lookback; before its first sample it is missing.
 */
function withStaleness(values: readonly (number | undefined)[]): string[] {
  return values.map((value, step) => {
    if (value !== undefined) return promValue(value);
    return step > 0 && values[step - 1] !== undefined ? 'stale' : '_';
  });
}

/**
 * The labels of the per-incident alerts (`shardwise_incident_open` of `finding`, `for: 1m`)
 * that fire at `at` seconds: series present at every 10 s scrape of the last minute.
 */
function sustainedIncidents(
  run: ScrapedRun,
  finding: 'hotspot' | 'cold',
  at: number,
): Record<string, string>[] {
  const fired: Record<string, string>[] = [];
  for (const [series, values] of run.series) {
    if (!series.startsWith('shardwise_incident_open{')) continue;
    const labels = Object.fromEntries(
      [...series.matchAll(/(\w+)="([^"]*)"/g)].map((match) => [match[1], match[2]]),
    );
    if (labels.finding !== finding) continue;
    let held = true;
    for (let step = (at - 60) / windowSeconds; step <= at / windowSeconds; step++) {
      held &&= values[step] === 1;
    }
    if (held) fired.push({ ...labels, severity: 'warning' });
  }
  return fired;
}

function promValue(value: number): string {
  if (Number.isNaN(value)) return 'NaN';
  if (!Number.isFinite(value)) return value > 0 ? 'Inf' : '-Inf';
  return String(value);
}

/** The rule file without its annotation blocks (the lines indented under `annotations:`). */
function withoutAnnotations(text: string): string {
  const kept: string[] = [];
  let skipDeeperThan = -1;
  for (const line of text.split('\n')) {
    const indent = line.length - line.trimStart().length;
    if (skipDeeperThan >= 0 && (line.trim() === '' || indent > skipDeeperThan)) continue;
    skipDeeperThan = -1;
    if (line.trim() === 'annotations:') {
      skipDeeperThan = indent;
      continue;
    }
    kept.push(line);
  }
  return kept.join('\n');
}

/** First and last window end (seconds) at which an incident of `finding` was open. */
function incidentSpan(run: ScrapedRun, finding: 'hotspot' | 'cold'): [number, number] {
  const open = run.judgements
    .filter((judgement) => judgement.incidents.some((incident) => incident.finding === finding))
    .map((judgement) => Date.parse(judgement.window.end) / 1000);
  expect(open.length, `${finding} incident`).toBeGreaterThan(0);
  return [open[0], open[open.length - 1]];
}

const model = { null: 'map', spread: 'auto' };

describe('alert rules on scraped scenario runs', () => {
  it('stay quiet for 35 minutes of pure random placement', async () => {
    const run = await scrapeScenario({ scenario: 'chance', minutes: 35 });
    expect(run.judgements.every((judgement) => judgement.incidents.length === 0)).toBe(true);
    const expectations = Array.from({ length: 35 }, (_, minute) => ({
      at: (minute + 1) * 60,
      firing: {},
    }));
    const result = await promtoolOn('chance', run, expectations);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
  });

  it('fire ShardwiseHotspotSustained a minute into the planted hotspot incident, alone', async () => {
    const run = await scrapeScenario({ scenario: 'hotspot', minutes: 4 });
    const [opened, last] = incidentSpan(run, 'hotspot');
    // The planted shard (src/scenario/built-in-scenarios.ts: seat-17 at 1.5x), and the test
    // that opened its incident.
    const incident = run.judgements
      .flatMap((judgement) => judgement.incidents)
      .find((candidate) => candidate.finding === 'hotspot');
    expect(incident?.shard).toBe('seat-17');
    // Planted at 1:00 to 3:00; the incident opens after --confirm 3 windows.
    expect(opened).toBeGreaterThanOrEqual(80);
    expect(last - opened).toBeGreaterThan(90);
    const result = await promtoolOn('hotspot', run, [
      { at: opened - windowSeconds, firing: {} },
      { at: opened + 40, firing: {} },
      {
        at: opened + 70,
        firing: {
          ShardwiseHotspotSustained: {
            ...model,
            shard: 'seat-17',
            finding: 'hotspot',
            test: incident?.test ?? '',
            ...target,
            severity: 'warning',
          },
        },
      },
    ]);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
  });

  it('fire ShardwiseShardCold when a shard dies, alone', async () => {
    const run = await scrapeScenario({ scenario: 'dead-shard', minutes: 4 });
    const [opened, last] = incidentSpan(run, 'cold');
    expect(last - opened).toBeGreaterThan(90);
    // The dead shard (src/scenario/built-in-scenarios.ts: seat-42).
    const incident = run.judgements
      .flatMap((judgement) => judgement.incidents)
      .find((candidate) => candidate.finding === 'cold');
    expect(incident?.shard).toBe('seat-42');
    const result = await promtoolOn('dead-shard', run, [
      { at: opened - windowSeconds, firing: {} },
      {
        at: opened + 70,
        firing: {
          ShardwiseShardCold: {
            ...model,
            shard: 'seat-42',
            finding: 'cold',
            test: incident?.test ?? '',
            ...target,
            severity: 'warning',
          },
        },
      },
    ]);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
  });

  it('on unequal hash ranges judged as equal: uneven while the spread is learned, then the sustained hotspots of the heavy shards, not a standing uneven alert', async () => {
    // A consistent-hash ring with 16 tokens per shard: shares vary by about 25% and
    // placement is perfect. Against equal shares the first windows are uneven while the
    // cluster's usual spread is learned (10 windows); a steady spread is then the usual one,
    // so ShardwiseLoadUneven (10 min hold) never fires, while the shards with the largest
    // ranges carry about 1.25x the equal share in every window: a persistent excess the
    // sequential (CUSUM) test accumulates into sustained hotspots, as it should against
    // the wrong null. Against the real shares (null map) it is chance.
    const wrong = await scrapeScenario({ scenario: 'weighted', minutes: 17, null: 'uniform' });
    const learning = wrong.judgements.slice(0, 10);
    expect(learning.every((judgement) => judgement.findings.includes('uneven'))).toBe(true);
    expect(
      wrong.judgements.slice(10).some((judgement) => judgement.findings.includes('uneven')),
    ).toBe(false);
    // One page per heavy shard with an open incident (at most --max-flagged series).
    const hot = [600, 990].map((at) => sustainedIncidents(wrong, 'hotspot', at));
    for (const alerts of hot) {
      expect(alerts.length).toBeGreaterThan(0);
      expect(alerts.length).toBeLessThanOrEqual(defaultJudgeSettings.maxFlagged);
      for (const labels of alerts) {
        expect(labels).toMatchObject({ null: 'uniform', spread: 'auto', finding: 'hotspot' });
      }
    }
    let result = await promtoolOn('weighted-uniform', wrong, [
      { at: 600, firing: { ShardwiseHotspotSustained: hot[0] } },
      { at: 990, firing: { ShardwiseHotspotSustained: hot[1] } },
    ]);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
    const honest = await scrapeScenario({ scenario: 'weighted', minutes: 17, null: 'map' });
    result = await promtoolOn('weighted-map', honest, [
      { at: 600, firing: {} },
      { at: 990, firing: {} },
    ]);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
  });

  it('fire ShardwiseTelemetryStalled two minutes after the reporters go silent', async () => {
    const run = await scrapeScenario({ scenario: 'chance', minutes: 8, silentFromSecond: 180 });
    // Quiet for a window plus the lateness (10 s) marks the source stalled, at about 3:10.
    const result = await promtoolOn('silent', run, [
      { at: 170, firing: {} },
      { at: 290, firing: {} },
      { at: 360, firing: { ShardwiseTelemetryStalled: { ...target, severity: 'warning' } } },
    ]);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
  });

  it('fire ShardwiseRejectionsHigh when 2% of the records are bad', async () => {
    const run = await scrapeScenario({ scenario: 'chance', minutes: 20, rejectEvery: 50 });
    const result = await promtoolOn('rejections', run, [
      { at: 300, firing: {} },
      { at: 900, firing: { ShardwiseRejectionsHigh: { ...target, severity: 'warning' } } },
    ]);
    expect(result.stdout + result.stderr).not.toMatch(/FAILED/);
    expect(result.code).toBe(0);
  });
});
