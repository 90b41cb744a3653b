// The terminal screen's loader: the CI variables are hidden only while Ink is loaded and
// come back exactly as they were (set, set to "0" or "false", or absent). The variable
// names and their reading ("set and neither 0 nor false") are those of Ink 6's is-in-ci
// dependency, read in node_modules/is-in-ci/index.js.
import { describe, expect, it } from 'vitest';
import { ciVariables, loadTerminalScreen } from '../../src/ui/load-terminal-screen.js';

describe('loadTerminalScreen', () => {
  it('names the two variables Ink reads', () => {
    expect(ciVariables).toEqual(['CI', 'CONTINUOUS_INTEGRATION']);
  });

  it('gives the screen module and puts set variables back as they were', async () => {
    const env: NodeJS.ProcessEnv = { CI: 'true', CONTINUOUS_INTEGRATION: '0', HOME: '/home/x' };
    const screen = await loadTerminalScreen(env);
    expect(typeof screen.openTerminalScreen).toBe('function');
    expect(env).toEqual({ CI: 'true', CONTINUOUS_INTEGRATION: '0', HOME: '/home/x' });
  });

  it('leaves absent variables absent', async () => {
    const env: NodeJS.ProcessEnv = { TERM: 'xterm-256color' };
    await loadTerminalScreen(env);
    expect(env).toEqual({ TERM: 'xterm-256color' });
    expect('CI' in env).toBe(false);
  });

  it('hides them while the module loads: a getter sees them absent during the import', async () => {
    const seen: (string | undefined)[] = [];
    const env: NodeJS.ProcessEnv = { CI: '1' };
    const load = loadTerminalScreen(env);
    // Synchronously after the call, before the import settles.
    seen.push(env.CI, env.CONTINUOUS_INTEGRATION);
    await load;
    expect(seen).toEqual([undefined, undefined]);
    expect(env.CI).toBe('1');
  });
});
