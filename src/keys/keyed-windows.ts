import type { KeyHashes } from './key-hash.js';
import { WindowKeyStats, type KeySketchSettings } from './window-key-stats.js';

/**
 * Key statistics per open window, in step with the pipeline's event-time windows: a keyed
 * request counted by the windows (the pipeline says so) is added to every covering window
 * not yet closed, and a window's statistics are handed over once when it closes. Memory:
 * the open windows' statistics, each bounded per shard (window-key-stats.ts).
 */
export class KeyedWindows {
  private readonly hopMs: number;
  private readonly windowsPerRecord: number;
  private readonly settings: KeySketchSettings;
  private readonly open = new Map<number, WindowKeyStats>();
  private closedThrough = Number.NEGATIVE_INFINITY;
  private cachedIndex = Number.NaN;
  private cached: WindowKeyStats | null = null;
  private readonly hashes: KeyHashes = { first: 0, second: 0 };

  /**
   * @param windowMs window length, ms (as the pipeline's windows)
   * @param hopMs hop, ms; divides the window length
   * @param settings counters and registers per shard
   */
  constructor(windowMs: number, hopMs: number, settings: KeySketchSettings) {
    this.hopMs = hopMs;
    this.windowsPerRecord = Math.round(windowMs / hopMs);
    this.settings = settings;
  }

  /** Adds a keyed request the windows have counted. */
  add(ts: number, index: number, key: string, count: number): void {
    const last = Math.floor(ts / this.hopMs);
    if (this.windowsPerRecord === 1) {
      let stats = last === this.cachedIndex ? this.cached : null;
      if (stats === null) {
        stats = this.statsFor(last);
        if (stats === null) return;
        this.cachedIndex = last;
        this.cached = stats;
      }
      stats.add(index, key, count, this.hashes);
      return;
    }
    for (let window = last - this.windowsPerRecord + 1; window <= last; window++) {
      this.statsFor(window)?.add(index, key, count, this.hashes);
    }
  }

  /** The statistics of the window starting at `startMs` as it closes (null: no keyed request). */
  close(startMs: number): WindowKeyStats | null {
    const window = Math.floor(startMs / this.hopMs);
    const stats = this.open.get(window) ?? null;
    for (const open of this.open.keys()) if (open <= window) this.open.delete(open);
    if (window > this.closedThrough) this.closedThrough = window;
    if (this.cachedIndex <= window) {
      this.cachedIndex = Number.NaN;
      this.cached = null;
    }
    return stats;
  }

  /** Windows holding key statistics. */
  get openWindows(): number {
    return this.open.size;
  }

  /** Follows a retirement of a growing universe (see WindowKeyStats.follow). */
  follow(indexAfter: Int32Array): void {
    for (const stats of this.open.values()) stats.follow(indexAfter);
  }

  private statsFor(window: number): WindowKeyStats | null {
    if (window <= this.closedThrough) return null;
    let stats = this.open.get(window);
    if (stats === undefined) {
      stats = new WindowKeyStats(this.settings);
      this.open.set(window, stats);
    }
    return stats;
  }
}
