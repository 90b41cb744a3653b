import type { Judgement } from '../judge/judgement.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import type { SourceMeter, SourceTotals } from './source-meter.js';
import {
  buildScreenModel,
  buildWindowView,
  shardSorts,
  type ScreenContext,
  type ScreenModel,
  type ShardSort,
  type TerminalSize,
  type WindowView,
} from './view-model.js';

/** What a key asks of the screen (see key-bindings.ts). */
export type ScreenCommand =
  | 'toggle pause'
  | 'step back'
  | 'step forward'
  | 'next sort'
  | 'toggle help'
  | 'close help'
  | 'quit';

/** Timers, replaceable in tests. */
export interface FrameScheduler {
  now(): number;
  setTimeout(run: () => void, ms: number): unknown;
  clearTimeout(handle: unknown): void;
}

/** How the controller is set up. */
export interface ScreenControllerOptions {
  readonly context: ScreenContext;
  readonly size: TerminalSize;
  readonly meter: SourceMeter;
  /** The declared shares as of now (a growing universe grows); null for equal shares. */
  readonly shares: () => ArrayLike<number> | null;
  /** The shard id at an index of a window's counts. */
  readonly idAt: (index: number) => string;
  /** Shortest time between two frames, ms (default 250: four frames a second). */
  readonly frameMs?: number;
  /** Judged windows kept for stepping back and for the history (default 360: an hour of 10 s windows). */
  readonly historyLimit?: number;
  /** A frame at least this often even when nothing happens, so ages and rates stay current (default 1000 ms). */
  readonly refreshMs?: number;
  readonly scheduler?: FrameScheduler;
}

const realTimers: FrameScheduler = {
  now: () => Date.now(),
  setTimeout: (run, ms) => {
    const handle = setTimeout(run, ms);
    // A pending frame must not keep a finished run alive.
    handle.unref();
    return handle;
  },
  clearTimeout: (handle) => clearTimeout(handle as ReturnType<typeof setTimeout>),
};

/**
 * The screen's state and its frames. Subscribes nothing itself: the CLI hands it pipeline
 * events and source totals, the keys hand it commands, and it publishes a ready
 * {@link ScreenModel} to its subscribers at most once per `frameMs`, however fast records
 * and windows come, so the redraw rate is bounded by construction. The model for a window
 * (histogram, rows) is prepared once when the window is judged; a frame only picks from it.
 */
export class ScreenController {
  private readonly options: ScreenControllerOptions;
  private readonly scheduler: FrameScheduler;
  private readonly frameMs: number;
  private readonly historyLimit: number;
  private readonly refreshMs: number;
  private readonly listeners = new Set<() => void>();
  private readonly quitListeners: (() => void)[] = [];
  private windows: WindowView[] = [];
  private selected: number | null = null;
  private paused = false;
  private sort: ShardSort = 'evidence';
  private help = false;
  private size: TerminalSize;
  private model: ScreenModel;
  private lastFrameAt = Number.NEGATIVE_INFINITY;
  private pending: unknown = null;
  private refresh: unknown = null;
  private closed = false;
  private quitAsked = false;
  private frames = 0;

  constructor(options: ScreenControllerOptions) {
    this.options = options;
    this.scheduler = options.scheduler ?? realTimers;
    this.frameMs = options.frameMs ?? 250;
    this.historyLimit = options.historyLimit ?? 360;
    this.refreshMs = options.refreshMs ?? 1000;
    this.size = options.size;
    this.model = this.build();
    this.scheduleRefresh();
  }

  /** The frame on show (stable between frames, as useSyncExternalStore needs). */
  readonly getSnapshot = (): ScreenModel => this.model;

  /** Calls `listener` after each new frame; returns the unsubscribe function. */
  readonly subscribe = (listener: () => void): (() => void) => {
    this.listeners.add(listener);
    return () => this.listeners.delete(listener);
  };

  /** Frames published so far. */
  get framesPublished(): number {
    return this.frames;
  }

  /** True once quit was asked for. */
  get quitRequested(): boolean {
    return this.quitAsked;
  }

  /** Calls `listener` once when quit is asked for (at once if it already was). */
  onQuit(listener: () => void): void {
    if (this.quitAsked) listener();
    else this.quitListeners.push(listener);
  }

  /** A window was judged (the pipeline's `window judged` event). */
  windowJudged(window: ClosedWindow, judgement: Judgement): void {
    const view = buildWindowView(window, judgement, this.options.shares(), this.options.idAt);
    this.windows.push(view);
    if (this.windows.length > this.historyLimit) {
      this.windows.shift();
      if (this.selected !== null) this.selected = Math.max(0, this.selected - 1);
    }
    if (this.paused && this.selected === null) this.selected = this.windows.length - 1;
    this.invalidate();
  }

  /** New source totals (once per batch). */
  sourceProgress(totals: SourceTotals): void {
    this.options.meter.progress(totals);
    this.invalidate();
  }

  /** The source went quiet (the pipeline's `source stalled` event). */
  sourceStalled(): void {
    this.options.meter.stalled();
    this.invalidate();
  }

  /** The source was read to its end. */
  sourceEnded(): void {
    this.options.meter.end();
    this.invalidate();
  }

  /** A broker connection state changed. */
  sourceConnection(state: 'connecting' | 'connected' | 'disconnected'): void {
    this.options.meter.connection(state);
    this.invalidate();
  }

  /** The terminal was resized. */
  resize(size: TerminalSize): void {
    this.size = size;
    this.invalidate();
  }

  /** A key's command. */
  command(command: ScreenCommand): void {
    const newest = this.windows.length - 1;
    switch (command) {
      case 'toggle pause':
        this.paused = !this.paused;
        this.selected = this.paused && newest >= 0 ? newest : null;
        break;
      case 'step back':
        if (newest < 0) return;
        this.paused = true;
        this.selected = Math.max(0, (this.selected ?? newest) - 1);
        break;
      case 'step forward':
        if (this.selected === null) return;
        this.selected = Math.min(newest, this.selected + 1);
        break;
      case 'next sort':
        this.sort = shardSorts[(shardSorts.indexOf(this.sort) + 1) % shardSorts.length];
        break;
      case 'toggle help':
        this.help = !this.help;
        break;
      case 'close help':
        if (!this.help) return;
        this.help = false;
        break;
      case 'quit':
        if (this.quitAsked) return;
        this.quitAsked = true;
        for (const listener of this.quitListeners.splice(0)) listener();
        return;
    }
    this.invalidate();
  }

  /** Stops the timers; no frame is published after this. */
  close(): void {
    this.closed = true;
    if (this.pending !== null) this.scheduler.clearTimeout(this.pending);
    if (this.refresh !== null) this.scheduler.clearTimeout(this.refresh);
    this.pending = null;
    this.refresh = null;
  }

  /** Asks for a frame: now if the last one is old enough, else when it is. */
  private invalidate(): void {
    if (this.closed || this.pending !== null) return;
    const wait = Math.max(0, this.lastFrameAt + this.frameMs - this.scheduler.now());
    this.pending = this.scheduler.setTimeout(() => {
      this.pending = null;
      this.publish();
    }, wait);
  }

  private publish(): void {
    if (this.closed) return;
    this.lastFrameAt = this.scheduler.now();
    this.model = this.build();
    this.frames++;
    for (const listener of [...this.listeners]) listener();
  }

  private scheduleRefresh(): void {
    if (this.closed) return;
    this.refresh = this.scheduler.setTimeout(() => {
      this.refresh = null;
      this.invalidate();
      this.scheduleRefresh();
    }, this.refreshMs);
  }

  private build(): ScreenModel {
    return buildScreenModel({
      context: this.options.context,
      windows: this.windows,
      selected: this.selected,
      paused: this.paused,
      sort: this.sort,
      help: this.help,
      source: this.options.meter.reading(),
      size: this.size,
    });
  }
}
