// A clock and timers the test moves by hand, so frame timing is exact.
import type { FrameScheduler } from '../../src/ui/screen-controller.js';

export class ManualScheduler implements FrameScheduler {
  time = 0;
  private timers: { at: number; run: () => void; id: number }[] = [];
  private nextId = 0;

  now(): number {
    return this.time;
  }

  setTimeout(run: () => void, ms: number): unknown {
    const id = this.nextId++;
    this.timers.push({ at: this.time + ms, run, id });
    return id;
  }

  clearTimeout(handle: unknown): void {
    this.timers = this.timers.filter((timer) => timer.id !== handle);
  }

  /** Moves the clock forward by `ms`, running every timer that falls due on the way. */
  advance(ms: number): void {
    const until = this.time + ms;
    for (;;) {
      const due = this.timers.filter((timer) => timer.at <= until).sort((a, b) => a.at - b.at)[0];
      if (due === undefined) break;
      this.timers = this.timers.filter((timer) => timer !== due);
      this.time = Math.max(this.time, due.at);
      due.run();
    }
    this.time = until;
  }
}
