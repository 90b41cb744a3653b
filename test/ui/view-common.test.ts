import { describe, expect, it } from 'vitest';
import { findingLegend, findingSymbols, label, legendItems } from '../../src/ui/view-common.js';

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
