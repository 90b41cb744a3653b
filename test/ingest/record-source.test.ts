import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { fileRecordSource, scenarioRecordSource } from '../../src/ingest/record-source.js';
import { builtInScenarios } from '../../src/scenario/built-in-scenarios.js';
import { runScenario } from '../../src/scenario/scenario-run.js';

// The sources of one partition, against the contract of RecordSource (src/ingest/record-source.ts):
// one partition, no backlog, nothing judged before, live only when reading goes on.
describe('single-partition record sources', () => {
  it('a file is a replay of one partition, named by its path', async () => {
    const source = fileRecordSource('records.jsonl');
    expect(source.label).toBe('file records.jsonl');
    expect(source.live).toBe(false);
    expect(await source.open()).toEqual({
      partitions: 1,
      backlogPartitions: [],
      judgedThrough: null,
    });
    expect(source.backlogged(0)).toBe(false);
    await source.close();
  });

  it('standard input is live and yields the lines written to it', async () => {
    const stdin = new PassThrough();
    const source = fileRecordSource('-', stdin);
    expect(source.label).toBe('standard input');
    expect(source.live).toBe(true);
    stdin.end('{"ts":1000,"shard":"a","count":3}\n');
    const items = [];
    for await (const batch of source.batches()) items.push(...batch);
    expect(items.length).toBeGreaterThan(0);
    await source.close();
  });

  it('a scenario is live only when paced in real time', async () => {
    const definition = builtInScenarios.get('chance');
    if (definition === undefined) throw new Error('no chance scenario');
    const run = runScenario(definition, { seed: 1, startMs: 0, durationMs: 2000 });
    const fast = scenarioRecordSource(run, 'fast', 'scenario chance');
    expect([fast.label, fast.live]).toEqual(['scenario chance', false]);
    expect((await fast.open()).partitions).toBe(1);
    let batches = 0;
    for await (const batch of fast.batches()) batches += batch.length > 0 ? 1 : 0;
    expect(batches).toBeGreaterThan(0);
    await fast.close();
    expect(scenarioRecordSource(run, 'real-time', 'scenario chance').live).toBe(true);
  });
});
