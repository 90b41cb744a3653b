import type { Key } from 'ink';
import type { ScreenCommand } from './screen-controller.js';

/**
 * The screen's keys: one letter each, plus the arrows for stepping, so every action works
 * on any keyboard and over any terminal multiplexer. Ctrl+C quits too, because in raw mode
 * the terminal no longer turns it into a signal. O(1).
 * Example: commandForKey('p', key) is 'toggle pause'.
 */
export function commandForKey(input: string, key: Key): ScreenCommand | null {
  if (key.ctrl && input === 'c') return 'quit';
  if (key.leftArrow) return 'step back';
  if (key.rightArrow) return 'step forward';
  if (key.escape) return 'close help';
  switch (input) {
    case 'q':
      return 'quit';
    case 'p':
    case ' ':
      return 'toggle pause';
    case '[':
      return 'step back';
    case ']':
      return 'step forward';
    case 's':
      return 'next sort';
    case '?':
    case 'h':
      return 'toggle help';
    default:
      return null;
  }
}
