import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { screenLayout } from '../../src/ui/screen-layout.js';
import { verdictView, waitingVerdict } from '../../src/ui/verdict-view.js';
import type { ScreenContext } from '../../src/ui/view-common.js';
import { buildWindowView } from '../../src/ui/window-view.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

const startMs = Date.UTC(2025, 11, 1);
const context: ScreenContext = {
  sourceLabel: 'file counts.jsonl',
  windowMs: 10_000,
  latenessMs: 2_000,
  confirm: 3,
  clear: 5,
  maxDetectable: 3,
};

/** One 10 s window of the given counts on shards "0".."m-1", judged with watch's defaults. */
function judged(counts: number[]): { window: ClosedWindow; judgement: Judgement } {
  const universe = ShardUniverse.ofCount(counts.length);
  const judge = new Judge(universe, { ...defaultJudgeSettings, hopMs: 10_000 });
  const pipeline = new JudgingPipeline(universe, { windowMs: 10_000, latenessMs: 0 }, judge);
  const out: { window: ClosedWindow; judgement: Judgement }[] = [];
  pipeline.events.on('window judged', (event) => out.push(event));
  counts.forEach((count, shard) => pipeline.record(startMs, String(shard), count));
  pipeline.finish();
  return out[0];
}

describe('waitingVerdict', () => {
  it('before the first window: waiting, and when a window closes', () => {
    expect(waitingVerdict(context, screenLayout({ columns: 120, rows: 40 })).evidence).toEqual([
      'A window closes 10 s after it starts plus 2 s of lateness; its verdict appears here',
    ]);
    expect(waitingVerdict(context, screenLayout({ columns: 80, rows: 24 }))).toEqual({
      tone: 'muted',
      symbol: '○',
      headline: 'WAITING for the first window to close',
      windowText: '',
      // 83 cells in all: at 79 the second clause goes whole.
      evidence: ['A window closes 10 s after it starts plus 2 s of lateness'],
      model: 'Verdicts are statistical evidence, not certainty.',
    });
  });
});

describe('verdictView', () => {
  // 7 shards at 100 and one at 300 of N = 1000: shard 7 at 2.4x its fair share of 125.
  const { window, judgement } = judged([100, 100, 100, 100, 100, 100, 100, 300]);
  const view = buildWindowView(window, judgement, null, String);

  it('a hotspot: symbol, tone, the shard and what it means, the window on the right', () => {
    expect(judgement.findings[0]).toBe('hotspot');
    const verdict = verdictView(view, context, screenLayout({ columns: 80, rows: 24 }));
    expect([verdict.symbol, verdict.tone, verdict.headline, verdict.windowText]).toEqual([
      '▲',
      'hotspot',
      'HOTSPOT on 7: hotter than random placement allows',
      '00:00:00–00:00:10',
    ]);
    // At 100 columns and more the window says what it is.
    expect(verdictView(view, context, screenLayout({ columns: 120, rows: 40 })).windowText).toBe(
      'window 00:00:00–00:00:10 UTC',
    );
  });

  it('the evidence names the fullest shard, its load and share against the ceiling', () => {
    const verdict = verdictView(view, context, screenLayout({ columns: 120, rows: 40 }));
    expect(verdict.evidence[0]).toMatch(
      new RegExp(
        `^Fullest 7: 300 req, 2\\.40x fair share; chance ceiling ${judgement.ceiling.relative.toFixed(2)}x`,
      ),
    );
  });

  it('on a narrow line the meaning goes and the core stays', () => {
    // 40 columns: 39 cells less the window text (17), a space, the symbol and a space: 19.
    const verdict = verdictView(view, context, screenLayout({ columns: 40, rows: 12 }));
    expect(verdict.headline).toBe('HOTSPOT on 7');
  });
});
