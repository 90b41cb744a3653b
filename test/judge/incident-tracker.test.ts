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
    expect(updates[2].opened).toEqual([{ index: 7, finding: 'hotspot', since: 0 }]);
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
    expect(updates[7].cleared).toEqual([{ index: 7, finding: 'hotspot', since: 0 }]);
  });

  it('lets a lull neither clear an incident nor break a streak', () => {
    const updates = run(3, 2, [[7], 'lull', [7], [7], 'lull', 'lull', 'lull', [], []]);
    expect(updates[3].opened).toHaveLength(1);
    expect(updates[3].streaks.get(14)).toBe(3);
    expect(updates.slice(4, 8).map((u) => u.open.length)).toEqual([1, 1, 1, 1]);
    expect(updates[8].cleared).toHaveLength(1);
  });

  it('tracks hot and cold findings of different shards apart', () => {
    const tracker = new IncidentTracker(1, 1);
    const update = tracker.update(0, [43], [42], false);
    expect(update.opened).toEqual([
      { index: 43, finding: 'hotspot', since: 0 },
      { index: 42, finding: 'cold', since: 0 },
    ]);
    expect(update.open.map((i) => i.index)).toEqual([42, 43]);
    expect(tracker.anyOpen).toBe(true);
    expect(tracker.update(hop, [], [], false).cleared).toHaveLength(2);
    expect(tracker.anyOpen).toBe(false);
  });
});
