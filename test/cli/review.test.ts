import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { reviewCommand, reviewOptions } from '../../src/cli/review.js';
import { watchCommand } from '../../src/cli/watch.js';
import { countReports, runCli } from '../review/cli-run.js';

const dir = mkdtempSync(join(tmpdir(), 'shardwise-review-cli-'));
const shards = Array.from({ length: 16 }, (_, at) => `s-${at}`);
const input = join(dir, 'records.jsonl');
writeFileSync(input, countReports(shards, 12, { shard: 's-3', from: 4, to: 8 }));

describe('shardwise review', () => {
  it('--help names every option', () => {
    for (const name of Object.keys(reviewOptions))
      expect(reviewCommand.help).toContain(`--${name}`);
  });

  it('watch --help says how recordings are written, capped and rotated', () => {
    expect(watchCommand.help).toMatch(/--record-max-size S/);
    expect(watchCommand.help).toMatch(/FILE moves to FILE\.1/);
    expect(watchCommand.help).toMatch(/torn last line/);
  });

  it('prints the Markdown summary on stdout when no output is named, with the episode', async () => {
    const { code, out, err } = await runCli(['review', '--input', input, '--shards', 's-0..s-15']);
    expect(code).toBe(0);
    expect(out).toMatch(/^# Post-incident review/);
    expect(out).toMatch(
      /\| hotspot \| s-3 \| 2025-12-01T00:00:40Z \| 2025-12-01T00:01:20Z \| 40 s \| 4 \|/,
    );
    expect(out).toMatch(/not certainty/);
    expect(err).toMatch(
      /^shardwise review: 12 windows from 2025-12-01T00:00:00Z to 2025-12-01T00:02:00Z, 1 episodes\n$/,
    );
  });

  it('stays quiet on stderr about progress when stderr is not a terminal', async () => {
    const { err } = await runCli(['review', '--input', input, '--markdown', join(dir, 'q.md')]);
    expect(err).not.toMatch(/\r|reading/);
  });

  it('reviews a recording as recorded, and writes both outputs', async () => {
    const recording = join(dir, 'rec.jsonl');
    await runCli([
      'watch',
      '--input',
      input,
      '--shards',
      's-0..s-15',
      '--no-ui',
      '--no-metrics',
      '--record',
      recording,
    ]);
    const html = join(dir, 'r.html');
    const md = join(dir, 'r.md');
    const { code, out } = await runCli([
      'review',
      '--recording',
      recording,
      '--out',
      html,
      '--markdown',
      md,
    ]);
    expect(code).toBe(0);
    expect(out).toBe('');
    expect(readFileSync(html, 'utf8')).toMatch(/<table id="episode-table">/);
    expect(readFileSync(md, 'utf8')).toMatch(/as recorded by watch \(not judged again\)/);
  });

  it.each([
    [
      ['review'],
      'shardwise review: --recording: "" is missing: give --recording FILE, --input FILE|-, --brokers H:P --topic T --since TIME or --prometheus URL --series SELECTOR --shard-label NAME --since TIME (see --help)',
    ],
    [
      ['review', '--input', input, '--alpha', '3'],
      'shardwise review: --alpha: "3" must be below 1',
    ],
    [
      ['review', '--input', input, '--null', 'map'],
      'shardwise review: --null: "map" needs --shard-map FILE (or a --scenario) to take the shares from; use uniform for equal shares',
    ],
    [
      ['review', '--input', input, '--recording', input],
      'shardwise review: --input: "' +
        input +
        '" cannot be combined with --recording (one input at a time)',
    ],
    [
      ['review', '--recording', join(dir, 'nope.jsonl')],
      `shardwise review: --recording: "${join(dir, 'nope.jsonl')}" cannot be read (ENOENT: no such file or directory, access '${join(dir, 'nope.jsonl')}')`,
    ],
    [
      ['review', '--input', input, '--since', '2025-12-01T00:00:00Z'],
      'shardwise review: --since: "2025-12-01T00:00:00Z" applies only to a Kafka range (--brokers)',
    ],
    [
      ['review', '--brokers', '127.0.0.1:1', '--topic', 't'],
      'shardwise review: --since: "" is required with --brokers (the start of the range to review)',
    ],
    [
      [
        'review',
        '--brokers',
        '127.0.0.1:1',
        '--topic',
        't',
        '--since',
        '2025-12-01T01:00:00Z',
        '--until',
        '2025-12-01T00:00:00Z',
      ],
      'shardwise review: --until: "2025-12-01T00:00:00Z" is not after --since 2025-12-01T01:00:00Z',
    ],
    [
      ['review', '--input', input, '--out', 'x.html', '--markdown', 'x.html'],
      'shardwise review: --markdown: "x.html" is the same file as --out',
    ],
  ])('bad usage %j exits 2 with one line', async (args, line) => {
    const { code, err } = await runCli(args);
    expect(code).toBe(2);
    expect(err).toBe(`${line}\n`);
  });

  it('a file that is not a recording fails with exit 1 and no stack trace', async () => {
    const { code, err } = await runCli(['review', '--recording', input]);
    expect(code).toBe(1);
    expect(err).toBe(
      `shardwise review: "${input}" is not a shardwise recording: none of its 192 lines is a recording line\n`,
    );
  });
});
