import { Text } from 'ink';
import type { LoadBar as LoadBarView } from './view-model.js';

export interface Props {
  /** The load, the chance ceiling and floor as fractions of the bar's length. */
  readonly bar: LoadBarView;
  /** Cells, the marks included. */
  readonly width: number;
}

/**
 * A shard's relative load drawn against the chance band, on the scale the table's heading
 * labels: ▒ up to the ceiling mark ┃, █ beyond it, so how far a shard is past chance reads as
 * the solid part's length, in shape as well as in colour. ╎ marks the chance floor when the
 * cold tests are on. The scale starts near the floor, not at zero, so loads within chance
 * differ in length.
 */
export function LoadBar({ bar, width }: Props) {
  const last = Math.max(2, width) - 1;
  const cellOf = (fraction: number) => Math.max(0, Math.min(last, Math.round(fraction * last)));
  const ceilingAt = cellOf(bar.ceiling);
  const filled = cellOf(bar.load);
  const floorAt = bar.floor === null ? -1 : cellOf(bar.floor);
  let below = '';
  for (let cell = 0; cell < ceilingAt; cell++) {
    below += cell <= filled ? '▒' : cell === floorAt ? '╎' : ' ';
  }
  const past = filled > ceilingAt ? '█'.repeat(filled - ceilingAt) : '';
  return (
    <Text>
      <Text dimColor>{below}</Text>
      <Text bold>┃</Text>
      <Text color="red">{past}</Text>
    </Text>
  );
}
