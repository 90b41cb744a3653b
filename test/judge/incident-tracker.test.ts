import { describe, expect, it } from 'vitest';
import { IncidentTracker } from '../../src/judge/incident-tracker.js';

const hop = 10_000;

/** Runs one tracker over windows given as the hot shards of each, 'lull' for too little traffic. */
function run(confirm: number, clear: number, windows: (readonly number[] | 'lull')[]) {
  const tracker = new IncidentTracker(confirm, clear);
  return windows.map((hot, index) =>
    hot === 'lull'
      ? tracker.update(index * hop, [], [], true)
      : tracker.update(index * hop, hot, [], false),
  );
}

describe('IncidentTracker', () => {
  it('opens after confirm consecutive windows, dated from the first of them', () => {
    const updates = run(3, 5, [[7], [7], [7]]);
    expect(updates.map((u) => u.open.length)).toEqual([0, 0, 1]);
    expect(updates[2].opened).toEqual([{ index: 7, finding: 'hotspot', since: 0, test: 'window' }]);
    expect(updates.map((u) => u.streaks.get(14))).toEqual([1, 2, 3]);
  });

  it('restarts the streak when a window in between is clean', () => {
    const updates = run(3, 5, [[7], [7], [], [7], [7]]);
    expect(updates.every((u) => u.opened.length === 0)).toBe(true);
    expect(updates[4].streaks.get(14)).toBe(2);
  });

  it('clears after clear consecutive clean windows, not sooner', () => {
    const updates = run(2, 3, [[7], [7], [], [], [7], [], [], []]);
    expect(updates.map((u) => u.open.length)).toEqual([0, 1, 1, 1, 1, 1, 1, 0]);
    expect(updates[7].cleared).toEqual([
      { index: 7, finding: 'hotspot', since: 0, test: 'window' },
    ]);
  });

  // Consecutive means consecutive: a window with too little traffic in which the shard is
  // not flagged is no evidence either way. It never extends a streak; one such window between
  // two flags is bridged, two in a row break the streak. Otherwise k chance flags scattered
  // over any number of lulls open an incident, and no rate near alpha^k per k windows
  // (docs/model.md) bounds it.
  it('bridges one lull without counting it, breaks a streak on two in a row', () => {
    const bridged = run(3, 2, [[7], 'lull', [7], [7]]);
    expect(bridged.map((u) => u.streaks.get(14))).toEqual([1, undefined, 2, 3]);
    expect(bridged[3].opened).toEqual([{ index: 7, finding: 'hotspot', since: 0, test: 'window' }]);
    const broken = run(3, 2, [[7], 'lull', 'lull', [7], [7]]);
    expect(broken.map((u) => u.streaks.get(14))).toEqual([1, undefined, undefined, 1, 2]);
    expect(broken.flatMap((u) => u.opened)).toEqual([]);
  });

  it('lets a lull of two windows inside an incident neither clear it nor count as clean', () => {
    const updates = run(3, 2, [[7], [7], [7], 'lull', 'lull', [], []]);
    expect(updates.map((u) => u.open.length)).toEqual([0, 0, 1, 1, 1, 1, 0]);
    expect(updates[6].cleared).toEqual([
      { index: 7, finding: 'hotspot', since: 0, test: 'window' },
    ]);
    expect(updates[6].clearedWithoutEvidence).toEqual([]);
  });

  it('opens nothing on flags at windows 129, 232 and 353 with only lulls in between', () => {
    // The sequence measured on negative-binomial traffic (mean 2 per shard, phi 3, every
    // window too little traffic): three scattered chance flags of one shard.
    const windows: (readonly number[] | 'lull')[] = [];
    for (let w = 0; w < 400; w++) windows.push(w === 129 || w === 232 || w === 353 ? [7] : 'lull');
    const updates = run(3, 5, windows);
    expect(updates.flatMap((u) => u.opened)).toEqual([]);
    expect(updates[353].streaks.get(14)).toBe(1);
  });

  it('clears an open incident after 1000 windows without evidence, saying so', () => {
    const windows: (readonly number[] | 'lull')[] = [[7], [7], [7]];
    for (let w = 0; w < 1000; w++) windows.push('lull');
    const updates = run(3, 5, windows);
    expect(updates[2].opened).toHaveLength(1);
    const cleared = updates.flatMap((u) => u.cleared);
    expect(cleared).toEqual([{ index: 7, finding: 'hotspot', since: 0, test: 'window' }]);
    expect(updates.flatMap((u) => u.clearedWithoutEvidence)).toEqual(cleared);
    expect(updates[updates.length - 1].open).toEqual([]);
  });

  it('tracks hot and cold findings of different shards apart', () => {
    const tracker = new IncidentTracker(1, 1);
    const update = tracker.update(0, [43], [42], false);
    expect(update.opened).toEqual([
      { index: 43, finding: 'hotspot', since: 0, test: 'window' },
      { index: 42, finding: 'cold', since: 0, test: 'window' },
    ]);
    expect(update.open.map((i) => i.index)).toEqual([42, 43]);
    expect(tracker.anyOpen).toBe(true);
    expect(tracker.update(hop, [], [], false).cleared).toHaveLength(2);
    expect(tracker.anyOpen).toBe(false);
  });
});
