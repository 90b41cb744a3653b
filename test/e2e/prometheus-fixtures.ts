// Processes for the Prometheus end-to-end test: Debian's Prometheus server on loopback
// with a temporary data directory, and `shardwise watch` runs with an ephemeral metrics
// port. Every process started here is stopped by its own handle (SIGTERM, then SIGKILL).
import { spawn, type ChildProcess } from 'node:child_process';
import { accessSync, constants, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

export const repositoryRoot = fileURLToPath(new URL('../../', import.meta.url));
const prometheusBinary = '/usr/bin/prometheus';

/** Fails loudly (never skips) when Debian's Prometheus server is not installed. */
export function requirePrometheus(): string {
  try {
    accessSync(prometheusBinary, constants.X_OK);
  } catch {
    throw new Error(
      `${prometheusBinary} is missing: install it with \`apt-get install prometheus\` (npm test runs scripts/provision.sh, which does it as root)`,
    );
  }
  return prometheusBinary;
}

/** A port that was free a moment ago on 127.0.0.1 (the kernel's pick for port 0). */
export async function freePort(): Promise<number> {
  const server = createServer();
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const port = (server.address() as { port: number }).port;
  await new Promise((resolve) => server.close(resolve));
  return port;
}

/** A child process with its output collected and a bounded stop. */
export class Child {
  readonly process: ChildProcess;
  stdout = '';
  stderr = '';
  private readonly exited: Promise<number | null>;

  constructor(command: string, args: readonly string[], options: { cwd?: string } = {}) {
    this.process = spawn(command, [...args], {
      cwd: options.cwd ?? repositoryRoot,
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    this.process.stdout?.on('data', (chunk: Buffer) => {
      // Verdict lines are not needed; keep the tail only, for failure messages.
      this.stdout = (this.stdout + chunk.toString()).slice(-20_000);
    });
    this.process.stderr?.on('data', (chunk: Buffer) => {
      this.stderr = (this.stderr + chunk.toString()).slice(-50_000);
    });
    this.exited = new Promise((resolve) => this.process.once('exit', (code) => resolve(code)));
  }

  get running(): boolean {
    return this.process.exitCode === null && this.process.signalCode === null;
  }

  /** Waits until `pattern` appears on stderr; throws with the output after `timeoutMs`. */
  async stderrMatch(pattern: RegExp, timeoutMs: number): Promise<RegExpExecArray> {
    const deadline = Date.now() + timeoutMs;
    for (;;) {
      const match = pattern.exec(this.stderr);
      if (match !== null) return match;
      if (!this.running || Date.now() > deadline) {
        throw new Error(
          `no ${pattern} on stderr (${this.running ? 'timed out' : `exited ${this.process.exitCode}`}):\n${this.stderr}`,
        );
      }
      await sleep(50);
    }
  }

  /** SIGTERM, then SIGKILL after `graceMs`; resolves with the exit code (null if killed). */
  async stop(graceMs = 5000): Promise<number | null> {
    if (!this.running) return this.process.exitCode;
    this.process.kill('SIGTERM');
    const timer = setTimeout(() => this.process.kill('SIGKILL'), graceMs);
    try {
      return await this.exited;
    } finally {
      clearTimeout(timer);
    }
  }
}

/** Runs `shardwise watch ARGS --metrics-port 0 --no-ui`; resolves once it prints its address. */
export async function startWatch(
  args: readonly string[],
): Promise<{ child: Child; address: string }> {
  const child = new Child(process.execPath, [
    '--import',
    'tsx',
    'src/cli/main.ts',
    'watch',
    ...args,
    '--metrics-port',
    '0',
    '--no-ui',
  ]);
  try {
    const match = await child.stderrMatch(
      /metrics at http:\/\/(127\.0\.0\.1:\d+)\/metrics/,
      30_000,
    );
    return { child, address: match[1] };
  } catch (error) {
    await child.stop();
    throw error;
  }
}

/** Starts Prometheus with `config` (YAML text) in `dir`; resolves once /-/ready answers. */
export async function startPrometheus(
  dir: string,
  config: string,
): Promise<{ child: Child; url: string }> {
  const binary = requirePrometheus();
  const port = await freePort();
  const configFile = join(dir, 'prometheus.yml');
  writeFileSync(configFile, config);
  const child = new Child(
    binary,
    [
      `--config.file=${configFile}`,
      `--storage.tsdb.path=${join(dir, 'data')}`,
      `--web.listen-address=127.0.0.1:${port}`,
      '--log.level=warn',
    ],
    { cwd: dir },
  );
  const url = `http://127.0.0.1:${port}`;
  const deadline = Date.now() + 30_000;
  for (;;) {
    try {
      const response = await fetch(`${url}/-/ready`);
      if (response.status === 200) return { child, url };
    } catch {
      // not listening yet
    }
    if (!child.running || Date.now() > deadline) {
      await child.stop();
      throw new Error(`Prometheus did not become ready:\n${child.stderr}`);
    }
    await sleep(200);
  }
}

export function sleep(ms: number): Promise<void> {
  return new Promise((resolve) => setTimeout(resolve, ms));
}
