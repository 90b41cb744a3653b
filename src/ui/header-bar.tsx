import { Box, Text } from 'ink';
import { toneColors } from './tone-colors.js';
import type { HeaderView } from './view-model.js';

export interface Props {
  /** Title, run facts, live/paused state and the window on show, fitted to the width. */
  readonly header: HeaderView;
  /** Cells across. */
  readonly width: number;
}

/** The top line: what is being watched on the left, whether the view is live on the right. */
export function HeaderBar({ header, width }: Props) {
  return (
    <Box width={width} height={1}>
      <Box flexGrow={1} flexShrink={1}>
        <Text wrap="truncate-end">
          {header.title === '' ? null : <Text bold>{`${header.title} · `}</Text>}
          {header.facts}
        </Text>
      </Box>
      <Box flexShrink={0} marginLeft={1}>
        <Text wrap="truncate-end">
          <Text bold color={toneColors[header.modeTone]}>
            {header.mode}
          </Text>
          {` · ${header.position}`}
        </Text>
      </Box>
    </Box>
  );
}
