import { openSync } from 'node:fs';
import { ReadStream } from 'node:tty';
import type { SourceItem } from '../ingest/file-source.js';
import type { KafkaSourceEvent } from '../ingest/kafka/events.js';
import type { JudgingPipeline } from '../judge/judging-pipeline.js';
import { loadTerminalScreen } from '../ui/load-terminal-screen.js';
import { ScreenController } from '../ui/screen-controller.js';
import { SourceMeter } from '../ui/source-meter.js';
import type { TerminalScreen, TerminalScreenOptions } from '../ui/terminal-screen.js';
import type { ScreenContext, SourceState } from '../ui/view-model.js';
import { isRejection } from '../window/count-record.js';
import type { ShardUniverse } from '../window/shard-universe.js';
import type { CommandIO } from './command.js';

/** Where `watch` puts its verdicts: JSON Lines, or the live screen with a terminal for keys. */
export type WatchOutput =
  | { readonly kind: 'lines'; readonly notice: string | null }
  | { readonly kind: 'screen'; readonly keys: NodeJS.ReadStream; readonly ownsKeys: boolean };

/**
 * Picks the output: the screen unless --no-ui, standard output is not a terminal, or no
 * terminal is left to read keys from. When standard input carries the records, the keys
 * come from the controlling terminal (/dev/tty), as a pager reads them.
 */
export function chooseWatchOutput(noUi: boolean, io: CommandIO, stdinIsData: boolean): WatchOutput {
  if (noUi) return { kind: 'lines', notice: null };
  if (io.stdout.isTTY !== true) {
    return {
      kind: 'lines',
      notice:
        'shardwise watch: standard output is not a terminal; printing verdicts as JSON Lines, as with --no-ui',
    };
  }
  if (!stdinIsData && io.stdin.isTTY === true) {
    return { kind: 'screen', keys: io.stdin as NodeJS.ReadStream, ownsKeys: false };
  }
  try {
    return { kind: 'screen', keys: new ReadStream(openSync('/dev/tty', 'r')), ownsKeys: true };
  } catch {
    return {
      kind: 'lines',
      notice:
        'shardwise watch: no terminal to read keys from; printing verdicts as JSON Lines, as with --no-ui',
    };
  }
}

/** What the screen is told about the run. */
export interface WatchScreenOptions {
  readonly pipeline: JudgingPipeline;
  readonly universe: ShardUniverse;
  readonly context: ScreenContext;
  readonly io: CommandIO;
  readonly keys: NodeJS.ReadStream;
  readonly ownsKeys: boolean;
  /** `connected` for a broker already connected, `reading` for a file or a scenario. */
  readonly sourceState: SourceState;
  /**
   * Window end a previous run judged through (Kafka resume), or null: sliding windows
   * before it close again on resume and are not shown twice.
   */
  readonly judgedThrough: number | null;
}

/**
 * The live screen as `watch` drives it: subscribed to the pipeline's events, fed the
 * source's totals once per batch, and the one to say when the user has quit.
 */
export class WatchScreen {
  private readonly controller: ScreenController;
  private readonly terminal: TerminalScreen;
  private readonly pipeline: JudgingPipeline;
  private readonly keys: NodeJS.ReadStream;
  private readonly ownsKeys: boolean;
  private readonly unsubscribe: (() => void)[];
  private newestEventTs = Number.NaN;
  private quitSignal: Promise<void>;

  /**
   * Opens the screen. Ink and React (about half a second of start-up) are loaded here, so a
   * run with `--no-ui` never loads them.
   */
  static async open(options: WatchScreenOptions): Promise<WatchScreen> {
    const { openTerminalScreen } = await loadTerminalScreen();
    return new WatchScreen(options, openTerminalScreen);
  }

  private constructor(
    options: WatchScreenOptions,
    openTerminalScreen: (options: TerminalScreenOptions) => TerminalScreen,
  ) {
    const { pipeline, universe, io } = options;
    this.pipeline = pipeline;
    this.keys = options.keys;
    this.ownsKeys = options.ownsKeys;
    const stdout = io.stdout as NodeJS.WriteStream;
    this.controller = new ScreenController({
      context: options.context,
      size: { columns: stdout.columns ?? 80, rows: stdout.rows ?? 24 },
      meter: new SourceMeter(options.sourceState),
      shares: () => universe.shares,
      idAt: (index) => universe.idAt(index),
    });
    this.quitSignal = new Promise((resolve) => this.controller.onQuit(resolve));
    this.unsubscribe = [
      pipeline.events.on('window judged', ({ window, judgement }) => {
        const judgedThrough = options.judgedThrough;
        if (judgedThrough === null || window.end > judgedThrough) {
          this.controller.windowJudged(window, judgement);
        }
      }),
      pipeline.events.on('source stalled', () => this.controller.sourceStalled()),
    ];
    this.terminal = openTerminalScreen({ stdout, keys: this.keys, controller: this.controller });
  }

  /** Calls `listener` once when the user quits. */
  onQuit(listener: () => void): void {
    this.controller.onQuit(listener);
  }

  /**
   * A Kafka source event, shown as the connection state; while the screen is up these
   * replace the stderr lines, which would scribble over it.
   */
  kafkaEvent(event: KafkaSourceEvent): void {
    if (event.type === 'connect-retry' || event.type === 'consumer-crashed') {
      this.controller.sourceConnection('disconnected');
    } else if (
      event.type === 'connected' ||
      event.type === 'group-joined' ||
      event.type === 'consumer-recreated'
    ) {
      this.controller.sourceConnection('connected');
    } else if (event.type === 'rebalancing') {
      this.controller.sourceConnection('connecting');
    }
  }

  /** Quits as the q key does (a signal arrived). */
  quit(): void {
    this.controller.command('quit');
  }

  /**
   * After each batch: the source's totals, then a turn of the event loop so keys and
   * frames are served however fast a file is read.
   */
  async batchDone(batch: readonly SourceItem[]): Promise<void> {
    for (let index = batch.length - 1; index >= 0; index--) {
      const item = batch[index];
      if (!isRejection(item)) {
        if (!(item.ts <= this.newestEventTs)) this.newestEventTs = item.ts;
        break;
      }
    }
    const totals = this.pipeline.totals;
    let rejected = 0;
    for (const count of Object.values(totals.rejected)) rejected += count ?? 0;
    // A record too late for every window was counted by the pipeline and rejected as well.
    const tooLate = totals.rejected['too late'] ?? 0;
    this.controller.sourceProgress({
      records: totals.recordsSeen + rejected - tooLate,
      // Requests are the counts the windows took in: a count report of 40 is 40 requests.
      requests: totals.load,
      rejected,
      late: totals.late,
      newestEventTs: this.newestEventTs,
    });
    await new Promise<void>((resolve) => setImmediate(resolve));
  }

  /** The source was read to its end: the screen stays up until the user quits. */
  async untilQuit(): Promise<void> {
    this.controller.sourceEnded();
    await this.quitSignal;
  }

  /** Takes the screen down and gives the terminal back. */
  async close(): Promise<void> {
    for (const unsubscribe of this.unsubscribe) unsubscribe();
    await this.terminal.close();
    if (this.ownsKeys) this.keys.destroy();
  }
}
