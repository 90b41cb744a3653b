import type * as TerminalScreenModule from './terminal-screen.js';

/**
 * The variables by which Ink decides, once, when it is first loaded, that it runs under a
 * CI service (its `is-in-ci` dependency: set and neither `0` nor `false`). Ink then draws
 * no frame until it is unmounted and prints only the last one, which on a live screen is a
 * blank terminal for the whole incident.
 */
export const ciVariables = ['CI', 'CONTINUOUS_INTEGRATION'] as const;

/**
 * Loads the terminal screen, and Ink with it, with the CI variables hidden while Ink reads
 * them. The screen is only opened on a terminal (`watch` checks both standard output and
 * standard input first), so someone at that terminal is watching it even when their shell
 * carries `CI` from a build job. The variables are put back as they were before this
 * returns. Ink decides when it is first loaded: load the screen through here before
 * anything else in the process imports `ink`.
 */
export async function loadTerminalScreen(
  env: NodeJS.ProcessEnv = process.env,
): Promise<typeof TerminalScreenModule> {
  const saved = ciVariables.map((name) => [name, env[name]] as const);
  for (const name of ciVariables) delete env[name];
  try {
    return await import('./terminal-screen.js');
  } finally {
    for (const [name, value] of saved) {
      if (value !== undefined) env[name] = value;
    }
  }
}
