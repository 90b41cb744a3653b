import { describe, expect, it } from 'vitest';
import {
  compareIds,
  findingLegend,
  findingSymbols,
  label,
  legendItems,
} from '../../src/ui/view-common.js';

describe('compareIds', () => {
  it('reading order: seat-2 before seat-10 (the doc comment’s example)', () => {
    expect(compareIds('seat-2', 'seat-10')).toBeLessThan(0);
    expect(['seat-10', 'seat-2', 'seat-1', 'b', 'a'].sort(compareIds)).toEqual([
      'a',
      'b',
      'seat-1',
      'seat-2',
      'seat-10',
    ]);
    expect(compareIds('node-007', 'node-007')).toBe(0);
  });
});

describe('label', () => {
  it('a missing id is ?; an id is escaped and cut to 24 cells, the last an ellipsis', () => {
    expect(label(undefined)).toBe('?');
    expect(label('seat-17')).toBe('seat-17');
    expect(label('checkout-service-eu-west-1a-7')).toBe('checkout-service-eu-wes…');
    expect(label('bell\u0007')).toBe('bell\\x07');
  });
});

describe('the legend of window states', () => {
  it('in the order of docs/screen.md, with the symbols of the findings', () => {
    expect(findingLegend).toBe(
      '▲ hotspot  ▼ cold  ◆ failover  ~ uneven  ↘ easing  · chance  ? too little traffic',
    );
    for (const item of legendItems) {
      const [symbol] = item.text.split(' ');
      expect(Object.values(findingSymbols)).toContain(symbol);
      expect(item.short.startsWith(symbol)).toBe(true);
    }
  });
});
