import { Box, Text } from 'ink';
import { toneColors } from './tone-colors.js';
import type { VerdictView } from './view-model.js';

export interface Props {
  /** The verdict on the window on show. */
  readonly verdict: VerdictView;
  /** Cells across. */
  readonly width: number;
  /** Lines for the evidence sentences (each sentence takes one, cut at the edge). */
  readonly evidenceLines: number;
}

/**
 * The verdict in words, first and boldest: the symbol and finding, the window, one line of
 * evidence per side, then the null model and the reminder that this is evidence.
 */
export function VerdictPanel({ verdict, width, evidenceLines }: Props) {
  const color = toneColors[verdict.tone];
  const lines = verdict.evidence.slice(0, evidenceLines);
  return (
    <Box flexDirection="column" width={width} height={2 + evidenceLines}>
      <Box height={1}>
        <Box flexGrow={1} flexShrink={1}>
          <Text wrap="truncate-end" bold color={color}>
            {`${verdict.symbol} ${verdict.headline}`}
          </Text>
        </Box>
        {verdict.windowText === '' ? null : (
          <Box flexShrink={0} marginLeft={1}>
            <Text>{verdict.windowText}</Text>
          </Box>
        )}
      </Box>
      {Array.from({ length: evidenceLines }, (_, index) => (
        <Text key={index} wrap="truncate-end">
          {lines[index] ?? ' '}
        </Text>
      ))}
      <Text wrap="truncate-end" dimColor>
        {verdict.model}
      </Text>
    </Box>
  );
}
