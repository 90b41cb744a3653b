import type { Command } from './command.js';

/**
 * The commands, each with its one-line summary and a loader: `shardwise --version`, the
 * top help and one command load only what that command needs (Ink, Kafka, the report's
 * chart renderer and the chance engine each take a noticeable part of a second to load).
 */
export interface CommandEntry {
  readonly name: string;
  readonly summary: string;
  readonly load: () => Promise<Command>;
}

export const commandList: readonly CommandEntry[] = [
  {
    name: 'watch',
    summary:
      'judge each window of per-shard counts from a file, stdin, Kafka, Prometheus or a simulated cluster',
    load: async () => (await import('./watch.js')).watchCommand,
  },
  {
    name: 'review',
    summary:
      'post-incident report (HTML and Markdown) from a recording, a record file or a Kafka range',
    load: async () => (await import('./review.js')).reviewCommand,
  },
  {
    name: 'odds',
    summary: 'chance calculator: fullest/emptiest shard and empty shards under random placement',
    load: async () => (await import('./odds.js')).oddsCommand,
  },
  {
    name: 'plan',
    summary: 'headroom and shard-count planning from chance skew alone',
    load: async () => (await import('./plan.js')).planCommand,
  },
  {
    name: 'simulate',
    summary: 'write seeded synthetic traffic with planted faults to a file, stdout or Kafka',
    load: async () => (await import('./simulate.js')).simulateCommand,
  },
  {
    name: 'count',
    summary: 'count some partitions of a topic and publish partial summaries for watch --merge',
    load: async () => (await import('./count.js')).countCommand,
  },
];

/** The summary of the command `name` (each command's own `summary` comes from here). */
export function summaryOf(name: string): string {
  const entry = commandList.find((candidate) => candidate.name === name);
  if (entry === undefined) throw new RangeError(`no command named ${name}`);
  return entry.summary;
}
