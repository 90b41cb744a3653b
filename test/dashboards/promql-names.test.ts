import { describe, expect, it } from 'vitest';
import { metricNames } from './promql-names.js';

describe('metricNames', () => {
  it('finds the selected metrics and nothing else', () => {
    expect(
      metricNames(
        'histogram_quantile(0.99, sum by (le, instance) (rate(a_seconds_bucket{job="x_total"}[5m])))',
      ),
    ).toEqual(['a_seconds_bucket']);
    expect(
      metricNames(
        '(time() - last_end) > clamp_min(3 * length, 60) + lateness\nor stalled == bool 1',
      ),
    ).toEqual(['last_end', 'length', 'lateness', 'stalled']);
    expect(
      metricNames('sum without (outcome) (rate(r{o=~"a|b"}[5m] offset 1h)) > 1e-3 * on (i) r'),
    ).toEqual(['r']);
    expect(metricNames('a / ignoring(x) group_left(y) b:rec:rate5m unless c')).toEqual([
      'a',
      'b:rec:rate5m',
      'c',
    ]);
    expect(metricNames('max_over_time(up[10m:1m]) and Inf > NaN')).toEqual(['up']);
  });
});
