// `npm run bench`: every bench, one after another, each printing its own table, then a
// line per bench with its wall time and exit status, and a closing table of the headline
// figures the benches report (bench/summary-row.ts) beside their targets. The Kafka benches run when a test
// broker answers (KAFKA_BROKERS, or `bash scripts/kafka-broker.sh start`), and say so when
// none does; the benches of the built CLI build it first. Never part of `npm test`.
//
//   npm run bench                 all of them (about half an hour on 2 cores)
//   npm run bench -- chance judge only the benches whose file name starts with these words
import { spawn, spawnSync } from 'node:child_process';
import { createInterface } from 'node:readline';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { brokerAddress } from '../test/e2e/kafka-env.js';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');

interface Bench {
  readonly file: string;
  readonly args: readonly string[];
  readonly needs?: readonly ('broker' | 'build')[];
  readonly nodeFlags?: readonly string[];
}

const benches: readonly Bench[] = [
  { file: 'odds.bench.ts', args: [], needs: ['build'] },
  { file: 'chance.bench.ts', args: [] },
  { file: 'judge.bench.ts', args: [] },
  { file: 'huge-totals.bench.ts', args: ['3'] },
  { file: 'decode-window.bench.ts', args: [] },
  { file: 'keys.bench.ts', args: [], nodeFlags: ['--expose-gc'] },
  { file: 'calibration.bench.ts', args: [] },
  { file: 'metrics-scrape.bench.ts', args: [] },
  { file: 'review.bench.ts', args: [], needs: ['build'] },
  { file: 'watch-input.bench.ts', args: [], needs: ['build'] },
  { file: 'judge-thread-warm-up.bench.ts', args: [], needs: ['build'] },
  { file: 'kafka-throughput.bench.ts', args: [], needs: ['broker', 'build'] },
  { file: 'scale-out.bench.ts', args: [], needs: ['broker', 'build'] },
];

const wanted = process.argv.slice(2);
const chosen = benches.filter(
  (bench) => wanted.length === 0 || wanted.some((word) => bench.file.startsWith(word)),
);
if (chosen.length === 0) {
  console.error(`npm run bench: no bench matches ${wanted.join(' ')}`);
  process.exit(2);
}

function brokerAnswers(): boolean {
  try {
    brokerAddress();
    return spawnSync('bash', [join(root, 'scripts', 'kafka-broker.sh'), 'status']).status === 0;
  } catch {
    return process.env.KAFKA_BROKERS !== undefined;
  }
}

const results: string[] = [];
/** Rows a bench printed as `SUMMARY<TAB>what<TAB>measured<TAB>target` (bench/summary-row.ts). */
const summary: string[][] = [];

/** Runs one bench, its output passed through as it comes, its summary rows kept. */
function runPassingThrough(
  bench: Bench,
): Promise<{ status: number | null; signal: NodeJS.Signals | null }> {
  const child = spawn(
    process.execPath,
    [...(bench.nodeFlags ?? []), '--import', 'tsx', join(root, 'bench', bench.file), ...bench.args],
    { cwd: root, stdio: ['inherit', 'pipe', 'inherit'] },
  );
  const lines = createInterface({ input: child.stdout });
  lines.on('line', (line) => {
    if (line.startsWith('SUMMARY\t')) summary.push(line.split('\t').slice(1, 4));
    else console.log(line);
  });
  return new Promise((resolve) => {
    child.on('close', (status, signal) => resolve({ status, signal }));
  });
}
let built = false;
let failed = false;
for (const bench of chosen) {
  if (bench.needs?.includes('broker') && !brokerAnswers()) {
    results.push(
      `${bench.file.padEnd(28)} skipped: no test broker (bash scripts/kafka-broker.sh start)`,
    );
    continue;
  }
  if (bench.needs?.includes('build') && !built) {
    const build = spawnSync('npm', ['run', 'build'], { cwd: root, stdio: 'inherit' });
    if (build.status !== 0) {
      results.push(`${bench.file.padEnd(28)} skipped: npm run build failed`);
      failed = true;
      continue;
    }
    built = true;
  }
  console.log(`\n== ${bench.file} ${bench.args.join(' ')}`);
  const started = performance.now();
  const run = await runPassingThrough(bench);
  const seconds = ((performance.now() - started) / 1000).toFixed(1);
  if (run.status !== 0) failed = true;
  results.push(
    `${bench.file.padEnd(28)} ${seconds.padStart(7)} s  ${run.status === 0 ? 'ok' : `exit ${run.status ?? run.signal}`}`,
  );
}
console.log(`\n== benches\n${results.join('\n')}`);
if (summary.length > 0) {
  console.log('\n== headline figures (each from the bench above that printed it)\n');
  console.log('| what | measured | target |');
  console.log('| --- | --- | --- |');
  for (const [what, measured, target] of summary)
    console.log(`| ${what} | ${measured} | ${target} |`);
}
process.exit(failed ? 1 : 0);
