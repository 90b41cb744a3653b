import type { Key } from 'ink';
import { describe, expect, it } from 'vitest';
import { commandForKey } from '../../src/ui/key-bindings.js';

/** A key event with only the given flags set, as Ink's useInput hands it over. */
const key = (flags: Partial<Key> = {}): Key => flags as Key;

describe('commandForKey', () => {
  it('the doc example: p toggles the pause', () => {
    expect(commandForKey('p', key())).toBe('toggle pause');
  });

  it.each([
    ['q', 'quit'],
    [' ', 'toggle pause'],
    ['[', 'step back'],
    [']', 'step forward'],
    ['s', 'next sort'],
    ['?', 'toggle help'],
    ['h', 'toggle help'],
  ])('%j is %s', (input, command) => {
    expect(commandForKey(input, key())).toBe(command);
  });

  it('the arrows step, Esc closes the help, Ctrl+C quits (raw mode sends no signal)', () => {
    expect(commandForKey('', key({ leftArrow: true }))).toBe('step back');
    expect(commandForKey('', key({ rightArrow: true }))).toBe('step forward');
    expect(commandForKey('', key({ escape: true }))).toBe('close help');
    expect(commandForKey('c', key({ ctrl: true }))).toBe('quit');
  });

  it('anything else does nothing, a plain c included', () => {
    expect(commandForKey('c', key())).toBeNull();
    expect(commandForKey('x', key())).toBeNull();
    expect(commandForKey('P', key())).toBeNull();
    expect(commandForKey('', key({ upArrow: true }))).toBeNull();
  });
});
