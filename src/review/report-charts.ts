import { parse, View } from 'vega';
import { compile, type TopLevelSpec } from 'vega-lite';
import type { Finding } from '../judge/judgement.js';
import { findingOrder, type ReviewModel } from './review-model.js';
import { codePointEscapes } from '../window/visible-text.js';

/**
 * The report's charts as Vega-Lite specifications, rendered to SVG in Node by Vega's
 * headless renderer (no browser, no canvas, no fonts loaded: text is set in the generic
 * sans-serif family). Vega escapes every data value it writes into the SVG, shard ids
 * included. Time series are thinned to at most {@link mostColumns} columns, each keeping
 * the window that matters most for the chart (the fullest load, the smallest p-value), so a
 * day of windows draws as fast as an hour.
 */

/** The SVG of each chart, and the caption that says what it shows. */
export interface RenderedChart {
  readonly id: string;
  readonly title: string;
  readonly caption: string;
  readonly svg: string;
}

/** Most time columns drawn per chart. */
export const mostColumns = 720;
const width = 760;

/** Colours of the findings (our own palette). */
export const findingColours: Readonly<Record<Finding, string>> = {
  hotspot: '#c2410c',
  cold: '#1d4ed8',
  uneven: '#7e22ce',
  chance: '#15803d',
  'too little traffic': '#6b7280',
};

/** Renders every chart the model has data for. */
export async function renderCharts(model: ReviewModel): Promise<RenderedChart[]> {
  const specs = chartSpecs(model);
  const charts: RenderedChart[] = [];
  for (const chart of specs) charts.push({ ...chart, svg: await toSvg(chart.spec) });
  return charts;
}

/** The Vega-Lite specification of every chart, with titles and captions. */
export function chartSpecs(
  model: ReviewModel,
): { id: string; title: string; caption: string; spec: TopLevelSpec }[] {
  if (model.windows === 0) return [];
  const columns = thinned(model);
  const specs = [
    timelineSpec(model, columns),
    heatSpec(model),
    histogramSpec(model),
    pValueSpec(model, columns),
    findingSpec(model, columns),
  ];
  return specs.filter((spec): spec is NonNullable<typeof spec> => spec !== null);
}

async function toSvg(spec: TopLevelSpec): Promise<string> {
  const view = new View(parse(compile(spec).spec), { renderer: 'none' });
  try {
    return await view.toSVG();
  } finally {
    view.finalize();
  }
}

interface Column {
  /** First and last window of the column (epoch ms). */
  readonly start: number;
  readonly end: number;
  /** The window with the fullest load. */
  readonly fullestAt: number;
  readonly windows: number;
}

/** Groups the windows into at most mostColumns runs of equal length. */
function thinned(model: ReviewModel): Column[] {
  const n = model.windows;
  const per = Math.ceil(n / mostColumns);
  const series = model.series;
  const columns: Column[] = [];
  for (let from = 0; from < n; from += per) {
    const to = Math.min(n, from + per);
    let fullestAt = from;
    for (let at = from; at < to; at++) {
      if (!(series.fullest[at] <= series.fullest[fullestAt])) fullestAt = at;
    }
    columns.push({ start: from, end: to, fullestAt, windows: to - from });
  }
  return columns;
}

/** The time axis: UTC, with seconds for spans under an hour and dates for spans over two days. */
function utcAxisFor(model: ReviewModel) {
  const span = model.to - model.from;
  const format = span < 3_600_000 ? '%H:%M:%S' : span <= 2 * 86_400_000 ? '%H:%M' : '%m-%d %H:%M';
  return { scale: { type: 'utc' as const }, axis: { title: 'time (UTC)', format } };
}

function timelineSpec(model: ReviewModel, columns: Column[]) {
  const s = model.series;
  const values: { t: number; line: string; load: number }[] = [];
  const hot: { t: number; load: number }[] = [];
  const hotBit = 1 << findingOrder.indexOf('hotspot');
  for (const column of columns) {
    const at = column.fullestAt;
    if (!Number.isFinite(s.fullest[at])) continue;
    values.push({ t: s.start[at], line: 'fullest shard', load: s.fullest[at] });
    values.push({ t: s.start[at], line: 'chance ceiling', load: s.ceiling[at] });
    let flagged = false;
    for (let w = column.start; w < column.end; w++) if (s.findings[w] & hotBit) flagged = true;
    if (flagged) hot.push({ t: s.start[at], load: s.fullest[at] });
  }
  if (values.length === 0) return null;
  return {
    id: 'timeline',
    title: 'Fullest shard against the chance ceiling',
    caption:
      'The relative load of the fullest shard in each window (1 = its fair share) and the chance ceiling: the load the fullest of all shards stays under with probability 1 - alpha when placement is random. Points mark windows with a hotspot finding. ' +
      thinningNote(model, columns),
    spec: {
      width,
      height: 220,
      layer: [
        {
          data: { values },
          mark: { type: 'line', interpolate: 'step-after', strokeWidth: 1.5 },
          encoding: {
            x: { field: 't', type: 'temporal', ...utcAxisFor(model) },
            y: { field: 'load', type: 'quantitative', title: 'relative load (1 = fair share)' },
            color: {
              field: 'line',
              type: 'nominal',
              title: null,
              scale: {
                domain: ['fullest shard', 'chance ceiling'],
                range: ['#111827', '#d97706'],
              },
              legend: { orient: 'top' },
            },
          },
        },
        {
          data: { values: hot },
          mark: { type: 'point', filled: true, size: 24, color: findingColours.hotspot },
          encoding: {
            x: { field: 't', type: 'temporal', ...utcAxisFor(model) },
            y: { field: 'load', type: 'quantitative' },
          },
        },
        {
          data: { values: [{ fair: 1 }] },
          mark: { type: 'rule', color: '#9ca3af', strokeDash: [2, 2] },
          encoding: { y: { field: 'fair', type: 'quantitative' } },
        },
      ],
    } as TopLevelSpec,
  };
}

function heatSpec(model: ReviewModel) {
  const { columns, rows } = model.heat;
  if (rows.length === 0 || columns.length === 0) return null;
  const values: { shard: string; start: number; end: number; load: number }[] = [];
  let highest = 2;
  for (const row of rows) {
    // Vega escapes markup in the labels it writes, not controls or bidi overrides.
    const label = codePointEscapes(row.shard);
    row.means.forEach((load, at) => {
      values.push({ shard: label, start: columns[at].start, end: columns[at].end, load });
      highest = Math.max(highest, load);
    });
  }
  return {
    id: 'heat',
    title: 'Most loaded shards over time',
    caption: `Mean relative load per shard and time column (1 = fair share; blue below, orange above). Rows: the shards of the episodes first, then the highest loaded, ${rows.length} in all. Each column averages ${describeColumns(model)}.`,
    spec: {
      width,
      height: Math.max(60, rows.length * 18),
      data: { values },
      mark: { type: 'rect' },
      encoding: {
        x: { field: 'start', type: 'temporal', ...utcAxisFor(model) },
        x2: { field: 'end' },
        y: {
          field: 'shard',
          type: 'nominal',
          sort: rows.map((row) => codePointEscapes(row.shard)),
          title: 'shard',
          // Long ids are cut with an ellipsis past this width, never allowed to squeeze the strip.
          axis: { labelLimit: 260 },
        },
        color: {
          field: 'load',
          type: 'quantitative',
          title: 'relative load',
          scale: { scheme: 'blueorange', domain: [0, 1, Math.min(highest, 4)], clamp: true },
        },
      },
    } as TopLevelSpec,
  };
}

function histogramSpec(model: ReviewModel) {
  const peak = model.peak;
  if (peak === null) return null;
  const h = peak.histogram;
  const binWidth = (h.high - h.low) / h.bins;
  const values: { from: number; to: number; shards: number; kind: string }[] = [];
  const expected: { middle: number; shards: number }[] = [];
  for (let bin = 0; bin < h.bins + 2; bin++) {
    const from = h.low + (bin - 1) * binWidth;
    const edge = bin === 0 || bin === h.bins + 1;
    values.push({
      from,
      to: from + binWidth,
      shards: h.observed[bin],
      kind: edge ? 'edge' : 'inner',
    });
    expected.push({ middle: from + binWidth / 2, shards: h.expected[bin] });
  }
  const j = peak.judgement;
  const rules = [{ level: j.ceiling.relative, what: 'chance ceiling' }];
  if (j.floor !== null) rules.push({ level: j.floor.relative, what: 'chance floor' });
  return {
    id: 'histogram',
    title: 'Load spread at the peak window beside random placement',
    caption: `Shards by relative load in the window ${isoMinute(peak.start)} to ${isoMinute(peak.end)} (bars), and the number of shards random placement predicts in each bin (line): the sum over shards of the binomial probability of a load in the bin, with ${h.predictedRequests} requests placed${j.spreadMode === 'robust' ? ' (the judged total, the requests divided by the dispersion, as the verdict used)' : ''}. The darker first and last bars collect every shard below ${h.low.toFixed(2)} and at or above ${h.high.toFixed(2)}.${h.groupedShares ? ' Shares were grouped into 48 classes for the prediction (picture only).' : ''}`,
    spec: {
      width,
      height: 220,
      layer: [
        {
          data: { values },
          mark: { type: 'rect', stroke: '#475569', strokeWidth: 0.5 },
          encoding: {
            x: {
              field: 'from',
              type: 'quantitative',
              title: 'relative load (1 = fair share)',
              scale: { zero: false, nice: false },
            },
            x2: { field: 'to' },
            y: { field: 'shards', type: 'quantitative', title: 'shards' },
            y2: { datum: 0 },
            color: {
              field: 'kind',
              type: 'nominal',
              scale: { domain: ['inner', 'edge'], range: ['#94a3b8', '#475569'] },
              legend: null,
            },
          },
        },
        {
          data: { values: expected },
          mark: { type: 'line', color: '#d97706', point: { color: '#d97706', size: 16 } },
          encoding: {
            x: { field: 'middle', type: 'quantitative' },
            y: { field: 'shards', type: 'quantitative' },
          },
        },
        {
          data: { values: rules },
          mark: { type: 'rule', strokeDash: [4, 3], color: '#b91c1c' },
          encoding: { x: { field: 'level', type: 'quantitative' } },
        },
      ],
    } as TopLevelSpec,
  };
}

/**
 * The lowest p-value the p-value chart's axis reaches: 1e-15 (1e-6 of alpha when alpha is
 * smaller still). Below it every p-value is overwhelming evidence alike, and an axis run on
 * to 1e-300 would squeeze alpha against p = 1; such values are drawn on the bottom edge and
 * marked.
 */
export function pValueFloor(alpha: number): number {
  return Math.min(1e-15, alpha * 1e-6);
}

function pValueSpec(model: ReviewModel, columns: Column[]) {
  const s = model.series;
  const floor = pValueFloor(model.settings.alpha);
  const values: { t: number; test: string; p: number; beyond: boolean }[] = [];
  const tests: [string, Float64Array][] = [
    ['fullest shard', s.fullestP],
    ['emptiest shard', s.emptiestP],
    ['spread', s.spreadP],
  ];
  for (const column of columns) {
    for (const [test, series] of tests) {
      let least = Number.NaN;
      for (let at = column.start; at < column.end; at++) {
        if (Number.isFinite(series[at]) && !(series[at] >= least)) least = series[at];
      }
      if (Number.isFinite(least)) {
        values.push({
          t: s.start[column.start],
          test,
          p: Math.max(least, floor),
          beyond: least < floor,
        });
      }
    }
  }
  if (values.length === 0) return null;
  const lowest = Math.min(...values.map((v) => v.p), model.settings.alpha / 10);
  const domain = ['fullest shard', 'emptiest shard', 'spread'];
  const range = [findingColours.hotspot, findingColours.cold, findingColours.uneven];
  const x = { field: 't', type: 'temporal', ...utcAxisFor(model) };
  const y = {
    field: 'p',
    type: 'quantitative',
    title: 'p-value',
    scale: { type: 'log', domain: [lowest, 1] },
    axis: { format: '.0e' },
  };
  // One layer per test, the widest drawn first, so that tests at the same p-value (a dead
  // shard and the spread both at the floor) stay visible: solid over dashed over dotted.
  const styles: Record<string, { strokeWidth: number; strokeDash: number[] }> = {
    spread: { strokeWidth: 3.2, strokeDash: [2, 2] },
    'emptiest shard': { strokeWidth: 2.2, strokeDash: [6, 3] },
    'fullest shard': { strokeWidth: 1.2, strokeDash: [1, 0] },
  };
  const lines = ['spread', 'emptiest shard', 'fullest shard'].map((test) => ({
    data: { values: values.filter((v) => v.test === test) },
    mark: { type: 'line', interpolate: 'step-after', ...styles[test] },
    encoding: {
      x,
      y,
      color: {
        field: 'test',
        type: 'nominal',
        title: null,
        scale: { domain, range },
        legend: test === 'fullest shard' ? { orient: 'top' } : null,
      },
    },
  }));
  const beyond = values.filter((v) => v.beyond);
  return {
    id: 'pvalues',
    title: 'p-values over time (log scale)',
    caption: `The p-value of each test per window under the ${model.settings.null} null: the fullest shard (P of a load this high on some shard by chance), the emptiest shard, and the spread (Pearson X^2). The dashed line is alpha = ${model.settings.alpha}; below it the test rejects random placement. The axis stops at ${floor.toExponential(0)}: smaller p-values (${beyond.length === 0 ? 'none here' : `${beyond.length} here`}) are drawn on its bottom edge, each marked with a downward triangle; the episode table gives the least p exactly. ${thinningNote(model, columns, 'the smallest p-value')}`,
    spec: {
      width,
      height: 220,
      layer: [
        ...lines,
        ...(beyond.length === 0
          ? []
          : [
              {
                data: { values: beyond },
                mark: { type: 'point', shape: 'triangle-down', filled: true, size: 36 },
                encoding: {
                  x,
                  y,
                  color: { field: 'test', type: 'nominal', scale: { domain, range }, legend: null },
                },
              },
            ]),
        {
          data: { values: [{ alpha: model.settings.alpha }] },
          mark: { type: 'rule', strokeDash: [5, 3], color: '#111827' },
          encoding: { y: { field: 'alpha', type: 'quantitative' } },
        },
      ],
    } as TopLevelSpec,
  };
}

function findingSpec(model: ReviewModel, columns: Column[]) {
  const s = model.series;
  const values: { start: number; end: number; finding: string; share: number }[] = [];
  for (const column of columns) {
    findingOrder.forEach((finding, bit) => {
      let windows = 0;
      for (let at = column.start; at < column.end; at++) if (s.findings[at] & (1 << bit)) windows++;
      if (windows > 0) {
        values.push({
          start: s.start[column.start],
          end: s.end[column.end - 1],
          finding,
          share: windows / column.windows,
        });
      }
    });
  }
  return {
    id: 'findings',
    title: 'Findings over time',
    caption: `Which findings held in each window: a window may hold several (cold and hotspot together is the failover pattern). ${columns[0].windows > 1 ? `Each column spans ${columns[0].windows} windows; its shade is the share of them with the finding.` : ''}`,
    spec: {
      width,
      height: 130,
      data: { values },
      mark: { type: 'rect' },
      encoding: {
        x: { field: 'start', type: 'temporal', ...utcAxisFor(model) },
        x2: { field: 'end' },
        y: { field: 'finding', type: 'nominal', sort: [...findingOrder], title: null },
        color: {
          field: 'finding',
          type: 'nominal',
          scale: {
            domain: [...findingOrder],
            range: findingOrder.map((finding) => findingColours[finding]),
          },
          legend: null,
        },
        opacity: {
          field: 'share',
          type: 'quantitative',
          scale: { domain: [0, 1], range: [0.2, 1] },
          legend: null,
        },
      },
    } as TopLevelSpec,
  };
}

function thinningNote(model: ReviewModel, columns: Column[], kept = 'the fullest load'): string {
  if (columns.length === 0 || columns[0].windows === 1) return 'One point per window.';
  return `The ${model.windows} windows are drawn as ${columns.length} columns of ${columns[0].windows}; each shows the window with ${kept}.`;
}

function describeColumns(model: ReviewModel): string {
  const columns = model.heat.columns;
  if (columns.length === 0) return 'one window';
  const span = columns[0].end - columns[0].start;
  return span <= model.settings.windowMs ? 'one window' : `${formatSpan(span)} of windows`;
}

/** A span of time in the largest whole unit, for captions: 10 s, 15 min, 2 h. */
export function formatSpan(ms: number): string {
  if (ms % 3_600_000 === 0) return `${ms / 3_600_000} h`;
  if (ms % 60_000 === 0) return `${ms / 60_000} min`;
  if (ms % 1000 === 0) return `${ms / 1000} s`;
  return `${ms} ms`;
}

function isoMinute(ms: number): string {
  return new Date(ms).toISOString().replace('.000Z', 'Z');
}
