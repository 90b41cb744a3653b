import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { Judgement } from '../../src/judge/judgement.js';
import { readRecording } from '../../src/record/recording-reader.js';
import { rejudgeRecording } from '../../src/review/rejudge.js';
import { UsageError } from '../../src/window/errors.js';
import { countReports, runCli } from './cli-run.js';

const dir = mkdtempSync(join(tmpdir(), 'shardwise-rejudge-'));
const shards = Array.from({ length: 32 }, (_, at) => `s-${at}`);
const input = join(dir, 'records.jsonl');
writeFileSync(input, countReports(shards, 18, { shard: 's-3', from: 6, to: 12 }));
const recording = join(dir, 'rec.jsonl');

async function watchLines(extra: string[]): Promise<Judgement[]> {
  const { code, out } = await runCli([
    'watch',
    '--input',
    input,
    '--shards',
    's-0..s-31',
    '--no-ui',
    '--no-metrics',
    ...extra,
  ]);
  expect(code).toBe(0);
  return out
    .trim()
    .split('\n')
    .map((line) => JSON.parse(line) as Judgement);
}

describe('judging a recording again', () => {
  it('merged into 30 s windows, gives the verdicts watch gives at --window 30s', async () => {
    await watchLines(['--record', recording]);
    // The reference: watch itself, judging the same records in 30 s windows.
    const reference = await watchLines(['--window', '30s']);
    const settings = JSON.parse(readFileSync(recording, 'utf8').split('\n')[0]).settings;
    const again: Judgement[] = [];
    for await (const window of rejudgeRecording(readRecording(recording), {
      settings: { ...settings, hopMs: 30_000 },
      windowMs: 30_000,
    })) {
      again.push(window.judgement);
    }
    expect(again).toEqual(reference);
  });

  it('with another alpha, gives the verdicts watch gives at that alpha', async () => {
    const reference = await watchLines(['--alpha', '0.05']);
    const settings = JSON.parse(readFileSync(recording, 'utf8').split('\n')[0]).settings;
    const again: Judgement[] = [];
    for await (const window of rejudgeRecording(readRecording(recording), {
      settings: { ...settings, alpha: 0.05 },
      windowMs: null,
    })) {
      again.push(window.judgement);
    }
    expect(again).toEqual(reference);
  });

  it('refuses a window that is not a whole multiple of the recorded one', async () => {
    const attempt = async () => {
      const settings = JSON.parse(readFileSync(recording, 'utf8').split('\n')[0]).settings;
      for await (const window of rejudgeRecording(readRecording(recording), {
        settings,
        windowMs: 15_000,
        windowText: '15s',
      })) {
        void window;
      }
    };
    await expect(attempt()).rejects.toThrow(UsageError);
    const { code, err } = await runCli(['review', '--recording', recording, '--window', '15s']);
    expect(code).toBe(2);
    expect(err).toBe(
      `shardwise review: --window: "15s" is not a whole multiple of the recording's 10000 ms windows: a recording keeps one count vector per window, so windows can be merged into longer multiples but never cut\n`,
    );
  });
});
