import type { CommandIO } from './command.js';
import type { Incident } from '../judge/judgement.js';
import type { JudgingPipeline } from '../judge/judging-pipeline.js';
import { describeSpan } from '../judge/time-span.js';
import { rejectionReasons, type RejectionReason } from '../window/count-record.js';
import { terminalSafe } from '../window/visible-text.js';

// What `watch` prints on stderr when it ends, and the exit code of a run that judged nothing.

/**
 * A run that counted no record says so: an empty input exits 0 (an empty log is valid),
 * an input whose every record was rejected exits 1 (most likely the wrong file or format,
 * which a script should notice). Interrupted and live-connected runs say nothing more.
 */
export function emptyRunVerdict(pipeline: JudgingPipeline, quiet: boolean, io: CommandIO): number {
  const totals = pipeline.totals;
  if (quiet || totals.records > 0) return 0;
  const rejected = Object.values(totals.rejected).reduce((sum, count) => sum + (count ?? 0), 0);
  if (rejected > 0) {
    io.stderr.write(
      `shardwise watch: every record was rejected, nothing was judged (reasons and first lines above)\n`,
    );
    return 1;
  }
  io.stderr.write('shardwise watch: the input held no records, nothing was judged\n');
  return 0;
}

/** The end-of-run summary: windows, records, rejections (with the first line of each kind), late records, incidents, gaps, retirements. */
export function summary(
  windows: number,
  pipeline: JudgingPipeline,
  incidents: { opened: Incident[]; cleared: number; openAtEnd: readonly Incident[] },
  interrupted: boolean,
  retired: number,
  firstRejected: ReadonlyMap<RejectionReason, number>,
): string {
  const totals = pipeline.totals;
  const rejected = rejectionReasons
    .filter((reason) => (totals.rejected[reason] ?? 0) > 0)
    .map((reason: RejectionReason) => {
      const line = firstRejected.get(reason);
      return `${reason} ${totals.rejected[reason]}${line === undefined ? '' : `, first on line ${line}`}`;
    });
  const rejectedCount = Object.values(totals.rejected).reduce(
    (sum, count) => sum + (count ?? 0),
    0,
  );
  const lateByPartition = [...totals.lateByPartition].sort(([a], [b]) => a - b);
  const lines = [
    `shardwise watch: ${plural(windows, 'window')} judged, ${plural(totals.recordsSeen, 'record')} read, ${plural(totals.load, 'request')} counted`,
    `  rejected: ${rejectedCount}${rejected.length > 0 ? ` (${rejected.join(firstRejected.size > 0 ? '; ' : ', ')})` : ''}; late: ${plural(totals.late, 'request')} in ${plural(totals.lateRecords, 'record')}`,
  ];
  if (lateByPartition.length > 1 || (lateByPartition.length === 1 && lateByPartition[0][0] !== 0)) {
    lines.push(
      `  too late by source partition: ${lateByPartition.map(([partition, count]) => `${partition}: ${count}`).join(', ')}`,
    );
    const outOfOrder = [...totals.outOfOrderByPartition].sort(([a], [b]) => a - b);
    if (outOfOrder.length > 0) {
      lines.push(
        `    of them out of time order within their own partition (older than records it had already given; --lateness covers disorder up to its length): ${outOfOrder.map(([partition, count]) => `${partition}: ${count}`).join(', ')}`,
      );
    }
  }
  lines.push(
    `  incidents: ${incidents.opened.length} opened, ${incidents.cleared} cleared, ${incidents.openAtEnd.length} open at the end`,
    ...incidents.opened.map(
      (incident) =>
        `    ${incident.finding} on ${terminalSafe(incident.shard)} since ${incident.since}`,
    ),
  );
  if (totals.gapCount > 0) {
    lines.push(
      `  gaps without records, skipped and not judged: ${totals.gapCount} (${plural(totals.quietWindowsSkipped, 'window')})`,
      ...totals.gaps.map(
        (gap) =>
          `    ${new Date(gap.start).toISOString()} to ${new Date(gap.end).toISOString()} (${describeSpan(gap.end - gap.start)})`,
      ),
    );
    if (totals.gapCount > totals.gaps.length) {
      lines.push(`    and ${totals.gapCount - totals.gaps.length} more`);
    }
  }
  if (retired > 0) lines.push(`  shards retired: ${retired} (ids that stopped reporting left m)`);
  if (interrupted && pipeline.openWindows > 0) {
    lines.push(`  interrupted: ${plural(pipeline.openWindows, 'partial window')} not judged`);
  }
  return lines.join('\n') + '\n';
}

/** "1 window", "2 windows". */
function plural(count: number, noun: string): string {
  return `${count} ${noun}${count === 1 ? '' : 's'}`;
}
