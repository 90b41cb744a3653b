import { UsageError } from '../errors/usage-error.js';
import {
  parseGroup,
  parseKafkaConnection,
  parseTopic,
  type OptionContext,
  type ParsedValues,
} from './kafka-options.js';
import { duration, refuseGiven } from './option-values.js';
import type { MergeSettings } from './watch-merge.js';

/** The options of `watch --merge` beside the Kafka connection ones. */
export const mergeOptionSpec = {
  merge: { type: 'string' },
  'merge-deadline': { type: 'string' },
} as const;

/** Help text for them. */
export const mergeOptionsHelp = [
  'Merged source (the judge of several `shardwise count` instances):',
  '  --merge SUMMARY_TOPIC    read the partial summaries the counting instances publish,',
  '                           put each window together from one part per source partition',
  '                           (a part sent twice after a rebalance is dropped) and judge it;',
  '                           with --brokers, instead of --topic. --group and --from',
  '                           (latest|earliest) apply to the summary topic',
  '  --merge-deadline D       how long a window waits for its missing partitions after its',
  '                           first part came (default 30s); then it is judged on the rest and',
  '                           marked incomplete, the missing partitions named in the verdict',
  '                           ("coverage"), on the screen and in the metrics',
].join('\n');

/** Reads `--merge` and its companions; throws UsageError naming the option. */
export function readMergeSettings(
  values: ParsedValues,
  context: OptionContext,
): { settings: MergeSettings; warnings: readonly string[] } {
  const topicText = values.merge;
  if (typeof topicText !== 'string') {
    throw new UsageError(
      '--merge-deadline',
      String(values['merge-deadline']),
      'needs --merge SUMMARY_TOPIC',
    );
  }
  refuseGiven(
    values,
    ['topic', 'input', 'scenario', 'shard-from'],
    'cannot be combined with --merge (the summaries name their source)',
  );
  if (values.brokers === undefined) {
    throw new UsageError('--merge', topicText, 'needs --brokers');
  }
  const { connection, warnings } = parseKafkaConnection(values, context);
  const from = values.from ?? 'latest';
  if (from !== 'latest' && from !== 'earliest') {
    throw new UsageError('--from', String(from), 'is not latest or earliest (with --merge)');
  }
  const deadline = values['merge-deadline'];
  return {
    settings: {
      connection,
      topic: parseTopic(topicText, '--merge'),
      groupId: parseGroup(typeof values.group === 'string' ? values.group : undefined),
      from,
      deadlineMs: deadline === undefined ? 30_000 : duration('--merge-deadline', String(deadline)),
    },
    warnings,
  };
}
