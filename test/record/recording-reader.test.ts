import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import {
  readRecording,
  RecordingFormatError,
  type RecordedWindow,
} from '../../src/record/recording-reader.js';
import { WindowRecorder } from '../../src/record/window-recorder.js';
import { judgeScenario } from '../review/judged-scenario.js';

const dir = mkdtempSync(join(tmpdir(), 'shardwise-reader-'));
const judged = judgeScenario('hotspot', { durationMs: 50_000 });

function record(path: string): string {
  const recorder = new WindowRecorder({ path, settings: judged.recorded });
  for (const { window, judgement } of judged.windows)
    recorder.record(window, judgement, judged.universe);
  recorder.close();
  return readFileSync(path, 'utf8');
}

async function readAll(path: string): Promise<{ windows: RecordedWindow[]; notes: string[] }> {
  const notes: string[] = [];
  const windows: RecordedWindow[] = [];
  for await (const window of readRecording(path, { onNote: (note) => notes.push(note) })) {
    windows.push(window);
  }
  return { windows, notes };
}

describe('readRecording', () => {
  it('skips a torn last line, as a run killed mid-write leaves it, with a note', async () => {
    const path = join(dir, 'torn.jsonl');
    const text = record(path);
    const lines = text.trim().split('\n');
    // Cut the last line halfway, without its end of line.
    const torn = lines.slice(0, -1).join('\n') + '\n' + lines[lines.length - 1].slice(0, 700);
    writeFileSync(path, torn);
    const { windows, notes } = await readAll(path);
    expect(windows).toHaveLength(lines.length - 1);
    expect(notes).toEqual([
      `line ${lines.length} of ${path} is torn (700 bytes without an end of line, as a run stopped mid-write leaves it); skipped`,
    ]);
  });

  it('reads a complete last line that lacks only its end of line', async () => {
    const path = join(dir, 'unterminated.jsonl');
    writeFileSync(path, record(path).trimEnd());
    const { windows, notes } = await readAll(path);
    expect(windows).toHaveLength(judged.windows.length);
    expect(notes).toEqual([]);
  });

  it('skips damaged lines inside the file with a note naming them', async () => {
    const path = join(dir, 'damaged.jsonl');
    const lines = record(path).trim().split('\n');
    lines[2] = lines[2].slice(0, 100);
    writeFileSync(path, lines.join('\n') + '\n');
    const { windows, notes } = await readAll(path);
    expect(windows).toHaveLength(lines.length - 1);
    expect(notes).toEqual([
      `1 line of ${path} is not a recording line and was skipped (line 3 (not JSON))`,
    ]);
  });

  it('refuses a file that holds no recording line (a record file given by mistake)', async () => {
    const path = join(dir, 'records.jsonl');
    writeFileSync(path, '{"ts":1764547200000,"shard":"a","count":5}\n');
    await expect(readAll(path)).rejects.toThrow(RecordingFormatError);
  });
});
