// A small review model from literal windows, judged by the real Judge: four shards, one of
// them named with an id that would open HTML, break a Markdown table and forge emphasis,
// carrying four times its fair load in three windows of six. For the report renderers.
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { ReviewBuilder, type ReviewModel } from '../../src/review/review-model.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import type { Judgement } from '../../src/judge/judgement.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

export const hostileId = '<img src=x onerror=alert(1)>|*b*';
export const literalIds = ['s-1', 's-2', 's-3', hostileId];
/** 2026-02-01T00:00:00Z. */
export const literalStart = Date.parse('2026-02-01T00:00:00Z');
const windowMs = 10_000;

/** Per window: the requests of each shard (in literalIds order). */
export const literalLoads = [
  [250, 250, 250, 250],
  [250, 250, 250, 250],
  [200, 200, 200, 800],
  [200, 200, 200, 800],
  [200, 200, 200, 800],
  [250, 250, 250, 250],
];

export function literalReview(): ReviewModel {
  const universe = ShardUniverse.fromIds(literalIds);
  const settings = { ...defaultJudgeSettings, hopMs: windowMs };
  const pipeline = new JudgingPipeline(
    universe,
    { windowMs, hopMs: windowMs, latenessMs: 0 },
    new Judge(universe, settings),
    () => literalStart,
  );
  const judged: { window: ClosedWindow; judgement: Judgement }[] = [];
  const builder = new ReviewBuilder({
    source: 'file literal.jsonl',
    judgedHere: true,
    settings: {
      ...settings,
      null: settings.null,
      spread: settings.spread,
      windowMs,
      declaredUniverse: true,
    },
  });
  pipeline.events.on('window judged', ({ window, judgement }) => {
    judged.push({ window, judgement });
    builder.add({
      start: window.start,
      end: window.end,
      counts: window.counts,
      total: window.total,
      shardIds: universe.ids,
      shares: null,
      judgement,
    });
  });
  literalLoads.forEach((loads, at) => {
    loads.forEach((count, shard) =>
      pipeline.record(literalStart + at * windowMs + 1, literalIds[shard], count, undefined),
    );
  });
  pipeline.finish();
  return builder.build();
}
