import type { JudgeSettings } from '../judge/judge-settings.js';
import type { Judgement } from '../judge/judgement.js';

/**
 * One line of a recording (`watch --record FILE`): the verdict on a closed window exactly as
 * `watch --no-ui` prints it, plus what `review` needs to judge the window again: its full
 * count vector and the settings in force. The shard ids (and the declared shares, when they
 * are unequal) ride on the first line of each file and again whenever a growing universe
 * has grown or retired ids, so every file, a rotated one included, can be read on its own.
 */
export interface RecordingLine extends Judgement {
  /** The recording format's version; a reader refuses versions it does not know. */
  readonly recording: 1;
  /** Load per shard, indexed like `shardIds` (the ids in force when this line was read). */
  readonly counts: readonly number[];
  readonly settings: RecordedSettings;
  /** Shard ids by index; on the first line of a file and whenever the universe grew or retired ids. */
  readonly shardIds?: readonly string[];
  /** Declared shares by index, when they are unequal; with `shardIds`. */
  readonly shares?: readonly number[];
}

/** The settings a recording carries: the judge's, the windows', and where records came from. */
export interface RecordedSettings extends Omit<JudgeSettings, 'hopMs'> {
  readonly source: Readonly<Record<string, unknown>>;
  readonly windowMs: number;
  readonly hopMs: number;
  readonly latenessMs: number;
  /** False when the universe grew as shards reported (cold tests off). */
  readonly declaredUniverse: boolean;
  /**
   * Key analysis in force: sketch sizes and the re-placement simulations, or null when it
   * was off (--no-keys). Absent in recordings made before key analysis existed.
   */
  readonly keys?: {
    readonly counters: number;
    readonly registers: number;
    readonly simulations: number;
  } | null;
}

/** The version this build writes and reads. */
export const recordingVersion = 1;
