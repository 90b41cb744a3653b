import type { Tone } from './view-model.js';

/**
 * Ink colour names per tone. Colour only repeats what a word or symbol already says
 * (▲ hotspot, ▼ cold, ...), so the screen reads the same without it (NO_COLOR, a
 * monochrome terminal, colour blindness). Our own palette.
 */
export const toneColors: Readonly<Record<Tone, string | undefined>> = {
  hotspot: 'red',
  cold: 'cyan',
  failover: 'magenta',
  uneven: 'yellow',
  chance: 'green',
  easing: 'blue',
  thin: 'gray',
  muted: 'gray',
  plain: undefined,
};
