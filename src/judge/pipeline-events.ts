import type { RejectionReason } from '../window/count-record.js';
import type { ClosedWindow } from '../window/event-time-window.js';
import type { Incident, Judgement } from './judgement.js';

/**
 * What the judging pipeline tells its subscribers (the JSON Lines writer, the recorder,
 * later the screen and the metrics exporter). Each subscriber reads these payloads and
 * never another component's state.
 */
export interface PipelineEventMap {
  /** A window closed (before it is judged); the consumer must not write to `counts`. */
  readonly 'window closed': ClosedWindow;
  /** A window was judged. */
  readonly 'window judged': { readonly window: ClosedWindow; readonly judgement: Judgement };
  /** A record failed validation (`line` when the source has lines). */
  readonly 'record rejected': { readonly reason: RejectionReason; readonly line?: number };
  /** A live source has been quiet for longer than a window plus the lateness. */
  readonly 'source stalled': {
    readonly quietMs: number;
    /** Event time of the newest record counted, epoch ms. */
    readonly newestRecordTs: number;
  };
  readonly 'incident opened': Incident;
  readonly 'incident cleared': Incident;
}

export type PipelineEventName = keyof PipelineEventMap;
type Listener<K extends PipelineEventName> = (payload: PipelineEventMap[K]) => void;

/**
 * A small typed event emitter. Listeners run synchronously in subscription order; one that
 * throws stops the emit and the error reaches whoever fed the pipeline, because a failed
 * subscriber (a full disk under the recorder) must end the run visibly, not be skipped.
 */
export class PipelineEvents {
  private readonly listeners = new Map<PipelineEventName, Listener<PipelineEventName>[]>();

  /** Subscribes; returns the function that unsubscribes. */
  on<K extends PipelineEventName>(name: K, listener: Listener<K>): () => void {
    const list = this.listeners.get(name) ?? [];
    list.push(listener as Listener<PipelineEventName>);
    this.listeners.set(name, list);
    return () => {
      const current = this.listeners.get(name) ?? [];
      this.listeners.set(
        name,
        current.filter((entry) => entry !== listener),
      );
    };
  }

  /** True when someone listens: lets per-record events cost nothing when unheard. */
  listens(name: PipelineEventName): boolean {
    return (this.listeners.get(name)?.length ?? 0) > 0;
  }

  /** Calls every listener of `name` with `payload`. */
  emit<K extends PipelineEventName>(name: K, payload: PipelineEventMap[K]): void {
    const list = this.listeners.get(name);
    if (list === undefined) return;
    for (const listener of [...list]) (listener as Listener<K>)(payload);
  }
}
