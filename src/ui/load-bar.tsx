import { Text } from 'ink';
import type { LoadBar as LoadBarView } from './view-model.js';

export interface Props {
  /** The load, the chance ceiling and floor as fractions of the bar's length. */
  readonly bar: LoadBarView;
  /** Cells, the ceiling mark included. */
  readonly width: number;
}

/**
 * A shard's relative load drawn against the chance ceiling: ▒ up to the ceiling mark ┃,
 * █ beyond it, so how far a shard is past chance reads as the solid part's length, in
 * shape as well as in colour. ╎ marks the chance floor when the cold tests are on.
 */
export function LoadBar({ bar, width }: Props) {
  const cells = Math.max(2, width) - 1;
  const ceilingAt = Math.min(cells, Math.round(bar.ceiling * cells));
  const filled = Math.min(cells, Math.round(bar.load * cells));
  const floorAt = bar.floor === null ? -1 : Math.round(bar.floor * cells);
  let below = '';
  for (let cell = 0; cell < ceilingAt; cell++) {
    below += cell < filled ? '▒' : cell === floorAt ? '╎' : ' ';
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
