import type { EachBatchPayload, Kafka } from 'kafkajs';
import { Registry } from 'prom-client';
import { describe, expect, it } from 'vitest';
import { MergeMetrics, SummaryMergeSource } from '../../src/cli/watch-merge.js';
import type { JudgingPipeline } from '../../src/judge/judging-pipeline.js';
import {
  encodePartialSummary,
  type PartialSummary,
  type PartitionPart,
} from '../../src/partials/partial-summary.js';
import type { MergedWindow } from '../../src/partials/window-merge.js';
import type { ClosedWindow } from '../../src/window/event-time-window.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';
import { parseExposition, sampleOf } from '../exporter/exposition.js';

// `watch --merge` without a broker: the summary reader's client is a fake of the kafkajs
// 2.2.4 calls it makes (kafkajs docs, "Admin Client", "Consuming Messages"), fed literal
// partial summaries of a topic with two partitions. Expected windows by hand: window 0 has
// both parts (complete): a = 3 + 2, b = 1, and "zz" is outside the declared universe;
// window 1 has only partition 0's part and is judged at the deadline, incomplete, naming
// partition 1. Metric text read as the Prometheus exposition format 0.0.4 (exposition.ts).

function summary(start: number, parts: PartitionPart[], windowMs = 10_000): string {
  const value: PartialSummary = {
    partial: 1,
    instance: 'counter-1',
    epoch: 0,
    topic: 'seats',
    sourcePartitions: 2,
    windowMs,
    latenessMs: 0,
    shardFrom: 'field',
    start,
    end: start + windowMs,
    parts,
  };
  return encodePartialSummary(value);
}

function part(partition: number, counts: Record<string, number>): PartitionPart {
  const records = Object.values(counts).reduce((sum, n) => sum + n, 0);
  return { partition, from: 0, to: records - 1, records, late: 0, rejected: {}, counts };
}

describe('SummaryMergeSource', () => {
  it('puts windows together from summaries and hands them to the pipeline, with their coverage', async () => {
    const judged: ClosedWindow[] = [];
    const incomplete: MergedWindow[] = [];
    const refused: string[] = [];
    const commits: unknown[] = [];
    const hook: { eachBatch: ((payload: EachBatchPayload) => Promise<void>) | null } = {
      eachBatch: null,
    };
    const universe = ShardUniverse.fromIds(['a', 'b', 'c']);
    const source = new SummaryMergeSource({
      settings: {
        connection: { brokers: ['127.0.0.1:1'] },
        topic: 'seat-summaries',
        groupId: 'judge',
        from: 'earliest',
        deadlineMs: 50,
      },
      universe,
      pipeline: {
        judgeClosed: (window: ClosedWindow) => judged.push(window),
      } as unknown as JudgingPipeline,
      windowMs: 10_000,
      onIncomplete: (window) => incomplete.push(window),
      onRefused: (reason) => refused.push(reason),
    });
    const fake = {
      admin: () => ({
        connect: async () => {},
        disconnect: async () => {},
        fetchTopicMetadata: async () => ({
          topics: [{ name: 'seat-summaries', partitions: [{ partitionId: 0 }] }],
        }),
        fetchOffsets: async () => [],
      }),
      consumer: () => ({
        connect: async () => {},
        disconnect: async () => {},
        subscribe: async () => {},
        run: async (config: { eachBatch: (payload: EachBatchPayload) => Promise<void> }) => {
          hook.eachBatch = config.eachBatch;
        },
        commitOffsets: async (offsets: unknown) => void commits.push(offsets),
      }),
    } as unknown as Kafka;
    (source as unknown as { reader: { kafka: Kafka } }).reader.kafka = fake;
    const registry = new Registry();
    new MergeMetrics(registry, source);

    expect(source.label).toBe('summaries on seat-summaries');
    expect(await source.open()).toEqual({
      partitions: 1,
      backlogPartitions: [],
      judgedThrough: null,
    });
    const batches = source.batches();
    const first = batches.next();
    while (hook.eachBatch === null) await new Promise((resolve) => setImmediate(resolve));
    const messages = [
      summary(0, [part(0, { a: 3, b: 1 })]),
      summary(0, [part(1, { a: 2, zz: 4 })]),
      summary(0, [part(0, { a: 3, b: 1 })]), // the same part again, after a rebalance
      summary(10_000, [part(0, { c: 6 })]),
      summary(20_000, [part(0, { c: 1 })], 5_000), // another window length
      'not a summary',
    ];
    await hook.eachBatch({
      batch: {
        partition: 0,
        messages: messages.map((value, offset) => ({
          offset: String(offset),
          value: Buffer.from(value),
        })),
      },
    } as unknown as EachBatchPayload);
    expect((await first).value).toEqual([]);

    expect(judged.map((w) => [w.start, w.end, [...w.counts], w.total, w.rejected])).toEqual([
      [0, 10_000, [5, 1, 0], 6, { 'outside universe': 1 }],
      [10_000, 20_000, [0, 0, 6], 6, {}],
    ]);
    expect(source.coverageOf(judged[0])).toEqual({
      complete: true,
      partitions: 2,
      missing: [],
      duplicates: 1,
      conflicts: 0,
    });
    expect(source.coverageOf(judged[1])).toMatchObject({ complete: false, missing: [1] });
    expect(incomplete.map((w) => w.start)).toEqual([10_000]);
    expect(refused).toHaveLength(2);
    expect(refused[1]).toBe('not JSON');
    expect(source.partOutcomes).toEqual({ merged: 3, duplicate: 1, afterVerdict: 0, refused: 2 });

    const samples = parseExposition(await registry.metrics());
    for (const [outcome, value] of [
      ['merged', 3],
      ['duplicate', 1],
      ['after_verdict', 0],
      ['refused', 2],
    ] as const) {
      expect(sampleOf(samples, 'shardwise_partial_parts_total', { outcome }).value).toBe(value);
    }

    source.markJudgedUpTo(20_000);
    await source.close();
    expect((await batches.next()).done).toBe(true);
    // The reader holds each summary it decoded until its window is judged: the one of
    // another window length (offset 4, ending at 25 s) too, which the merge refused, so the
    // commit stops below it until windows through 25 s are judged; the message that was no
    // summary at all (offset 5) is behind it.
    expect(commits).toEqual([
      [
        {
          topic: 'seat-summaries',
          partition: 0,
          offset: '4',
          metadata: 'shardwise judged-through=20000',
        },
      ],
    ]);
  });
});

describe('MergeMetrics', () => {
  it('counts merged windows by coverage and shows the partitions missing from the newest', async () => {
    const registry = new Registry();
    const source = { partOutcomes: { merged: 0, duplicate: 0, afterVerdict: 0, refused: 0 } };
    const metrics = new MergeMetrics(registry, source as unknown as SummaryMergeSource);
    const coverage = { partitions: 3, duplicates: 0, conflicts: 0 };
    metrics.observe({ ...coverage, complete: true, missing: [] });
    metrics.observe({ ...coverage, complete: false, missing: [0, 2] });
    const samples = parseExposition(await registry.metrics());
    expect(
      sampleOf(samples, 'shardwise_merged_windows_total', { coverage: 'complete' }).value,
    ).toBe(1);
    expect(
      sampleOf(samples, 'shardwise_merged_windows_total', { coverage: 'incomplete' }).value,
    ).toBe(1);
    expect(sampleOf(samples, 'shardwise_window_missing_partitions').value).toBe(2);
  });
});
