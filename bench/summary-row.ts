// One headline figure of a bench, for the table `npm run bench` prints at the end: a line
// `SUMMARY<TAB>what<TAB>measured<TAB>target` on standard output, which bench/run.ts collects
// (and passes through like every other line). A bench prints its own full table as well.

/** Prints one row of the closing table of `npm run bench`. */
export function summaryRow(what: string, measured: string, target: string): void {
  process.stdout.write(`SUMMARY\t${what}\t${measured}\t${target}\n`);
}

/** Median of a list of numbers: simple-statistics' median (the list is left as it was). */
export { median } from 'simple-statistics';
