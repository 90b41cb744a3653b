import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough, Readable } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { simulateCommand, simulateOptions } from '../../src/cli/simulate.js';
import { watchCommand, watchOptions } from '../../src/cli/watch.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { builtInScenarios } from '../../src/scenario/built-in-scenarios.js';
import { runScenario } from '../../src/scenario/scenario-run.js';

async function run(
  args: string[],
  stdinText = '',
): Promise<{ code: number; out: string; err: string }> {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  stdout.on('data', (d) => (out += d));
  stderr.on('data', (d) => (err += d));
  const stdin = Readable.from([stdinText]);
  // No metrics endpoint: the default port may be taken by another run on this host (npm start
  // in the screen test); the exporter has its own tests.
  const wantsEndpoint = args.some((a) => a.startsWith('--metrics') || a === '--help');
  const withoutEndpoint = args[0] === 'watch' && !wantsEndpoint ? [...args, '--no-metrics'] : args;
  const code = await main(withoutEndpoint, { stdout, stderr, stdin, env: {} });
  return { code, out, err };
}

function verdicts(out: string): Judgement[] {
  return out
    .trim()
    .split('\n')
    .map((line) => JSON.parse(line) as Judgement);
}

const start = '2025-12-01T00:00:00Z';
const startMs = Date.parse(start);
const dir = mkdtempSync(join(tmpdir(), 'shardwise-watch-'));

describe('shardwise simulate', () => {
  it('writes the seeded scenario records and says what was planted', async () => {
    const file = join(dir, 'hotspot.jsonl');
    const { code, err } = await run([
      'simulate',
      '--scenario',
      'hotspot',
      '--to',
      file,
      '--start',
      start,
      '--seed',
      '7',
    ]);
    expect(code).toBe(0);
    const lines = readFileSync(file, 'utf8').trim().split('\n');
    // Ground truth of the scenario: 64 count reports per second for its suggested 4 minutes.
    expect(lines).toHaveLength(64 * 240);
    expect(JSON.parse(lines[0])).toMatchObject({ ts: startMs, shard: 'seat-00' });
    const run7 = runScenario('hotspot', { seed: 7, startMs, durationMs: 240_000 });
    const first = run7.records().next().value;
    expect(lines[0]).toBe(`{"ts":${first?.ts},"shard":"seat-00","count":${first?.count}}`);
    expect(err).toMatch(/15360 records of scenario hotspot \(seed 7\)/);
    expect(err).toMatch(
      /planted: hotspot on seat-17, 1.5x its fair share, 2025-12-01T00:01:00.000Z to 2025-12-01T00:03:00.000Z/,
    );
  });

  it('writes CSV to stdout with --format csv', async () => {
    const { code, out } = await run([
      'simulate',
      '--scenario',
      'chance',
      '--to',
      '-',
      '--format',
      'csv',
      '--duration',
      '2s',
      '--start',
      start,
    ]);
    expect(code).toBe(0);
    const lines = out.trim().split('\n');
    expect(lines[0]).toBe('ts,shard,count,key');
    expect(lines).toHaveLength(1 + 64 * 2);
  });
});

describe('shardwise watch on a file', () => {
  it('prints one verdict per closed window that finds the planted hotspot (exit 0)', async () => {
    const file = join(dir, 'watch-hotspot.jsonl');
    await run(['simulate', '--scenario', 'hotspot', '--to', file, '--start', start, '--seed', '7']);
    const { code, out, err } = await run([
      'watch',
      '--input',
      file,
      '--shards',
      'seat-00..seat-63',
      '--no-ui',
    ]);
    expect(code).toBe(0);
    const windows = verdicts(out);
    // 4 minutes of 10 s windows.
    expect(windows).toHaveLength(24);
    // Ground truth: seat-17 at 1.5x from 1:00 to 3:00, i.e. windows 6..17.
    windows.forEach((verdict, index) => {
      const planted = index >= 6 && index < 18;
      expect(verdict.findings.includes('hotspot')).toBe(planted);
      if (planted) expect(verdict.fullest?.shard).toBe('seat-17');
    });
    expect(windows[8].incidents).toEqual([
      {
        shard: 'seat-17',
        finding: 'hotspot',
        since: '2025-12-01T00:01:00.000Z',
        windows: 3,
        test: 'window',
      },
    ]);
    expect(windows[0].null).toBe('uniform');
    expect(err).toMatch(/^shardwise watch: 24 windows judged, 15360 records read/m);
    expect(err).toMatch(/incidents: 1 opened, 1 cleared, 0 open at the end/);
    expect(err).toMatch(/hotspot on seat-17 since 2025-12-01T00:01:00.000Z/);
  });

  it('counts rejected records by reason and keeps going', async () => {
    const file = join(dir, 'bad.jsonl');
    writeFileSync(
      file,
      [
        '{"ts":1764547200000,"shard":"a","count":5}',
        'not json',
        '{"ts":1764547200000,"shard":"z","count":5}',
        '{"ts":1764547200000,"shard":"b","count":-1}',
        '{"ts":1764547201000,"shard":"b","count":5}',
      ].join('\n'),
    );
    const { code, out, err } = await run(['watch', '--input', file, '--shards', 'a,b', '--no-ui']);
    expect(code).toBe(0);
    const [verdict] = verdicts(out);
    expect(verdict.requests).toBe(10);
    expect(verdict.rejected).toEqual({ 'not JSON': 1, 'outside universe': 1, 'negative count': 1 });
    expect(err).toMatch(
      /rejected: 3 \(not JSON 1, first on line 2; negative count 1, first on line 4; outside universe 1\)/,
    );
  });

  it('reads standard input with -, with the cold tests off for an undeclared universe', async () => {
    const lines = [
      '{"ts":1764547200000,"shard":"a","count":5}',
      '{"ts":1764547201000,"shard":"b","count":5}',
    ];
    const { code, out } = await run(['watch', '--input', '-', '--no-ui'], lines.join('\n') + '\n');
    expect(code).toBe(0);
    const [verdict] = verdicts(out);
    expect(verdict).toMatchObject({ shards: 2, requests: 10, coldTests: false });
  });

  it('says in the summary how many ids of a growing universe retired', async () => {
    // Worked by hand: a, b, c report 50 each in the first 10 s window, only a and b in the
    // next (50 requests per reporting shard, above ln(1000 x 2) = 7.6: a live c would be
    // empty with probability e^-50), so c retires before the second window is judged.
    const lines = [
      ...['a', 'b', 'c'].map((shard) => `{"ts":1764547200000,"shard":"${shard}","count":50}`),
      ...['a', 'b'].map((shard) => `{"ts":1764547210000,"shard":"${shard}","count":50}`),
    ];
    const { code, out, err } = await run(
      ['watch', '--input', '-', '--no-ui'],
      lines.join('\n') + '\n',
    );
    expect(code).toBe(0);
    expect(verdicts(out).map((verdict) => [verdict.shards, verdict.retiredShards])).toEqual([
      [3, 0],
      [2, 1],
    ]);
    expect(err).toMatch(/^ {2}shards retired: 1 \(ids that stopped reporting left m\)$/m);
  });

  it('writes a recording with the full count vector and the settings', async () => {
    const file = join(dir, 'rec-source.jsonl');
    await run([
      'simulate',
      '--scenario',
      'dead-shard',
      '--to',
      file,
      '--start',
      start,
      '--duration',
      '20s',
    ]);
    const recording = join(dir, 'recording.jsonl');
    const { code } = await run([
      'watch',
      '--input',
      file,
      '--shards',
      'seat-00..seat-63',
      '--no-ui',
      '--record',
      recording,
      '--alpha',
      '0.01',
    ]);
    expect(code).toBe(0);
    const lines = readFileSync(recording, 'utf8')
      .trim()
      .split('\n')
      .map((line) => JSON.parse(line));
    expect(lines).toHaveLength(2);
    expect(lines[0].counts).toHaveLength(64);
    expect(lines[0].counts.reduce((sum: number, count: number) => sum + count, 0)).toBe(
      lines[0].requests,
    );
    expect(lines[0].shardIds[17]).toBe('seat-17');
    expect(lines[1].shardIds).toBeUndefined();
    expect(lines[0].settings).toMatchObject({
      alpha: 0.01,
      null: 'uniform',
      spread: 'auto',
      windowMs: 10_000,
      hopMs: 10_000,
      source: { input: file },
    });
  });

  it('falls back to JSON Lines with a notice when stdout is not a terminal', async () => {
    const { code, out, err } = await run([
      'watch',
      '--scenario',
      'chance',
      '--pace',
      'fast',
      '--duration',
      '10s',
      '--start',
      start,
    ]);
    expect(code).toBe(0);
    expect(err.split('\n')[0]).toBe(
      'shardwise watch: standard output is not a terminal; printing verdicts as JSON Lines, as with --no-ui',
    );
    expect(verdicts(out)).toHaveLength(1);
  });
});

describe('shardwise watch --pace fast (issue #18)', () => {
  it('replays traffic that has already happened: no window ends after the wall clock', async () => {
    // Without --start a fast replay used to start now and stamp its windows up to its
    // duration ahead of the clock; it now ends at about now.
    const { code, out } = await run([
      'watch',
      '--scenario',
      'chance',
      '--pace',
      'fast',
      '--duration',
      '2m',
      '--no-ui',
    ]);
    const finished = Date.now();
    expect(code).toBe(0);
    const windows = verdicts(out);
    expect(windows.length).toBeGreaterThanOrEqual(11);
    for (const judgement of windows) {
      expect(Date.parse(judgement.window.end)).toBeLessThanOrEqual(finished);
    }
    // And it is recent: the last window ends within two windows of now.
    expect(finished - Date.parse(windows.at(-1)?.window.end as string)).toBeLessThan(30_000);
  });
});

describe('shardwise watch: bad usage exits 2 with one line naming the option and the value', () => {
  it.each([
    [
      ['watch', '--scenario', 'chance', '--alpha', '2'],
      'shardwise watch: --alpha: "2" must be below 1',
    ],
    [
      ['watch', '--scenario', 'chance', '--window', '0s'],
      'shardwise watch: --window: "0s" must be a duration above zero',
    ],
    [
      ['watch', '--scenario', 'chance', '--hop', '3s'],
      'shardwise watch: --hop: "3s" does not divide --window 10s',
    ],
    [
      ['watch', '--scenario', 'chance', '--key-registers', '1000'],
      'shardwise watch: --key-registers: "1000" is not a power of two from 16 to 65536',
    ],
    [
      ['watch', '--scenario', 'chance', '--no-keys', '--key-counters', '8'],
      'shardwise watch: --key-counters: "8" cannot be combined with --no-keys',
    ],
    [
      ['watch', '--scenario', 'nope'],
      'shardwise watch: --scenario: "nope" is not a built-in scenario (demo, chance, hotspot, dead-shard, failover, zipf-keys, weighted, diurnal, hot-key, biased-partitioner, keyed-failover)',
    ],
    [
      ['watch', '--scenario', 'chance', '--pace', 'slow'],
      'shardwise watch: --pace: "slow" is not real-time or fast',
    ],
    [
      ['watch', '--scenario', 'chance', '--spread', 'wide'],
      'shardwise watch: --spread: "wide" is not one of exact, robust, auto',
    ],
    [
      ['watch', '--scenario', 'chance', '--confirm', '0'],
      'shardwise watch: --confirm: "0" must be at least 1',
    ],
    [
      ['watch', '--scenario', 'chance', '--seed', '-1'],
      'shardwise watch: --seed: "-1" is not a whole number',
    ],
    [
      ['watch', '--scenario', 'chance', '--shards', '64'],
      'shardwise watch: --shards: "64" cannot be combined with --scenario (the scenario declares its shards)',
    ],
    [
      ['watch', '--input', '-', '--null', 'map'],
      'shardwise watch: --null: "map" needs --shard-map FILE (or a --scenario) to take the shares from; use uniform for equal shares',
    ],
    [
      ['watch', '--input', '/no/such/file.jsonl'],
      'shardwise watch: --input: "/no/such/file.jsonl" cannot be read',
    ],
    [
      ['watch', '--input', '-', '--seed', '3'],
      'shardwise watch: --seed: "3" applies only to --scenario',
    ],
    [
      ['watch', '--input', '-', '--session-timeout', '6s'],
      'shardwise watch: --session-timeout: "6s" applies only to a Kafka source (--brokers H:P --topic T)',
    ],
    [
      ['watch', '--brokers', '127.0.0.1:9', '--topic', 't', '--session-timeout', 'soon'],
      'shardwise watch: --session-timeout: "soon" is not a duration (examples: 500ms, 10s, 5m, 1h)',
    ],
    [
      ['watch'],
      'shardwise watch: --input: "" is missing: give --input FILE|-, --scenario NAME, --brokers H:P --topic T or --prometheus URL (see --help)',
    ],
    [
      ['watch', '--prometheus', 'http://127.0.0.1:9090', '--shard-label', 'shard'],
      'shardwise watch: --series: "" is required with --prometheus (a series selector)',
    ],
    [
      ['watch', '--input', '-', '--prometheus', 'http://127.0.0.1:9090'],
      'shardwise watch: --prometheus: "http://127.0.0.1:9090" cannot be combined with --input, --scenario or --brokers (one source at a time)',
    ],
    [
      ['watch', '--input', '-', '--shard-label', 'shard'],
      'shardwise watch: --shard-label: "shard" needs --prometheus URL',
    ],
    [
      ['watch', '--frobnicate'],
      'shardwise watch: --frobnicate: "--frobnicate" is not an option of this command (see --help)',
    ],
    [
      ['simulate', '--scenario', 'chance'],
      'shardwise simulate: --to: "" is missing: give a file or - for stdout',
    ],
    [
      ['simulate', '--scenario', 'chance', '--to', '-', '--format', 'xml'],
      'shardwise simulate: --format: "xml" is not jsonl or csv',
    ],
  ])('%j', async (args, message) => {
    const { code, out, err } = await run(args);
    expect(code).toBe(2);
    expect(out).toBe('');
    expect(err.trim().split('\n')).toHaveLength(1);
    expect(err.trim().startsWith(message)).toBe(true);
  });
});

describe('--help', () => {
  it.each([
    ['watch', watchCommand.help, watchOptions],
    ['simulate', simulateCommand.help, simulateOptions],
  ] as const)(
    '%s --help exits 0 and names every option it accepts',
    async (name, help, options) => {
      const { code, out } = await run([name, '--help']);
      expect(code).toBe(0);
      expect(out).toBe(help);
      for (const option of Object.keys(options)) expect(help).toMatch(new RegExp(`--${option}\\b`));
      // And no option it does not accept.
      // Example command lines (indented "shardwise ...") name another command's options.
      const own = help
        .split('\n')
        .filter((line) => !line.trimStart().startsWith('shardwise '))
        .join('\n');
      const named = new Set([...own.matchAll(/--([a-z][a-z-]*)/g)].map((match) => match[1]));
      named.delete('help');
      for (const option of named) expect(Object.keys(options)).toContain(option);
    },
  );

  it.each([
    ['watch', watchCommand.help],
    ['simulate', simulateCommand.help],
  ] as const)('%s --help names every built-in scenario', (_name, help) => {
    // The list under --scenario, up to the next option line.
    const from = help.indexOf('\n  --scenario NAME');
    const rest = help.slice(from + 1);
    const list = rest.slice(0, rest.search(/\n {2,4}-/)).replace(/\s+/g, ' ');
    for (const scenario of builtInScenarios.keys())
      expect(list).toMatch(new RegExp(`\\b${scenario}\\b`));
  });
});

/** Writes 80 s of the hot-key drill to `name` (ground truth: it plants "presale:LFT-7781" from 1:00 to 3:00). */
async function hotKeyDrill(name: string): Promise<string> {
  const file = join(dir, name);
  const args = ['simulate', '--scenario', 'hot-key', '--to', file, '--start', start];
  const simulated = await run([...args, '--seed', '7', '--duration', '80s']);
  expect(simulated.code).toBe(0);
  expect(simulated.err).toContain('hot key "presale:LFT-7781"');
  return file;
}

describe('shardwise watch with keys', () => {
  it('a simulated hot-key file: the planted key is named in the verdict lines, and --no-keys leaves them out', async () => {
    const file = await hotKeyDrill('hot-key.jsonl');
    const judged = await run([
      'watch',
      '--input',
      file,
      '--shards',
      'seat-00..seat-63',
      '--no-ui',
      '--key-simulations',
      '200',
    ]);
    expect(judged.code).toBe(0);
    const planted = verdicts(judged.out).filter(
      (verdict) => verdict.window.start >= '2025-12-01T00:01:00.000Z',
    );
    expect(planted.length).toBeGreaterThan(0);
    for (const verdict of planted) {
      const cause = verdict.keys?.causes.find(
        (entry) => entry.cause === 'hot key' && entry.topKey?.key === 'presale:LFT-7781',
      );
      expect(cause).toBeDefined();
    }
    const off = await run([
      'watch',
      '--input',
      file,
      '--shards',
      'seat-00..seat-63',
      '--no-ui',
      '--no-keys',
    ]);
    for (const verdict of verdicts(off.out)) expect('keys' in verdict).toBe(false);
  });
});

describe('shardwise watch and review read records through one feed', () => {
  it('review --input of the hot-key drill names the planted key, as watch does (measured on main: review named none)', async () => {
    const file = await hotKeyDrill('hot-key-review.jsonl');
    const reviewed = await run(['review', '--input', file, '--shards', 'seat-00..seat-63']);
    expect(reviewed.code).toBe(0);
    expect(reviewed.out).toContain('presale:LFT-7781');
  });

  it('a record stamped in 2976 among 100 windows is rejected as too far ahead, from a file and from stdin (measured on main: 632 of 800 later records late, 3e9 windows skipped)', async () => {
    // Invented data: 8 requests a window on shards a and b for 100 windows of 10 s.
    const base = Date.parse(start);
    const lines: string[] = [];
    for (let window = 0; window < 100; window++) {
      if (window === 20)
        lines.push(JSON.stringify({ ts: Date.UTC(2976, 0, 1), shard: 'a', count: 1 }));
      for (let at = 0; at < 8; at++) {
        lines.push(
          JSON.stringify({
            ts: base + window * 10_000 + at * 1000,
            shard: at % 2 ? 'b' : 'a',
            count: 1,
          }),
        );
      }
    }
    const file = join(dir, 'future.jsonl');
    writeFileSync(file, lines.join('\n') + '\n');
    for (const judged of [
      await run(['watch', '--input', file, '--shards', 'a,b', '--no-ui', '--lateness', '0s']),
      await run(
        ['watch', '--input', '-', '--shards', 'a,b', '--no-ui', '--lateness', '0s'],
        lines.join('\n') + '\n',
      ),
    ]) {
      expect(judged.code).toBe(0);
      const windows = verdicts(judged.out);
      expect(windows).toHaveLength(100);
      expect(windows.every((verdict) => verdict.requests === 8)).toBe(true);
      expect(judged.err).toContain('rejected: 1 (too far ahead 1); late: 0 requests in 0 records');
    }
  });
});

describe('shardwise watch on input it cannot judge', () => {
  it('says an empty input held no records (exit 0) and an input of only bad records was all rejected, with where (exit 1)', async () => {
    // Common practice for command-line filters: an empty input is not an error; input of
    // which nothing is usable most likely is (the wrong file or format).
    const empty = await run(['watch', '--input', '-', '--no-ui'], '');
    expect(empty.code).toBe(0);
    expect(empty.err).toContain('shardwise watch: the input held no records, nothing was judged');
    const bad = await run(
      ['watch', '--input', '-', '--no-ui'],
      'garbage\n{"shard":"a","count":1}\n',
    );
    expect(bad.code).toBe(1);
    expect(bad.err).toContain(
      'rejected: 2 (not JSON 1, first on line 1; bad timestamp 1, first on line 2)',
    );
    expect(bad.err).toContain('shardwise watch: every record was rejected, nothing was judged');
  });
});
