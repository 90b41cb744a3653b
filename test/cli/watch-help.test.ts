import { describe, expect, it } from 'vitest';
import { readKeySettings } from '../../src/cli/run-settings.js';
import { defaultSeed } from '../../src/cli/scenario-options.js';
import { watchHelp } from '../../src/cli/watch-help.js';
import { readWindowOptions } from '../../src/cli/window-options.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import {
  leastShardsForRobust,
  spreadReadyWindows,
  spreadSpanWindows,
} from '../../src/judge/spread-mode.js';
import { shardKeyMemoryBound } from '../../src/keys/window-key-stats.js';
import { defaultMaxShards } from '../../src/window/shard-universe.js';

/** The help paragraph of one option: its line and the indented lines under it. */
function paragraph(option: string): string {
  const lines = watchHelp.split('\n');
  const at = lines.findIndex(
    (line) =>
      /^ {2,4}--/.test(line) && (line.trim() === option || line.trim().startsWith(`${option} `)),
  );
  expect(at, `${option} in watch --help`).toBeGreaterThanOrEqual(0);
  const body = [lines[at]];
  for (const line of lines.slice(at + 1)) {
    if (!/^ {20,}\S/.test(line)) break;
    body.push(line);
  }
  return body.map((line) => line.trim()).join(' ');
}

/** What the paragraph gives as the default. */
function stated(option: string): string {
  const match = /default:? ([^);,]+)/.exec(paragraph(option));
  expect(match, `a default in the help of ${option}`).not.toBeNull();
  return (match as RegExpExecArray)[1].trim();
}

// --help must stay true (the project's rules): each default the help states is the one the
// code uses.
describe('watch --help states the defaults the code uses', () => {
  it('windows', () => {
    const defaults = readWindowOptions({});
    expect(stated('--window')).toBe('10s');
    expect(defaults.windowMs).toBe(10_000);
    expect(stated('--lateness')).toBe('2s');
    expect(defaults.latenessMs).toBe(2_000);
    expect(stated('--max-ahead')).toBe('1h');
    expect(defaults.maxAheadMs).toBe(3_600_000);
    expect(stated('--max-shards')).toBe(String(defaultMaxShards));
  });

  it('judging', () => {
    const s = defaultJudgeSettings;
    expect(stated('--alpha')).toBe(String(s.alpha));
    expect(stated('--min-excess')).toBe(String(s.minExcess));
    expect(stated('--min-dispersion')).toBe(String(s.minDispersion));
    expect(stated('--max-detectable')).toBe(String(s.maxDetectable));
    expect(stated('--baseline')).toBe(String(s.baselineWindows));
    expect(stated('--confirm')).toBe(String(s.confirm));
    expect(stated('--clear')).toBe(String(s.clear));
    expect(stated('--max-flagged')).toBe(String(s.maxFlagged));
    expect(stated('--seed')).toBe(String(defaultSeed));
  });

  it('the robust spread’s learning and the shards it needs', () => {
    const spread = paragraph('--spread exact|robust|auto');
    expect(spread).toContain(`the last ${spreadSpanWindows} windows`);
    expect(spread).toContain(`after ${spreadReadyWindows} windows of learning`);
    expect(spread).toContain(`with ${leastShardsForRobust} shards or more`);
  });

  it('keys: the sketch sizes, and the memory bound in words', () => {
    const keys = readKeySettings({});
    expect(stated('--key-counters K')).toBe(`${keys?.sketch.counters}`);
    expect(stated('--key-registers R')).toBe(`${keys?.sketch.registers}`);
    expect(stated('--key-simulations S')).toBe(`${keys?.simulations}`);
    // 'shards x (K x 320 + R + 200) bytes': the bound of window-key-stats.ts.
    expect(watchHelp).toContain('shards x (K x 320 + R + 200) bytes');
    expect(shardKeyMemoryBound({ counters: 3, registers: 64 })).toBe(3 * 320 + 64 + 200);
  });
});
