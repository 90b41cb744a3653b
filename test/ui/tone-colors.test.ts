import { describe, expect, it } from 'vitest';
import { toneColors } from '../../src/ui/tone-colors.js';
import { findingTones } from '../../src/ui/view-common.js';

describe('toneColors', () => {
  it('each window state has a colour of its own; thin and muted are gray; plain has none', () => {
    expect(toneColors).toEqual({
      hotspot: 'red',
      cold: 'cyan',
      failover: 'magenta',
      uneven: 'yellow',
      chance: 'green',
      easing: 'blue',
      thin: 'gray',
      muted: 'gray',
      plain: undefined,
    });
    const colours = Object.values(findingTones).map((tone) => toneColors[tone]);
    expect(new Set(colours).size).toBe(colours.length);
  });
});
