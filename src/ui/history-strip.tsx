import { Box, Text } from 'ink';
import { toneColors } from './tone-colors.js';
import type { HistoryView } from './view-model.js';

export interface Props {
  /** One slot per kept window, oldest first. */
  readonly history: HistoryView;
  /** Cells across. */
  readonly width: number;
  /** Cells of the label column. */
  readonly labelWidth: number;
}

const eighths = [' ', '▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];

/**
 * Recent windows, one column each: the fullest shard against the chance ceiling in two
 * rows (the line between them is the ceiling, so a bar reaching the upper row was past
 * chance), then each window's finding symbol. The window on show is drawn inverse; the
 * header names it in words (`window 12 of 40`).
 */
export function HistoryStrip({ history, width, labelWidth }: Props) {
  const slots = history.slots;
  const top = slots.map((slot) => eighths[Math.max(0, Math.round(slot.level * 16) - 8)]);
  const bottom = slots.map((slot) => eighths[Math.min(8, Math.round(slot.level * 16))]);
  const pad = (text: string) => text.padEnd(labelWidth).slice(0, labelWidth);
  return (
    <Box flexDirection="column" width={width} height={4}>
      <Text wrap="truncate-end">
        <Text bold>History</Text>
        {` · ${history.span}`}
      </Text>
      <Text wrap="truncate-end">
        <Text dimColor>{pad('past ceil')}</Text>
        {slots.map((slot, index) => (
          <Text key={index} color="red">
            {top[index]}
          </Text>
        ))}
      </Text>
      <Text wrap="truncate-end">
        <Text dimColor>{pad('within')}</Text>
        {bottom.join('')}
      </Text>
      <Text wrap="truncate-end">
        <Text dimColor>{pad('finding')}</Text>
        {slots.map((slot, index) => (
          <Text
            key={index}
            color={toneColors[slot.tone]}
            underline={slot.selected}
            inverse={slot.selected}
          >
            {slot.symbol}
          </Text>
        ))}
      </Text>
    </Box>
  );
}
