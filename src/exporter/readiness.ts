/**
 * Whether `watch` is doing its job, for `/readyz`: the source delivers records and windows
 * close on time. Pure: the facts and the clock are passed in.
 */

/** What the exporter has seen of the pipeline, as readiness needs it. */
export interface ReadinessFacts {
  /** Wall clock, epoch ms. */
  readonly now: number;
  /** When the exporter started watching, epoch ms. */
  readonly startedAt: number;
  /** Records that reached the pipeline (counted or rejected) since the start. */
  readonly recordsSeen: number;
  /** Wall-clock time the latest window was judged, epoch ms; NaN before the first. */
  readonly lastWindowJudgedAt: number;
  /** True from a "source stalled" event until records arrive again. */
  readonly sourceStalled: boolean;
  /** Distance between window closings, ms (`--hop`, the window length by default). */
  readonly hopMs: number;
  /** `--lateness`, ms. */
  readonly latenessMs: number;
}

export interface Readiness {
  readonly ready: boolean;
  /** One line per unmet condition, or `ready`. */
  readonly reasons: readonly string[];
}

/**
 * Slack on top of one hop plus the lateness before a window counts as overdue: the live
 * poll closes windows every 250 ms, and judging a large window takes a moment.
 */
const closingSlackMs = 1000;

/**
 * Ready when (1) the source has delivered at least one record and has not stalled since
 * (the pipeline's "source stalled": quiet for longer than a window plus the lateness), and
 * (2) the latest window was judged no longer ago than two hops plus the lateness plus one
 * second. Before the first window closes nothing is judged yet, so that is "not ready"
 * too. O(1).
 */
export function readiness(facts: ReadinessFacts): Readiness {
  const reasons: string[] = [];
  if (facts.recordsSeen === 0) {
    reasons.push(
      `source: no record received in ${seconds(facts.now - facts.startedAt)} since start`,
    );
  } else if (facts.sourceStalled) {
    reasons.push('source: stalled (no records for longer than a window plus the lateness)');
  }
  const allowedMs = 2 * facts.hopMs + facts.latenessMs + closingSlackMs;
  if (Number.isNaN(facts.lastWindowJudgedAt)) {
    reasons.push('windows: none closed yet');
  } else if (facts.now - facts.lastWindowJudgedAt > allowedMs) {
    reasons.push(
      `windows: the latest closed ${seconds(facts.now - facts.lastWindowJudgedAt)} ago (due every ${seconds(facts.hopMs)}, allowed ${seconds(allowedMs)})`,
    );
  }
  return reasons.length === 0 ? { ready: true, reasons: ['ready'] } : { ready: false, reasons };
}

function seconds(ms: number): string {
  return `${(Math.max(ms, 0) / 1000).toFixed(1)} s`;
}
