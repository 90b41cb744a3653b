import { describe, expect, it } from 'vitest';
import { chartSpecs, pValueFloor } from '../../src/review/report-charts.js';
import { judgeScenario, reviewOf } from './judged-scenario.js';

describe('the p-value chart', () => {
  // The failover scenario's dead shard and its spread reach p below 1e-300 (planted).
  const judged = judgeScenario('failover');
  const model = reviewOf(judged);
  const chart = chartSpecs(model).find((spec) => spec.id === 'pvalues');
  const layers = (
    chart?.spec as unknown as {
      layer: {
        data: { values: Record<string, unknown>[] };
        mark: { type: string };
        encoding: { y: { scale?: { domain: number[] } } };
      }[];
    }
  ).layer;

  it('keeps alpha readable: the axis stops at 1e-15, not 1e-300', () => {
    const alpha = model.settings.alpha;
    expect(pValueFloor(alpha)).toBe(1e-15);
    const domain = layers[0].encoding.y.scale?.domain ?? [];
    expect(domain[1]).toBe(1);
    expect(domain[0]).toBeGreaterThanOrEqual(1e-15);
    // alpha = 1e-3 sits a fifth of the way down the log axis, not on top of p = 1.
    expect(Math.log10(alpha) / Math.log10(domain[0])).toBeGreaterThan(0.19);
  });

  it('draws what lies beyond on the bottom edge and marks it', () => {
    const lines = layers.filter((layer) => layer.mark.type === 'line');
    expect(lines.length).toBe(3);
    const points = lines.flatMap((layer) => layer.data.values);
    expect(Math.min(...points.map((v) => v.p as number))).toBe(1e-15);
    const marked = layers.find((layer) => layer.mark.type === 'point');
    expect(marked?.data.values.length).toBe(points.filter((v) => v.beyond === true).length);
    expect(marked?.data.values.length).toBeGreaterThan(0);
    expect(chart?.caption).toMatch(/stops at 1e-15/);
  });

  it('keeps the emptiest shard visible where it meets the spread: distinct dashes, drawn first the widest', () => {
    const styled = layers
      .filter((layer) => layer.mark.type === 'line')
      .map((layer) => layer.mark as unknown as { strokeWidth: number; strokeDash: number[] });
    expect(new Set(styled.map((m) => m.strokeDash.join(','))).size).toBe(3);
    const widths = styled.map((m) => m.strokeWidth);
    expect([...widths].sort((a, b) => b - a)).toEqual(widths);
  });
});
