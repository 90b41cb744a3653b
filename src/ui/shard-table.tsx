import { Box, Text } from 'ink';
import { LoadBar } from './load-bar.js';
import { padWidth } from './terminal-text.js';
import { toneColors } from './tone-colors.js';
import { shardColumns, type ShardTableView } from './view-model.js';

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
  const { load, fair, relative, p, streak } = shardColumns;
  return (
    <Box flexDirection="column" width={width} height={rows + 2}>
      <Text wrap="truncate-end" bold>
        {table.title}
      </Text>
      <Text wrap="truncate-end" dimColor>
        {table.heading}
      </Text>
      {table.empty !== null ? (
        <Text dimColor>{table.empty}</Text>
      ) : (
        table.rows.slice(0, rows).map((row) => (
          <Text key={row.shard} wrap="truncate-end">
            <Text color={toneColors[row.tone]} bold={row.tone !== 'plain'}>
              {row.mark + padWidth(row.shard, idWidth + 1)}
            </Text>
            {padWidth(row.load, load, 'right') +
              padWidth(row.fair, fair, 'right') +
              padWidth(row.relative, relative, 'right') +
              padWidth(row.p, p, 'right') +
              ' ' +
              padWidth(row.streak, streak) +
              ' '}
            <LoadBar bar={row.bar} width={barWidth} />
          </Text>
        ))
      )}
    </Box>
  );
}
