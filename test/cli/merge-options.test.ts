import { describe, expect, it } from 'vitest';
import { mergeOptionsHelp, readMergeSettings } from '../../src/cli/merge-options.js';

const context = { env: {} };

describe('readMergeSettings', () => {
  it('the summary topic with the connection; --from latest and a 30 s deadline by default', () => {
    const { settings, warnings } = readMergeSettings(
      { merge: 'shard-summaries', brokers: '127.0.0.1:19092' },
      context,
    );
    expect(warnings).toEqual([]);
    expect(settings).toMatchObject({
      topic: 'shard-summaries',
      groupId: undefined,
      from: 'latest',
      deadlineMs: 30_000,
    });
    expect(
      readMergeSettings(
        {
          merge: 'shard-summaries',
          brokers: '127.0.0.1:19092',
          group: 'judges',
          from: 'earliest',
          'merge-deadline': '2m',
        },
        context,
      ).settings,
    ).toMatchObject({ groupId: 'judges', from: 'earliest', deadlineMs: 120_000 });
  });

  it('refusals name the option the user typed and its value', () => {
    const read = (values: Record<string, string>) => () => readMergeSettings(values, context);
    expect(read({ 'merge-deadline': '10s' })).toThrow(
      '--merge-deadline: "10s" needs --merge SUMMARY_TOPIC',
    );
    expect(read({ merge: 'sums', brokers: 'h:1', topic: 'requests' })).toThrow(
      '--topic: "requests" cannot be combined with --merge (the summaries name their source)',
    );
    expect(read({ merge: 'sums' })).toThrow('--merge: "sums" needs --brokers');
    expect(read({ merge: 'sums', brokers: 'h:1', from: 'middle' })).toThrow(
      '--from: "middle" is not latest or earliest (with --merge)',
    );
    expect(read({ merge: 'sums', brokers: 'h:1', 'merge-deadline': 'soon' })).toThrow(
      '--merge-deadline: "soon" is not a duration',
    );
    // The summary topic is given with --merge, so a bad name is --merge's fault.
    expect(read({ merge: 'no spaces allowed', brokers: 'h:1' })).toThrow(
      '--merge: "no spaces allowed" is not a Kafka topic name',
    );
  });

  it('the help names both options', () => {
    expect(mergeOptionsHelp).toContain('--merge SUMMARY_TOPIC');
    expect(mergeOptionsHelp).toContain('--merge-deadline D');
    expect(mergeOptionsHelp).toContain('(default 30s)');
  });
});
