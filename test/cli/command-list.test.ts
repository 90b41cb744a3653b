import { describe, expect, it } from 'vitest';
import { commandList, summaryOf } from '../../src/cli/command-list.js';

// Source of truth: the commands README.md documents (a `shardwise NAME` heading each), and
// each command's own `name` and `summary`, which must be the ones listed here.

describe('commandList', () => {
  it('lists the six commands in the order of the top help', () => {
    expect(commandList.map((entry) => entry.name)).toEqual([
      'watch',
      'review',
      'odds',
      'plan',
      'simulate',
      'count',
    ]);
  });

  it('loads for each entry the command of that name and summary', async () => {
    for (const entry of commandList) {
      const command = await entry.load();
      expect(command.name).toBe(entry.name);
      expect(command.summary).toBe(entry.summary);
    }
  });

  it('summaryOf answers from the list and names an unknown command', () => {
    expect(summaryOf('plan')).toBe('headroom and shard-count planning from chance skew alone');
    expect(() => summaryOf('stats')).toThrow('no command named stats');
  });
});
