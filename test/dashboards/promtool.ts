// Runs Debian's promtool (package prometheus). Missing promtool is a failure with the
// install line, never a skip: the rule tests are part of the suite.
import { execFile, spawn } from 'node:child_process';
import { accessSync, constants } from 'node:fs';
import { delimiter, join } from 'node:path';
import { promisify } from 'node:util';

const run = promisify(execFile);

/** Where an executable is on PATH, or null. */
export function onPath(command: string): string | null {
  for (const dir of (process.env.PATH ?? '').split(delimiter)) {
    if (dir === '') continue;
    const candidate = join(dir, command);
    try {
      accessSync(candidate, constants.X_OK);
      return candidate;
    } catch {
      // not in this directory
    }
  }
  return null;
}

/** The path of promtool; throws with the install line when it is missing. */
export function requirePromtool(): string {
  const path = onPath('promtool');
  if (path === null) {
    throw new Error(
      'promtool is not on PATH: install it with `apt-get install prometheus` (Debian; ' +
        'npm test runs scripts/provision.sh, which does it as root)',
    );
  }
  return path;
}

export interface ToolResult {
  readonly code: number;
  readonly stdout: string;
  readonly stderr: string;
}

/** Runs promtool with `args` in `cwd`; resolves with its exit code and output. */
export async function promtool(args: readonly string[], cwd: string): Promise<ToolResult> {
  try {
    const { stdout, stderr } = await run(requirePromtool(), [...args], {
      cwd,
      timeout: 60_000,
      maxBuffer: 16 * 1024 * 1024,
    });
    return { code: 0, stdout, stderr };
  } catch (error) {
    const failed = error as { code?: number | string; stdout?: string; stderr?: string };
    if (typeof failed.code !== 'number') throw error;
    return { code: failed.code, stdout: failed.stdout ?? '', stderr: failed.stderr ?? '' };
  }
}

/** `promtool check metrics` on an exposition (stdin); exit 0 and no output when clean. */
export function checkMetrics(text: string): Promise<{ code: number | null; out: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(requirePromtool(), ['check', 'metrics'], { stdio: 'pipe' });
    let out = '';
    child.stdout.on('data', (d) => (out += d));
    child.stderr.on('data', (d) => (out += d));
    child.on('error', reject);
    child.on('close', (code) => resolve({ code, out }));
    child.stdin.end(text);
  });
}
