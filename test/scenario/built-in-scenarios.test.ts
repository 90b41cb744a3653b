import { describe, expect, it } from 'vitest';
import { builtInScenarios, seatShardIds } from '../../src/scenario/built-in-scenarios.js';
import { checkDefinition } from '../../src/scenario/scenario-definition.js';
import { ShardUniverse } from '../../src/window/shard-universe.js';

describe('built-in scenarios', () => {
  it('include every scenario the design asks for', () => {
    for (const name of [
      'demo',
      'chance',
      'hotspot',
      'dead-shard',
      'failover',
      'zipf-keys',
      'weighted',
    ]) {
      expect(builtInScenarios.has(name), name).toBe(true);
    }
  });

  it('are internally consistent and summarised', () => {
    for (const definition of builtInScenarios.values()) {
      expect(() => checkDefinition(definition), definition.name).not.toThrow();
      expect(definition.summary.length).toBeGreaterThan(20);
    }
  });

  it('use the 64 seat shards that --shards seat-00..seat-63 declares', () => {
    expect(seatShardIds).toEqual(ShardUniverse.fromShardsOption('seat-00..seat-63').ids);
  });
});
