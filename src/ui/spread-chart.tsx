import { Box, Text } from 'ink';
import { toneColors } from './tone-colors.js';
import { cellsPerBin, type SpreadView } from './view-model.js';

export interface Props {
  /** The bins as fractions of the chart height, the axis line and the titles. */
  readonly spread: SpreadView;
  /** Cells across. */
  readonly width: number;
  /** Rows of bars. */
  readonly height: number;
}

/** Eighths of a cell, bottom up, for the shards seen. */
const solid = [' ', '▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];
/** Quarters of a cell in braille dots, for the prediction: dotted, so it differs in shape. */
const dotted = [' ', '⣀', '⣤', '⣶', '⣿'];

/**
 * The histogram of shard loads with the prediction beside each bin: per bin a solid column
 * (shards seen), a dotted one (random placement's expectation) and a gap. A bin with any
 * shard in it shows at least a sliver, so a lone hotspot in the edge bin is never lost.
 */
export function SpreadChart({ spread, width, height }: Props) {
  if (spread.empty !== null) {
    return (
      <Box flexDirection="column" width={width} height={height + 2}>
        <Text wrap="truncate-end" bold>
          {spread.title}
        </Text>
        <Text dimColor>{spread.empty}</Text>
      </Box>
    );
  }
  const rows = Array.from({ length: height }, (_, fromTop) => {
    const level = height - 1 - fromTop;
    return spread.bins.map((bin, index) => {
      let seen = Math.max(0, Math.min(8, Math.round(bin.observed * height * 8) - level * 8));
      if (level === 0 && bin.observed > 0 && seen === 0) seen = 1;
      const predicted = Math.max(0, Math.min(4, Math.round(bin.expected * height * 4) - level * 4));
      return (
        <Text key={index}>
          <Text color={toneColors[bin.tone]}>{solid[seen]}</Text>
          <Text dimColor>{dotted[predicted]}</Text>
          {' '.repeat(cellsPerBin - 2)}
        </Text>
      );
    });
  });
  return (
    <Box flexDirection="column" width={width} height={height + 2}>
      <Text wrap="truncate-end">
        <Text bold>{spread.title}</Text>
        {` · ${spread.legend}`}
      </Text>
      {rows.map((cells, index) => (
        <Text key={index} wrap="truncate-end">
          {cells}
        </Text>
      ))}
      <Text wrap="truncate-end" dimColor>
        {spread.axis}
      </Text>
    </Box>
  );
}
