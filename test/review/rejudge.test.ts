import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { readRecording } from '../../src/record/recording-reader.js';
import { WindowRecorder } from '../../src/record/window-recorder.js';
import { rejudgeRecording } from '../../src/review/rejudge.js';
import { UsageError } from '../../src/errors/usage-error.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
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

describe('judging a recording of a growing universe again', () => {
  it('follows ids retired mid-recording and gives the verdicts watch gave', async () => {
    // Built here through the pipeline: a growing universe of at most 100 ids, flooded by 150
    // bogus ids in windows 0-1, then 16 real shards (db-3 at three times its share, an
    // incident that lives across the retirements), db-15 stopping after window 7 and
    // coming back in window 11, db-16 starting in window 8, db-7 stopping after window 12.
    // When db-15 goes and db-16 comes the universe keeps its size of 16 with other ids, and
    // the recording must carry each change.
    const windowMs = 10_000;
    const base = Date.UTC(2025, 11, 1);
    const settings = { ...defaultJudgeSettings, null: 'baseline' as const, hopMs: windowMs };
    const universe = ShardUniverse.growing({ maxShards: 100 });
    const judge = new Judge(universe, settings);
    const pipeline = new JudgingPipeline(universe, { windowMs, latenessMs: 0 }, judge);
    const path = join(dir, 'retiring.jsonl');
    const recorder = new WindowRecorder({
      path,
      settings: {
        ...settings,
        source: { kind: 'test' },
        windowMs,
        latenessMs: 0,
        declaredUniverse: false,
        keys: null,
      },
    });
    const watched: Judgement[] = [];
    pipeline.events.on('window judged', ({ window, judgement }) => {
      watched.push(judgement);
      recorder.record(window, judgement, universe);
    });
    for (let bogus = 0; bogus < 150; bogus++) {
      pipeline.record(base + Math.floor(bogus / 75) * windowMs + bogus, `bogus-${bogus}`, 1);
    }
    for (let window = 2; window < 16; window++) {
      for (let shard = 0; shard < 16; shard++) {
        if (shard === 15 && window >= 8 && window < 11) continue;
        if (shard === 7 && window >= 13) continue;
        pipeline.record(base + window * windowMs + shard, `db-${shard}`, shard === 3 ? 150 : 50);
      }
      if (window >= 8) pipeline.record(base + window * windowMs + 16, 'db-16', 50);
    }
    pipeline.finish();
    recorder.close();

    const retired = watched.map((verdict) => verdict.retiredShards ?? 0);
    // The flood's ids retire (twice: room for newcomers, then absent with 50+ requests per
    // shard), and db-15 retires once it is absent from window 8.
    expect(retired.filter((count) => count > 0).length).toBeGreaterThanOrEqual(2);
    expect(watched.at(-1)?.shards).toBe(16);
    expect(watched.map((verdict) => verdict.shards).slice(7, 9)).toEqual([16, 16]);
    expect(watched.some((verdict) => verdict.incidents.some((i) => i.shard === 'db-3'))).toBe(true);
    const recordedSettings = JSON.parse(readFileSync(path, 'utf8').split('\n')[0]).settings;
    const again: Judgement[] = [];
    for await (const window of rejudgeRecording(readRecording(path), {
      settings: { ...recordedSettings, hopMs: windowMs },
      windowMs: null,
    })) {
      again.push(window.judgement);
    }
    // The source of truth: the verdicts watch printed, as JSON.
    expect(again).toEqual(JSON.parse(JSON.stringify(watched)));
    // Merged into 20 s windows across the retirements: ids retired inside a merged window
    // stay until it is judged, so every recorded request is judged once (conservation).
    const merged: Judgement[] = [];
    for await (const window of rejudgeRecording(readRecording(path), {
      settings: { ...recordedSettings, hopMs: 2 * windowMs },
      windowMs: 2 * windowMs,
    })) {
      merged.push(window.judgement);
    }
    const requests = (verdicts: Judgement[]) =>
      verdicts.reduce((sum, verdict) => sum + verdict.requests, 0);
    expect(merged).toHaveLength(8);
    expect(requests(merged)).toBe(requests(watched));
    // db-7 retired with recorded window 13, inside the merged window 12-13 (where its load
    // is); it leaves m from the next merged window on, though no later line changes the ids.
    expect(merged.map((verdict) => verdict.shards).slice(6)).toEqual([17, 16]);
  });
});
