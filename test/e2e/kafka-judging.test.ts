// The Kafka source wired into the judging pipeline the way `watch` wires it (the snippet
// handed to the watch command): the verdicts for a scenario read from Kafka are those for
// the same records read from a file, and a run stopped and restarted on its group picks up
// at the first window it had not judged, with the same verdicts as one uninterrupted run.
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { encodeJsonLine } from '../../src/ingest/encode.js';
import { FileSource } from '../../src/ingest/file-source.js';
import { produceToKafka } from '../../src/ingest/kafka/sink.js';
import { KafkaSource } from '../../src/ingest/kafka/source.js';
import { Judge } from '../../src/judge/judge.js';
import { defaultJudgeSettings } from '../../src/judge/judge-settings.js';
import { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import { runScenario } from '../../src/scenario/scenario-run.js';
import { isRejection } from '../../src/window/count-record.js';
import { brokerList } from './kafka-env.js';
import { TopicPool, sourceOptions } from './kafka-fixtures.js';

const topics = new TopicPool();
afterAll(() => topics.cleanUp());

const windowMs = 10_000;
const latenessMs = 2000;
const scenario = () =>
  runScenario('hotspot', {
    seed: 3,
    startMs: Date.UTC(2025, 11, 1, 10, 0, 0),
    durationMs: 240_000,
  });

/** The pipeline watch builds, collecting the verdict lines it would print. */
function judging(universe = scenario().universe) {
  const judge = new Judge(universe, { ...defaultJudgeSettings, null: 'map', hopMs: windowMs });
  const pipeline = new JudgingPipeline(universe, { windowMs, latenessMs }, judge);
  const verdicts: string[] = [];
  return { pipeline, verdicts };
}

/** Reads a Kafka source into a pipeline as watch does; `stopAfter` windows, or to the end. */
async function watchKafka(source: KafkaSource, stopAfter = Infinity): Promise<string[]> {
  const info = await source.connect();
  const { pipeline, verdicts } = judging();
  pipeline.events.on('window judged', ({ window, judgement }) => {
    // Sliding windows only: a window a previous run judged comes again partly filled.
    if (info.judgedThrough !== null && window.end <= info.judgedThrough) return;
    verdicts.push(JSON.stringify(judgement));
    // After the verdict is out: the records of this window need never be read again.
    source.markJudgedUpTo(window.end);
  });
  let stopped = false;
  try {
    for await (const batch of source.batches()) {
      for (const item of batch) {
        if (isRejection(item)) pipeline.reject(item.reason);
        else pipeline.record(item.ts, item.shard, item.count);
      }
      if (verdicts.length >= stopAfter) {
        stopped = true;
        break;
      }
    }
    // Stopped: the partial windows are dropped (the next run reads them again); ended:
    // every window is judged.
    if (!stopped) pipeline.finish();
  } finally {
    await source.close();
  }
  return verdicts;
}

describe('the Kafka source feeding the judging pipeline', () => {
  const records = [...scenario().records()];
  let topic = '';

  it('gives the verdicts the same records give from a file', async () => {
    topic = await topics.fresh('judging', 4);
    await produceToKafka(records, { brokers: brokerList(), topic, batchSize: 500 });

    const directory = mkdtempSync(join(tmpdir(), 'shardwise-judging-'));
    const fromFile = judging();
    try {
      const path = join(directory, 'records.jsonl');
      writeFileSync(path, records.map((record) => encodeJsonLine(record)).join('\n') + '\n');
      fromFile.pipeline.events.on('window judged', ({ judgement }) =>
        fromFile.verdicts.push(JSON.stringify(judgement)),
      );
      for await (const batch of new FileSource(path).batches()) {
        for (const item of batch) {
          if (isRejection(item)) fromFile.pipeline.reject(item.reason);
          else fromFile.pipeline.record(item.ts, item.shard, item.count);
        }
      }
      fromFile.pipeline.finish();
    } finally {
      rmSync(directory, { recursive: true, force: true });
    }
    expect(fromFile.verdicts).toHaveLength(24);
    expect(fromFile.verdicts.some((line) => line.includes('"hotspot"'))).toBe(true);

    const fromKafka = await watchKafka(
      new KafkaSource(sourceOptions(topic, { stopAtEnd: true, windows: { windowMs, latenessMs } })),
    );
    expect(fromKafka).toEqual(fromFile.verdicts);
  });

  it('stopped after some windows and restarted on its group, continues with the next window', async () => {
    expect(topic).not.toBe('');
    const groupId = `shardwise-e2e-judging-${Date.now()}`;
    const options = sourceOptions(topic, { groupId, windows: { windowMs, latenessMs } });
    const whole = await watchKafka(
      new KafkaSource({ ...options, groupId: `${groupId}-whole`, stopAtEnd: true }),
    );
    const first = await watchKafka(new KafkaSource(options), 9);
    const second = await watchKafka(new KafkaSource({ ...options, stopAtEnd: true }));
    expect(first.length).toBeGreaterThanOrEqual(9);
    // Every window judged exactly once over the two runs, and the verdicts are those of one
    // run, except that incident streaks start afresh in the second run.
    const windowOf = (line: string) =>
      (JSON.parse(line) as { window: { start: string } }).window.start;
    expect([...first, ...second].map(windowOf)).toEqual(whole.map(windowOf));
    // The counts must match to the request. The p-values need not: they rest on the
    // cluster's spread learned over the run's own past windows, which a restarted run
    // learns again (its first verdicts say so).
    type Extreme = { shard: string; count: number; relative: number } | null;
    const shardOf = (extreme: Extreme) =>
      extreme === null
        ? null
        : { shard: extreme.shard, count: extreme.count, relative: extreme.relative };
    const counts = (line: string) => {
      const { requests, fullest, emptiest } = JSON.parse(line) as {
        requests: number;
        fullest: Extreme;
        emptiest: Extreme;
      };
      return { requests, fullest: shardOf(fullest), emptiest: shardOf(emptiest) };
    };
    expect([...first, ...second].map(counts)).toEqual(whole.map(counts));
  });
});
