import type { RecordedWindow } from '../record/recording-reader.js';

/**
 * One judged window as the review sees it, whatever it came from (a recording as recorded,
 * a recording judged again, a record file or a Kafka range judged afresh): the fields of a
 * recorded window but its line number and settings. The review reads its counts during the
 * call only.
 */
export type ReviewWindow = Omit<RecordedWindow, 'line' | 'settings'>;
