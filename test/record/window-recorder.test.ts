import { existsSync, mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { readRecording, type RecordedWindow } from '../../src/record/recording-reader.js';
import { WindowRecorder } from '../../src/record/window-recorder.js';
import { judgeScenario } from '../review/judged-scenario.js';

const dir = mkdtempSync(join(tmpdir(), 'shardwise-recorder-'));

async function readAll(path: string, notes: string[] = []): Promise<RecordedWindow[]> {
  const windows: RecordedWindow[] = [];
  for await (const window of readRecording(path, { onNote: (note) => notes.push(note) })) {
    windows.push(window);
  }
  return windows;
}

describe('WindowRecorder', () => {
  const judged = judgeScenario('weighted', { durationMs: 60_000 });

  it('writes one line per closed window that reads back to the same counts, verdict and shares', async () => {
    const path = join(dir, 'one.jsonl');
    const recorder = new WindowRecorder({ path, settings: judged.recorded });
    for (const { window, judgement } of judged.windows) {
      recorder.record(window, judgement, judged.universe);
      // Written through before the next window: the file already holds this line.
      expect(readFileSync(path, 'utf8').endsWith('\n')).toBe(true);
    }
    recorder.close();
    const lines = readFileSync(path, 'utf8').trim().split('\n');
    expect(lines).toHaveLength(judged.windows.length);
    const back = await readAll(path);
    expect(back).toHaveLength(judged.windows.length);
    back.forEach((window, at) => {
      expect(Array.from(window.counts)).toEqual(Array.from(judged.windows[at].window.counts));
      expect(window.judgement).toEqual(JSON.parse(JSON.stringify(judged.windows[at].judgement)));
      expect(window.shardIds).toEqual(judged.universe.ids);
      // The ring's unequal shares ride along so a review can judge the map null again.
      expect(Array.from(window.shares ?? [])).toEqual(Array.from(judged.universe.shares));
    });
    expect(JSON.parse(lines[1]).shardIds).toBeUndefined();
  });

  it('rotates to FILE.1 past the size cap, each file starting with the shard ids', async () => {
    const path = join(dir, 'rotating.jsonl');
    const lineBytes = 3000; // a line of 64 shards with shares is a little over 3 kB
    const recorder = new WindowRecorder({
      path,
      settings: judged.recorded,
      maxBytes: 2 * lineBytes,
    });
    for (const { window, judgement } of judged.windows) {
      recorder.record(window, judgement, judged.universe);
    }
    recorder.close();
    expect(recorder.rotated).toBeGreaterThan(0);
    expect(existsSync(`${path}.1`)).toBe(true);
    for (const file of [path, `${path}.1`]) {
      const first = JSON.parse(readFileSync(file, 'utf8').split('\n')[0]);
      expect(first.shardIds).toHaveLength(64);
      expect((await readAll(file)).length).toBeGreaterThan(0);
    }
    const newest = await readAll(path);
    expect(newest[newest.length - 1].start).toBe(
      judged.windows[judged.windows.length - 1].window.start,
    );
  });
});
