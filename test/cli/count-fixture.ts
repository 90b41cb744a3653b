// The records of the count tests (test/cli/partial-counting.test.ts, test/cli/count.test.ts).
import type { RecordSink } from '../../src/ingest/decode.js';
import type { SourceItem } from '../../src/ingest/file-source.js';
import { KafkaMessageDecoder } from '../../src/ingest/kafka/message-decoder.js';
import type { RejectionReason } from '../../src/window/count-record.js';

// Source of truth: the record lines below (formats of docs/formats.md) and window
// arithmetic by hand: 10 s tumbling windows, 1 s lateness, so a partition's window closes
// once a record 1 s past its end has come, at the end of the batch bringing it.

/** Lines of one partition, by offset. */
export const partition0 = [
  '{"ts":1000,"shard":"a","count":3}', // 0: window 0
  '{"ts":2000,"counts":{"a":1,"b":4}}', // 1: window 0, two records
  'not json', // 2: rejected, not JSON
  '{"ts":9000,"shard":"b","count":-1}', // 3: rejected, negative count
  '{"ts":12000,"shard":"a","count":2}', // 4: window 10000; watermark 11000 closes window 0
  '{"ts":5000,"shard":"a","count":7}', // 5: window 0 closed: too late, 7 units late
  '{"ts":25000,"shard":"c","count":1}', // 6: watermark 24000 closes window 10000
];
export const partition1 = [
  '{"ts":3000,"shard":"a","count":10}', // 0: window 0
  '{"ts":4000,"shard":"z","count":2}', // 1: window 0
  '{"ts":21500,"shard":"a","count":1}', // 2: watermark 20500 closes windows 0 and 10000
  '{"ts":22000,"shard":"a","count":1.5}', // 3: rejected, non-integer count
];

/** Decodes lines as Kafka messages of `partition` from `first` on, tagged like count's group source. */
export function messages(partition: number, lines: string[], first: number): SourceItem[] {
  const decoder = new KafkaMessageDecoder({ kind: 'field' });
  const items: SourceItem[] = [];
  let offset = first;
  const sink: RecordSink = {
    record: (ts, shard, count, key) =>
      items.push(
        key === undefined
          ? { ts, shard, count, partition, offset }
          : { ts, shard, count, key, partition, offset },
      ),
    reject: (reason: RejectionReason) => items.push({ reason, partition, offset }),
  };
  for (const line of lines) {
    decoder.decode(new TextEncoder().encode(line), null, partition, 0, sink);
    offset++;
  }
  return items;
}

/** The batches of the records above: partition 0 up to offset 4, partition 1, the rest of 0. */
export function countBatches(): SourceItem[][] {
  return [
    messages(0, partition0.slice(0, 5), 0),
    messages(1, partition1, 0),
    messages(0, partition0.slice(5), 5),
  ];
}

/** The window starts of each publication, by hand from the comments above. */
export const expectedWindows = [[0], [0, 10_000], [10_000]];

/** The parts of each publication, by hand from the comments above. */
export const expectedParts = [
  [
    {
      partition: 0,
      from: 0,
      to: 4,
      records: 3,
      late: 0,
      rejected: { 'not JSON': 1, 'negative count': 1 },
      counts: { a: 4, b: 4 },
    },
  ],
  [
    {
      partition: 1,
      from: 0,
      to: 3,
      records: 2,
      late: 0,
      rejected: { 'non-integer count': 1 },
      counts: { a: 10, z: 2 },
    },
    { partition: 1, from: 0, to: 3, records: 0, late: 0, rejected: {}, counts: {} },
  ],
  [
    {
      partition: 0,
      from: 0,
      to: 6,
      records: 1,
      late: 7,
      rejected: { 'too late': 1 },
      counts: { a: 2 },
    },
  ],
];

/** Each partition marked judged through its own last closed window, in publication order. */
export const expectedMarks = [
  { partition: 0, through: 10_000 },
  { partition: 1, through: 20_000 },
  { partition: 0, through: 20_000 },
];
