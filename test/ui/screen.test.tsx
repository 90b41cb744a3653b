import { describe, expect, it } from 'vitest';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { Screen } from '../../src/ui/screen.js';
import { displayWidth } from '../../src/ui/terminal-text.js';
import { buildWindowView, type ScreenModel, type WindowView } from '../../src/ui/view-model.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
import { modelOf, scenarioViews, startMs, windowMs } from './judged-windows.js';
import { renderAt } from './render-frame.js';

// Ground truth of the demo scenario (seed 1, 10 s windows from 00:00:00): seat-17 hot from
// 0:20 to 1:30, seat-42 dead and its traffic on seat-43 from 2:30 to 3:50, a lull from 4:20
// to 5:00, an uneven spread from 5:00 to 5:30 (src/scenario/built-in-scenarios.ts).
const demo = scenarioViews('demo', 36);
const deadShard = scenarioViews('dead-shard', 12);

/** SGR colour codes are allowed on a frame; nothing else that starts with ESC is. */
const colour = /\u001b\[[0-9;]*m/g;

function frameOf(model: ScreenModel): string {
  const instance = renderAt(<Screen model={model} />, model.layout.columns);
  const frame = (instance.lastFrame() ?? '').replace(colour, '');
  instance.unmount();
  return frame;
}

/** The frame of window `index` of `views`, shown as the newest. */
function frameAt(views: readonly WindowView[], index: number, columns = 80, rows = 24): string {
  return frameOf(modelOf(views.slice(0, index + 1), { size: { columns, rows } }));
}

/** A p-value as the screen writes it, read back for a tolerance check. */
function shownP(frame: string, prefix: string): number {
  const match = new RegExp(`${prefix}[^\\n]*?p = (<?)([0-9.e+-]+)`).exec(frame);
  expect(match, `no p-value after ${prefix} in\n${frame}`).not.toBeNull();
  return Number((match as RegExpExecArray)[2]);
}

function judgementAt(views: readonly WindowView[], index: number): Judgement {
  return views[index].judgement;
}

describe('the verdict in words with one sentence of evidence', () => {
  it('hotspot: the shard, its load, the ceiling, the p-value', () => {
    const j = judgementAt(demo, 3);
    expect(j.findings).toEqual(['hotspot']);
    const frame = frameAt(demo, 3);
    expect(frame).toContain('▲ HOTSPOT on seat-17: hotter than random placement allows');
    expect(frame).toContain('00:00:30–00:00:40');
    expect(frame).toContain(
      `Fullest seat-17: ${j.fullest?.count} req, ${j.fullest?.relative.toFixed(2)}x fair share; chance ceiling ${j.ceiling.relative.toFixed(2)}x`,
    );
    // Two significant digits on screen: within 5% of the verdict's p.
    expect(shownP(frame, 'Fullest seat-17') / (j.fullest?.p as number)).toBeCloseTo(1, 1);
    expect(frame).toContain('Flagged 2 windows in a row; 3 open an incident');
    expect(frame).toMatch(/null map · spread \w+ · .*statistical evidence only/);
  });

  it('hotspot with its incident open: since when', () => {
    const frame = frameAt(demo, 5);
    expect(frame).toContain('Incident open since 00:00:20 (4 windows)');
    expect(frame).toContain('Incidents ▲ hotspot seat-17 since 00:00:20 (4 windows)');
  });

  it('failover: the cold shard and the one that took its traffic, both sides of evidence', () => {
    const j = judgementAt(demo, 16);
    expect(j.pattern).toBe('failover');
    const frame = frameAt(demo, 16);
    expect(frame).toContain('◆ FAILOVER: seat-42 went cold, seat-43 took its traffic');
    expect(frame).toMatch(
      /Fullest seat-43: \d+ req, [\d.]+x fair share; chance ceiling [\d.]+x; p = /,
    );
    expect(frame).toMatch(
      /Emptiest seat-42: 0 req, 0\.00x fair share; chance floor 0\.\d\dx; p [=<] /,
    );
  });

  it('cold: the emptiest shard against the chance floor first', () => {
    const index = deadShard.findIndex((view) => view.judgement.findings[0] === 'cold');
    // Ground truth: seat-42 serves nothing from 1:00 (window 6).
    expect(index).toBe(6);
    const frame = frameAt(deadShard, index);
    expect(frame).toContain('▼ COLD: seat-42 gets less than chance allows');
    const lines = frame.split('\n');
    expect(lines[2]).toMatch(/^Emptiest seat-42: 0 req, 0\.00x fair share; chance floor/);
  });

  it('uneven: the spread, with N_eff because the traffic is over-dispersed', () => {
    const j = judgementAt(demo, 30);
    expect(j.findings).toEqual(['uneven']);
    const frame = frameAt(demo, 30);
    expect(frame).toContain('~ UNEVEN: wider spread than chance, no shard stands out');
    expect(frame).toContain(
      `Spread phi ${Number(j.spread.phi.toPrecision(3))} (1 under random placement)`,
    );
    // At 80 columns N_eff goes without its phi, which the line above gives.
    expect(frame).toContain(`N_eff ${Math.round(j.nEff)} · `);
    expect(frameAt(demo, 30, 120, 40)).toContain(
      `N_eff ${Math.round(j.nEff)} (phi ${Number(j.spread.phi.toPrecision(3))})`,
    );
  });

  it('chance: says so, with the fullest shard still named, and no N_eff', () => {
    const j = judgementAt(demo, 0);
    expect(j.findings).toEqual(['chance']);
    const frame = frameAt(demo, 0);
    expect(frame).toContain('· CHANCE: the skew is what random placement gives');
    expect(frame).toContain(`Fullest ${j.fullest?.shard}:`);
    expect(frame).toContain('No shard past the chance ceiling or below the floor');
    expect(frame).not.toContain('N_eff');
  });

  it('too little traffic: the detectable excess and the limit', () => {
    const j = judgementAt(demo, 27);
    expect(j.findings).toEqual(['too little traffic']);
    const frame = frameAt(demo, 27);
    expect(frame).toContain('? TOO LITTLE TRAFFIC: a hotspot could not be told from chance');
    expect(frame).toContain(
      `Only ${j.requests} req on 64 shards: detectable excess ${(j.detectableExcess as number).toFixed(2)}x (limit 3.00x)`,
    );
  });

  it('before the first window: waiting, and why', () => {
    const frame = frameOf(modelOf([]));
    expect(frame).toContain('WAITING for the first window to close');
    expect(frame).toContain('A window closes 10 s after it starts plus 2 s of lateness');
  });
});

describe('the shards that matter', () => {
  it('flagged first by adjusted p, then the extremes, each with a bar against the ceiling', () => {
    const frame = frameAt(demo, 16);
    const rows = frame.split('\n').filter((line) => /^[▲▼ ]seat-\d\d /.test(line));
    expect(rows).toHaveLength(4);
    expect(rows[0]).toMatch(/^▼seat-42 +0 +\d+ +0\.00x +<1e-300 2 /);
    expect(rows[1]).toMatch(/^▲seat-43 +\d+ +\d+ +1\.\d\dx +[\d.]+e-\d+ 2 +▒+┃█+$/);
    // Unflagged rows carry no streak.
    for (const row of rows.slice(2)) expect(row).toMatch(/ - +▒*[╎ ]*┃/);
  });

  it('the fullest shard past the ceiling draws solid cells beyond the mark; within chance none', () => {
    const hot = frameAt(demo, 3)
      .split('\n')
      .find((line) => line.startsWith('▲seat-17'));
    expect(hot).toMatch(/┃█{3,}$/);
    const calm = frameAt(demo, 0)
      .split('\n')
      .filter((line) => /^ seat-\d\d /.test(line));
    for (const row of calm) expect(row).not.toContain('█');
  });

  it('orders rows by load or by shard id, each chosen from all shards', () => {
    const ids = (sort: 'evidence' | 'load' | 'shard') =>
      modelOf(demo.slice(0, 17), { sort }).shards.rows.map((row) => row.shard);
    const byEvidence = ids('evidence');
    expect(byEvidence.slice(0, 2)).toEqual(['seat-42', 'seat-43']);
    // The highest loads first: the dead seat-42 is not among them.
    expect(ids('load')[0]).toBe('seat-43');
    expect(ids('load')).not.toContain('seat-42');
    expect(ids('shard')).toEqual(['seat-00', 'seat-01', 'seat-02', 'seat-03']);
    expect(frameOf(modelOf(demo.slice(0, 17), { sort: 'load' }))).toContain('sorted by load');
  });
});

describe('fits the terminal', () => {
  it('80x24: every panel in 23 lines of at most 80 cells', () => {
    const frame = frameAt(demo, 16);
    const lines = frame.split('\n');
    expect(lines.length).toBeLessThanOrEqual(23);
    for (const line of lines) expect(displayWidth(line)).toBeLessThanOrEqual(80);
    for (const title of [
      '◆ FAILOVER',
      'Shards ·',
      'Spread ·',
      'History ·',
      'Incidents',
      'Source ●',
    ]) {
      expect(frame).toContain(title);
    }
    expect(lines.at(-1)).toContain('q quit');
  });

  it('a wide terminal puts the spread beside the shards and shows more of everything', () => {
    const narrow = frameAt(demo, 20);
    const wide = frameAt(demo, 20, 160, 45);
    const lines = wide.split('\n');
    expect(lines.length).toBeLessThanOrEqual(44);
    for (const line of lines) expect(displayWidth(line)).toBeLessThanOrEqual(160);
    expect(lines.some((line) => line.includes('Shards ·') && line.includes('Spread ·'))).toBe(true);
    const rows = (frame: string) =>
      frame.split('\n').filter((line) => /^[▲▼ ]seat-\d\d /.test(line));
    expect(rows(narrow)).toHaveLength(4);
    expect(rows(wide).length).toBeGreaterThanOrEqual(20);
    // The ceiling in requests and the full words only where there is room.
    expect(wide).toMatch(/chance ceiling [\d.]+x \(\d+ req\)/);
    expect(narrow).not.toMatch(/chance ceiling [\d.]+x \(\d+ req\)/);
    expect(wide).toContain('verdicts are statistical evidence, not certainty');
    expect(wide).toContain('? too little traffic');
  });

  it('the help takes the panels’ place and keeps the key line', () => {
    const frame = frameOf(modelOf(demo.slice(0, 4), { help: true }));
    expect(frame).toContain('Help · ? or Esc closes it');
    expect(frame).toContain('Spread: █ shards seen');
    // Every paragraph whole at 80x24: the last one ends on the screen.
    expect(frame).toMatch(/clock\.\n/);
    expect(frame).not.toContain('Shards ·');
    expect(frame.split('\n').length).toBeLessThanOrEqual(23);
  });
});

describe('shard ids from the wire', () => {
  it('an id carrying escape sequences renders inert, as visible text', () => {
    const evil = 'e\u001b[2J\u001b]0;owned\u0007\u009b31m';
    const universe = ShardUniverse.growing();
    const judge = new Judge(universe, { ...defaultJudgeSettings, hopMs: windowMs });
    const pipeline = new JudgingPipeline(universe, { windowMs, latenessMs: 0 }, judge);
    const judged: { window: ClosedWindow; judgement: Judgement }[] = [];
    pipeline.events.on('window judged', (event) => judged.push(event));
    for (let shard = 0; shard < 31; shard++) pipeline.record(startMs, `s-${shard}`, 1000);
    pipeline.record(startMs, evil, 3000);
    pipeline.finish();
    const view = buildWindowView(judged[0].window, judged[0].judgement, null, (index) =>
      universe.idAt(index),
    );
    expect(view.judgement.findings).toContain('hotspot');
    const instance = renderAt(<Screen model={modelOf([view])} />, 80);
    const raw = instance.lastFrame() ?? '';
    instance.unmount();
    const withoutColour = raw.replace(colour, '');
    expect(withoutColour).not.toMatch(/[\u0000-\u0009\u000b-\u001f\u007f-\u009f]/);
    // In the headline the id is cut to 24 cells, in the table to its 12.
    expect(withoutColour).toContain('HOTSPOT on e\\x1b[2J\\x1b]0;owned\\x0…');
    expect(withoutColour).toMatch(/^▲e\\x1b\[2J\\x1… /m);
  });
});

describe('issue #18: no line is cut, at any state, at 80x24 and 120x40', () => {
  // A cut line is one Ink truncated (it ends its text with `…`) or one that ran into the
  // right edge; the screen keeps the last column free, so any text there is a cut. Shard ids
  // in these scenarios are short, so no `…` is ever an abbreviated id.
  const sizes = [
    { columns: 80, rows: 24 },
    { columns: 120, rows: 40 },
  ];
  const states: [string, Partial<Parameters<typeof modelOf>[1]>, number][] = [
    ['waiting', {}, -1],
    ['chance', {}, 1],
    ['hotspot', {}, 3],
    ['incident open', {}, 6],
    ['easing', {}, 12],
    ['failover', {}, 16],
    ['paused and stepped back', { paused: true, selected: 10 }, 20],
    ['sorted by shard', { sort: 'shard' }, 20],
    ['help', { help: true }, 4],
  ];
  for (const size of sizes) {
    it.each(states)(`${size.columns}x${size.rows} %s`, (_, overrides, index) => {
      const frame = frameOf(modelOf(demo.slice(0, index + 1), { size, ...(overrides ?? {}) }));
      const lines = frame.split('\n');
      expect(lines.length).toBeLessThanOrEqual(size.rows - 1);
      for (const line of lines) {
        expect(line, `cut:\n${frame}`).not.toContain('…');
        expect(displayWidth(line.trimEnd()), `into the edge:\n${frame}`).toBeLessThan(size.columns);
      }
    });
  }

  it('the header keeps alpha at 80 columns', () => {
    const frame = frameAt(demo, 3);
    expect(frame.split('\n')[0]).toMatch(/(alpha|α) 0\.001/);
  });

  it('the key line is our own: no reverse video', () => {
    const instance = renderAt(<Screen model={modelOf(demo.slice(0, 4))} />, 79);
    const frame = instance.lastFrame() ?? '';
    instance.unmount();
    // SGR 7 is reverse video (ECMA-48).
    expect(frame).not.toMatch(/\u001b\[(?:\d+;)*7(?:;\d+)*m/);
    expect(frame.replace(colour, '').split('\n').at(-1)).toMatch(/^keys › p pause/);
  });
});

describe('a terminal shorter than every panel', () => {
  // Below 19 rows stacked (16 side by side) the panels need more lines than there are. The
  // verdict, the history, the incidents, the source and the keys keep their lines; the
  // shard table and the spread chart between them are cut from the bottom, and no line is
  // drawn over another.
  it.each([
    [60, 14],
    [80, 16],
    [40, 13],
    [170, 14],
  ])('%dx%d: the lines around the panels as on a tall terminal', (columns, rows) => {
    const views = demo.slice(0, 4);
    const short = frameOf(modelOf(views, { size: { columns, rows } })).split('\n');
    const tall = frameOf(modelOf(views, { size: { columns, rows: 40 } })).split('\n');
    expect(short.length).toBeLessThanOrEqual(rows - 1);
    // Header, headline, two lines of evidence, the model line.
    expect(short.slice(0, 5)).toEqual(tall.slice(0, 5));
    // The history (4 lines), incidents, source and keys end the frame.
    expect(short.slice(-7)).toEqual(tall.slice(-7));
    // Whatever the panels keep is their first lines.
    const panels = short.slice(5, -7);
    expect(panels).toEqual(tall.slice(5, 5 + panels.length));
  });
});
