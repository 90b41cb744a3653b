// End to end on a real Prometheus server: Debian's /usr/bin/prometheus on 127.0.0.1 with a
// temporary data directory, a 1 s scrape and evaluation interval and a copy of
// dashboards/*.rules.yml whose `for:` durations are cut to 4 s, scrapes two `shardwise
// watch` processes at once: the hotspot scenario and the chance scenario, in real time
// with 2 s windows. The hotspot alert reaches firing within a bounded time; over that
// same time the chance run raises no alert at all, not even a pending one. The hotspot
// alert names the planted shard (seat-17, src/scenario/built-in-scenarios.ts) in its
// labels and carries its load, the chance ceiling and its p-value in its annotations; a
// scrape holding the per-incident series passes `promtool check metrics`.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import {
  repositoryRoot,
  requirePrometheus,
  sleep,
  startPrometheus,
  startWatch,
  type Child,
} from './prometheus-fixtures.js';
import { checkMetrics } from '../dashboards/promtool.js';

interface AlertState {
  readonly labels: Record<string, string>;
  readonly annotations: Record<string, string>;
  readonly state: 'pending' | 'firing';
  readonly activeAt: string;
}

const windowMs = 2000;
const shortFor = '4s';
/** Upper bound for the hotspot alert to fire after the plant starts (it takes about 15 s). */
const firingWithinMs = 90_000;

const dir = mkdtempSync(join(tmpdir(), 'shardwise-prometheus-'));
const started: Child[] = [];

afterAll(async () => {
  for (const child of started.splice(0).reverse()) await child.stop();
  rmSync(dir, { recursive: true, force: true });
});

/** The repository's rule file with every `for:` cut to `duration`. */
function shortened(file: string, duration: string): string {
  const text = readFileSync(join(repositoryRoot, 'dashboards', file), 'utf8');
  const cut = text.replace(/^(\s+for:\s*)\S+$/gm, `$1${duration}`);
  // One `for:` per alert, all cut.
  expect(cut.match(new RegExp(`^\\s+for: ${duration}$`, 'gm'))).toHaveLength(5);
  return cut;
}

async function query(
  url: string,
  promql: string,
): Promise<{ metric: Record<string, string>; value: [number, string] }[]> {
  const response = await fetch(`${url}/api/v1/query?query=${encodeURIComponent(promql)}`);
  const body = (await response.json()) as { status: string; data: { result: never[] } };
  expect(body.status).toBe('success');
  return body.data.result;
}

/** The hotspot alert's annotation when its shard is flagged in the latest window. */
const flaggedNow =
  /^relative load (\d+(?:\.\d+)?)x its fair share; chance ceiling (\d+(?:\.\d+)?)x; p-value (\d(?:\.\d+)?(?:e-\d+)?) \(fullest-shard test over all shards\)$/;

async function alerts(url: string): Promise<AlertState[]> {
  const response = await fetch(`${url}/api/v1/alerts`);
  const body = (await response.json()) as { status: string; data: { alerts: AlertState[] } };
  expect(body.status).toBe('success');
  return body.data.alerts;
}

describe('a real Prometheus server scraping shardwise watch', () => {
  it('fires the hotspot alert on the hotspot scenario and nothing on chance', async () => {
    // Checked first, so a machine without it fails here, before any process starts.
    requirePrometheus();
    // The scenario starts 54 s in the past: the first 54 s replay at once, and the plant
    // (seat-17 at 1.5x its fair share from 1:00) begins about 6 s after launch.
    const startMs = Math.floor((Date.now() - 54_000) / windowMs) * windowMs;
    const common = [
      '--pace',
      'real-time',
      '--window',
      '2s',
      '--lateness',
      '0s',
      '--start',
      String(startMs),
      '--duration',
      '4m',
    ];
    const hotspot = await startWatch(['--scenario', 'hotspot', ...common]);
    started.push(hotspot.child);
    const chance = await startWatch(['--scenario', 'chance', ...common]);
    started.push(chance.child);

    writeFileSync(join(dir, 'alerts.rules.yml'), shortened('shardwise-alerts.rules.yml', shortFor));
    writeFileSync(
      join(dir, 'recording.rules.yml'),
      readFileSync(join(repositoryRoot, 'dashboards', 'shardwise-recording.rules.yml')),
    );
    const config = [
      'global:',
      '  scrape_interval: 1s',
      '  scrape_timeout: 1s',
      '  evaluation_interval: 1s',
      'rule_files:',
      '  - alerts.rules.yml',
      '  - recording.rules.yml',
      'scrape_configs:',
      '  - job_name: hotspot',
      '    static_configs:',
      `      - targets: ['${hotspot.address}']`,
      '  - job_name: chance',
      '    static_configs:',
      `      - targets: ['${chance.address}']`,
      '',
    ].join('\n');
    const prometheus = await startPrometheus(dir, config);
    started.push(prometheus.child);
    const launched = Date.now();

    const chanceAlerts: AlertState[] = [];
    let firing: AlertState | undefined;
    while (firing === undefined && Date.now() - launched < firingWithinMs) {
      await sleep(1000);
      const now = await alerts(prometheus.url);
      chanceAlerts.push(...now.filter((alert) => alert.labels.job === 'chance'));
      // Firing, and read while its shard is flagged in the latest window (with 2 s windows
      // a 1.5x shard is not flagged in every one: then the annotation says it is easing).
      firing = now.find(
        (alert) =>
          alert.labels.job === 'hotspot' &&
          alert.labels.alertname === 'ShardwiseHotspotSustained' &&
          alert.state === 'firing' &&
          flaggedNow.test(alert.annotations.latest_window ?? ''),
      );
    }
    const elapsed = Date.now() - launched;
    expect(firing, `no firing hotspot alert within ${firingWithinMs} ms`).toBeDefined();
    expect(firing?.labels).toMatchObject({
      shard: 'seat-17',
      finding: 'hotspot',
      test: expect.stringMatching(/^(window|cusum)$/),
      null: 'map',
      spread: 'auto',
      severity: 'warning',
    });
    expect(firing?.annotations.summary).toBe(
      `Shard seat-17 on ${hotspot.address} carries a sustained hotspot beyond chance`,
    );
    // Load above the ceiling and a p-value at most alpha (0.001, the default): what
    // flagged it.
    const [, load, ceiling, p] = flaggedNow.exec(firing?.annotations.latest_window ?? '') ?? [];
    expect(Number(load)).toBeGreaterThan(Number(ceiling));
    expect(Number(p)).toBeLessThanOrEqual(0.001);
    // The only hotspot alerts are seat-17's: one series per open incident.
    const hotspotAlerts = (await alerts(prometheus.url)).filter(
      (alert) => alert.labels.alertname === 'ShardwiseHotspotSustained',
    );
    expect(new Set(hotspotAlerts.map((alert) => alert.labels.shard))).toEqual(new Set(['seat-17']));

    // A scrape with the per-incident and flagged p-value series passes promtool's linter.
    const scrape = await (await fetch(`http://${hotspot.address}/metrics`)).text();
    expect(scrape).toMatch(/^shardwise_incident_open\{[^}]*shard="seat-17"[^}]*\} 1$/m);
    expect(scrape).toMatch(/^shardwise_flagged_shard_p_value\{/m);
    expect(await checkMetrics(scrape)).toEqual({ code: 0, out: '' });
    expect(chanceAlerts).toEqual([]);

    // Both targets were scraped all along: the quiet chance run is not an empty one.
    const up = await query(prometheus.url, 'up');
    expect(up.map((sample) => [sample.metric.job, sample.value[1]]).sort()).toEqual([
      ['chance', '1'],
      ['hotspot', '1'],
    ]);
    const windows = await query(prometheus.url, 'shardwise_windows_closed_total{job="chance"}');
    // 54 s replayed (27 windows) plus one window per 2 s since.
    expect(Number(windows[0].value[1])).toBeGreaterThanOrEqual(27 + Math.floor(elapsed / 4000));
    // The chance run's verdicts were scraped again and again (one sample per 1 s scrape).
    // The alert can fire within a few seconds of Prometheus starting, before six scrapes
    // have happened, so wait (at most 20 s) for them rather than race the scraper.
    const chanceVerdicts = async () =>
      Number(
        (
          await query(
            prometheus.url,
            'count_over_time(shardwise_finding{job="chance",finding="chance"}[1m])',
          )
        )[0]?.value[1] ?? 0,
      );
    let scraped = await chanceVerdicts();
    for (const waitUntil = Date.now() + 20_000; scraped <= 5 && Date.now() < waitUntil;) {
      await sleep(1000);
      scraped = await chanceVerdicts();
    }
    expect(scraped).toBeGreaterThan(5);
    const flagged = await query(
      prometheus.url,
      'shardwise_flagged_shard_relative_load{job="hotspot"}',
    );
    expect(flagged.map((sample) => sample.metric.shard)).toContain('seat-17');
    const ratio = await query(
      prometheus.url,
      'shardwise:fullest_over_ceiling:ratio{job="hotspot"}',
    );
    expect(Number(ratio[0].value[1])).toBeGreaterThan(1);

    // watch answers its own probes while Prometheus scrapes it.
    const ready = await fetch(`http://${hotspot.address}/readyz`);
    expect(ready.status).toBe(200);
    expect(await ready.text()).toBe('ready\n');

    for (const child of [prometheus.child, chance.child, hotspot.child]) {
      const code = await child.stop();
      // watch ends 0 on SIGTERM (an interrupted run); Prometheus 0 on a clean shutdown.
      expect(code, child.stderr).toBe(0);
    }
    expect(hotspot.child.stderr).toMatch(/incidents: 1 opened, 0 cleared, 1 open at the end/);
    expect(hotspot.child.stderr).toMatch(/hotspot on seat-17 since /);
    expect(chance.child.stderr).toMatch(/incidents: 0 opened/);
  });
});
