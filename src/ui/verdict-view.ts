import type { ExtremeShardVerdict, Finding, LoadLevel } from '../judge/judgement.js';
import type { KeyCause } from '../judge/key-verdict.js';
import {
  formatClock,
  formatCount,
  formatPlain,
  pStatement,
  formatRelative,
  formatWindowLength,
} from './display-numbers.js';
import { displayWidth, fitParts, fitWidth, wireLabel, type LinePart } from './terminal-text.js';
import {
  type Tone,
  type ScreenContext,
  type WindowView,
  type ScreenLayout,
  type WindowState,
  findingSymbols,
  findingTones,
  label,
} from './view-common.js';

/* The verdict panel's view model: the headline, the evidence and the model line. */

export interface VerdictView {
  readonly tone: Tone;
  readonly symbol: string;
  /** The finding in capitals and what it means, e.g. `HOTSPOT on seat-17: ...`. */
  readonly headline: string;
  readonly windowText: string;
  /** One sentence per side of the evidence (fullest; emptiest when cold). */
  readonly evidence: readonly string[];
  /** Null model, spread mode, N_eff and the reminder that this is evidence, not certainty. */
  readonly model: string;
}

export function waitingVerdict(context: ScreenContext, layout: ScreenLayout): VerdictView {
  return {
    tone: 'muted',
    symbol: '○',
    headline: 'WAITING for the first window to close',
    windowText: '',
    evidence: [
      fitParts(
        [
          {
            text: `A window closes ${formatWindowLength(context.windowMs)} after it starts plus ${formatWindowLength(context.latenessMs)} of lateness`,
            rank: 0,
          },
          { text: 'its verdict appears here', rank: 1 },
        ],
        layout.columns,
        '; ',
      ),
    ],
    model: 'Verdicts are statistical evidence, not certainty.',
  };
}

export function verdictView(
  view: WindowView,
  context: ScreenContext,
  layout: ScreenLayout,
): VerdictView {
  const j = view.judgement;
  const width = layout.columns;
  const wide = width >= 100;
  const span = `${formatClock(view.startMs)}–${formatClock(view.endMs)}`;
  const windowText = wide ? `window ${span} UTC` : span;
  const hot = j.flagged.find((shard) => shard.finding === 'hotspot');
  const cold = j.flagged.find((shard) => shard.finding === 'cold');
  const lead = j.findings[0];
  // Back within chance while an incident is still open: the incident is easing, not over.
  const easing = lead === 'chance' && j.pattern === null && j.incidents.length > 0;
  const key: WindowState = easing ? 'easing' : (j.pattern ?? lead);
  let core: string;
  let meaning: string;
  let joiner = ': ';
  if (j.pattern === 'failover') {
    joiner = ', ';
    core = `FAILOVER: ${label(cold?.shard ?? j.emptiest?.shard)} went cold`;
    meaning = `${label(hot?.shard ?? j.fullest?.shard)} took its traffic`;
  } else if (easing) {
    const first = j.incidents[0];
    core = `EASING: ${j.incidents.length === 1 ? `${first.finding} on ${label(first.shard)}` : `${j.incidents.length} incidents`} still open`;
    meaning = `this window is within chance; clears after ${context.clear} clean windows in a row`;
    joiner = '; ';
  } else if (lead === 'hotspot') {
    core = `HOTSPOT on ${label(hot?.shard ?? j.fullest?.shard)}`;
    meaning = 'hotter than random placement allows';
  } else if (lead === 'cold') {
    core = `COLD: ${label(cold?.shard ?? j.emptiest?.shard)}`;
    meaning = 'gets less than chance allows';
    joiner = ' ';
  } else if (lead === 'uneven') {
    core = 'UNEVEN';
    meaning = 'wider spread than chance, no shard stands out';
  } else if (lead === 'chance') {
    core = 'CHANCE';
    meaning = 'the skew is what random placement gives';
  } else {
    core = 'TOO LITTLE TRAFFIC';
    meaning = 'a hotspot could not be told from chance';
  }
  const named: readonly Finding[] = j.pattern === 'failover' ? ['hotspot', 'cold'] : [lead];
  const also = j.findings.filter((finding) => !named.includes(finding));
  const symbol = findingSymbols[key];
  // The headline shares its line with the window span: the meaning goes before the "also".
  const room = width - displayWidth(windowText) - 1 - displayWidth(symbol) - 1;
  const alsoText = also.length > 0 ? ` (also ${also.join(', ')})` : '';
  const headline =
    [`${core}${joiner}${meaning}${alsoText}`, `${core}${alsoText}`, core].find(
      (text) => displayWidth(text) <= room,
    ) ?? fitWidth(core, room);

  // One sentence per side, the lead finding's first, each fitted to the width by dropping
  // its later clauses whole. Priority: the lead finding's evidence, the other findings',
  // since when, the rest.
  const sentences: { finding: Finding; parts: LinePart[]; after?: boolean }[] = [];
  if (j.fullest !== null) {
    sentences.push({
      finding: 'hotspot',
      parts: extremeParts('Fullest', j.fullest, 'chance ceiling', j.ceiling),
    });
  }
  // What made it hot, from the keys: right after the fullest shard's sentence.
  const cause = j.keys?.causes.find((entry) => entry.shard === hot?.shard) ?? j.keys?.causes[0];
  if (cause !== undefined) {
    sentences.push({
      finding: cause.excess > 0 ? 'hotspot' : lead,
      parts: causeParts(cause, wide),
    });
  }
  if (j.findings.includes('cold') && j.emptiest !== null && j.floor !== null) {
    const parts = extremeParts('Emptiest', j.emptiest, 'chance floor', j.floor);
    if (j.empty.observed > 0) {
      parts.push({
        text: `${j.empty.observed} empty, ${formatPlain(j.empty.expected)} expected, ${pStatement(j.empty.p ?? 1)}`,
        rank: 3,
      });
    }
    sentences.push({ finding: 'cold', parts });
  }
  if (j.findings.includes('uneven')) {
    sentences.push({
      finding: 'uneven',
      parts: [
        {
          text: `Spread phi ${formatPlain(j.spread.phi)} (1 under random placement)`,
          short: `Spread phi ${formatPlain(j.spread.phi)}`,
          rank: 0,
        },
        { text: `${pStatement(j.spread.p)}`, rank: 1 },
      ],
    });
  }
  // Since when: the streak of the lead shard, or the incident it has opened.
  const leadShard =
    j.pattern === 'failover' || lead === 'hotspot' ? hot : lead === 'cold' ? cold : undefined;
  if (leadShard !== undefined) {
    const incident = j.incidents.find(
      (open) => open.shard === leadShard.shard && open.finding === leadShard.finding,
    );
    sentences.push({
      finding: leadShard.finding,
      after: true,
      parts:
        incident !== undefined
          ? [
              {
                text: `Incident open since ${formatClock(Date.parse(incident.since))} (${incident.windows} windows)`,
                rank: 0,
              },
              { text: `adjusted p, max-statistic over ${j.shards} shards`, rank: 1 },
            ]
          : [
              {
                text: `Flagged ${leadShard.streak} window${leadShard.streak === 1 ? '' : 's'} in a row`,
                rank: 0,
              },
              { text: `${context.confirm} open an incident`, rank: 1 },
            ],
    });
  }
  if (easing) {
    sentences.push({
      finding: 'chance',
      parts: j.incidents.map((incident, index) => ({
        text: `${incident.finding} on ${label(incident.shard)} open since ${formatClock(Date.parse(incident.since))} (${incident.windows} windows)`,
        short: `${incident.finding} on ${label(incident.shard)}`,
        rank: index,
      })),
    });
  }
  if (lead === 'chance' && j.fullest !== null) {
    sentences.push({
      finding: 'chance',
      parts: [
        {
          text: 'No shard past the chance ceiling or below the floor',
          short: 'No shard past chance',
          rank: 0,
        },
        {
          text: `spread phi ${formatPlain(j.spread.phi)}, ${pStatement(j.spread.p)}`,
          short: `phi ${formatPlain(j.spread.phi)}, ${pStatement(j.spread.p)}`,
          rank: 1,
        },
      ],
    });
  }
  if (j.findings.includes('too little traffic')) {
    sentences.push({
      finding: 'too little traffic',
      parts:
        j.detectableExcess === null
          ? [
              {
                text: 'No requests in this window: nothing can be told from chance',
                short: 'No requests in this window',
                rank: 0,
              },
            ]
          : [
              {
                text: `Only ${formatCount(j.requests)} req on ${j.shards} shards: detectable excess ${formatRelative(j.detectableExcess)} (limit ${formatRelative(context.maxDetectable)})`,
                short: `Only ${formatCount(j.requests)} req: detectable excess ${formatRelative(j.detectableExcess)}`,
                rank: 0,
              },
            ],
    });
  }
  const rank = (sentence: { finding: Finding; after?: boolean }) =>
    sentence.after === true
      ? 2
      : sentence.finding === lead
        ? 0
        : j.findings.includes(sentence.finding)
          ? 1
          : 3;
  const evidence = sentences
    .map((sentence, order) => ({ ...sentence, order }))
    .sort((a, b) => rank(a) - rank(b) || a.order - b.order)
    .map((sentence) => fitParts(sentence.parts, width, '; ', 'drop first'));

  const modelParts: LinePart[] = [
    {
      text: `null ${j.null}${j.baseline === undefined ? '' : j.baseline.ready ? ' (learned)' : ` (learning ${j.baseline.learnedWindows}/${j.baseline.neededWindows})`}`,
      rank: 0,
    },
    { text: `spread ${j.spreadMode}`, rank: 2 },
  ];
  // N_eff matters when traffic is over-dispersed: the spread test rejects with phi above 1.
  if (j.spread.phi > 1 && j.spread.p <= j.alpha) {
    modelParts.push({
      text: `N_eff ${formatCount(Math.round(j.nEff))} (phi ${formatPlain(j.spread.phi)})`,
      short: `N_eff ${formatCount(Math.round(j.nEff))}`,
      rank: 1,
    });
  }
  modelParts.push({
    text: 'verdicts are statistical evidence, not certainty',
    short: 'statistical evidence only',
    rank: 0,
  });
  if (!j.coldTests) {
    modelParts.push({
      text: 'cold tests off (no declared universe)',
      short: 'cold tests off',
      rank: 1,
    });
  }
  return {
    tone: findingTones[key],
    symbol,
    headline,
    windowText,
    evidence,
    model: fitParts(modelParts, width),
  };
}

/**
 * The cause of a hot shard in clauses, from its numbers; the key is escaped and cut like a
 * shard id (keys come from the wire too). Words: "hot key", "moved", "placement", as in the
 * verdict stream.
 */
/**
 * The evidence on one side: the fullest or emptiest shard and its relative load (rank 0), the
 * chance ceiling or floor it is judged against (rank 2), its p-value (rank 1).
 */
function extremeParts(
  side: 'Fullest' | 'Emptiest',
  shard: ExtremeShardVerdict,
  boundName: 'chance ceiling' | 'chance floor',
  bound: LoadLevel,
): LinePart[] {
  return [
    {
      text: `${side} ${label(shard.shard)}: ${formatCount(shard.count)} req, ${formatRelative(shard.relative)} fair share`,
      short: `${side} ${label(shard.shard)}: ${formatRelative(shard.relative)} fair share`,
      rank: 0,
    },
    {
      text: `${boundName} ${formatRelative(bound.relative)}${bound.requests !== null ? ` (${formatCount(bound.requests)} req)` : ''}`,
      short: `${boundName} ${formatRelative(bound.relative)}`,
      rank: 2,
    },
    { text: `${pStatement(shard.p ?? 1)}`, rank: 1 },
  ];
}

function causeParts(cause: KeyCause, wide: boolean): LinePart[] {
  const top: LinePart[] =
    cause.topKey === null
      ? []
      : [
          {
            text: `top key ${wireLabel(cause.topKey.key, wide ? 32 : 16)} ≤ ${formatShare(cause.topKeyShareAtMost)} of the excess`,
            rank: 2,
          },
        ];
  const keysRatio = formatPlain(cause.distinct / Math.max(cause.distinctExpected, 1e-300));
  switch (cause.cause) {
    case 'hot key':
      return [
        {
          text: `Cause: hot key ${wireLabel(cause.topKey?.key ?? '?', wide ? 32 : 20)} carries ≥ ${formatShare(cause.topKeyShare)} of ${label(cause.shard)}'s excess`,
          short: `Cause: hot key ${wireLabel(cause.topKey?.key ?? '?', 20)}`,
          rank: 0,
        },
        {
          text: `${formatCount(cause.topKey?.count ?? 0)} req, ≤ ${formatCount(cause.topKey?.overestimate ?? 0)} overcounted`,
          rank: 1,
        },
      ];
    case 'moved':
      return [
        {
          text: `Cause: moved from ${label(cause.from?.shard)} (${formatCount(Math.round(cause.from?.deficit ?? 0))} req short) to ${label(cause.shard)}`,
          short: `Cause: moved from ${label(cause.from?.shard)} to ${label(cause.shard)}`,
          rank: 0,
        },
        { text: `${keysRatio}x the keys expected`, rank: 1 },
        ...top,
      ];
    case 'placement':
      return [
        cause.basis === 'keys per shard'
          ? {
              text: `Cause: placement, ${label(cause.shard)} holds ${keysRatio}x the keys random placement gives`,
              short: `Cause: placement, ${keysRatio}x the keys expected`,
              rank: 0,
            }
          : {
              text: `Cause: placement, ${cause.basis === 'weights' ? 'excess spread over many keys' : 'heavy keys share the shard'}`,
              short: 'Cause: placement',
              rank: 0,
            },
        ...top,
      ];
  }
}

function formatShare(share: number): string {
  return `${Math.round(share * 100)}%`;
}
