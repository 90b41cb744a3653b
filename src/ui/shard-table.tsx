import { Box, Text } from 'ink';
import { LoadBar } from './load-bar.js';
import { padWidth } from './terminal-text.js';
import { toneColors } from './tone-colors.js';
import type { ShardTableView } from './view-model.js';

export interface Props {
  /** The rows, already chosen, ordered and worded. */
  readonly table: ShardTableView;
  /** Cells across. */
  readonly width: number;
  /** Rows drawn (the panel keeps its height when fewer rows exist). */
  readonly rows: number;
  /** Cells of the shard id column. */
  readonly idWidth: number;
  /** Cells of each row's load bar. */
  readonly barWidth: number;
}

/** The shards that matter, one per row, with their numbers and a bar against the ceiling. */
export function ShardTable({ table, width, rows, idWidth, barWidth }: Props) {
  const heading =
    ' ' +
    padWidth('shard', idWidth + 1) +
    padWidth('load', 7, 'right') +
    padWidth('fair', 8, 'right') +
    padWidth('rel', 7, 'right') +
    padWidth('adj p', 10, 'right') +
    ' ' +
    padWidth('streak', 7) +
    'vs chance ceiling ┃';
  return (
    <Box flexDirection="column" width={width} height={rows + 2}>
      <Text wrap="truncate-end" bold>
        {table.title}
      </Text>
      <Text wrap="truncate-end" dimColor>
        {heading}
      </Text>
      {table.empty !== null ? (
        <Text dimColor>{table.empty}</Text>
      ) : (
        table.rows.slice(0, rows).map((row) => (
          <Text key={row.shard} wrap="truncate-end">
            <Text color={toneColors[row.tone]} bold={row.tone !== 'plain'}>
              {row.mark + padWidth(row.shard, idWidth + 1)}
            </Text>
            {padWidth(row.load, 7, 'right') +
              padWidth(row.fair, 8, 'right') +
              padWidth(row.relative, 7, 'right') +
              padWidth(row.p, 10, 'right') +
              ' ' +
              padWidth(row.streak, 7)}
            <LoadBar bar={row.bar} width={barWidth} />
          </Text>
        ))
      )}
    </Box>
  );
}
