import { Box, Text } from 'ink';
import { padWidth } from './terminal-text.js';
import type { HelpView } from './view-model.js';

export interface Props {
  /** The keys and what each panel means. */
  readonly help: HelpView;
  /** Cells across. */
  readonly width: number;
  /** Lines it may take: it replaces everything between the header and the key line. */
  readonly height: number;
}

/**
 * The help: keys first, then one paragraph per panel, wrapped to the width. On a terminal
 * shorter than the help it is cut at the bottom: no line shrinks, since Yoga would squeeze
 * lines to no height and Ink would draw them over their neighbours.
 */
export function HelpOverlay({ help, width, height }: Props) {
  const keyWidth = Math.max(...help.keys.map((hint) => hint.key.length)) + 2;
  return (
    <Box flexDirection="column" width={width} height={height} overflow="hidden">
      <Box flexShrink={0}>
        <Text bold>{help.title}</Text>
      </Box>
      {help.keys.map((hint) => (
        <Box key={hint.key} flexShrink={0}>
          <Text wrap="wrap">
            <Text bold>{padWidth(hint.key, keyWidth)}</Text>
            {hint.action}
          </Text>
        </Box>
      ))}
      {help.panels.map((panel) => (
        <Box key={panel.name} flexShrink={0}>
          <Text wrap="wrap">
            <Text bold>{`${panel.name}: `}</Text>
            {panel.text}
          </Text>
        </Box>
      ))}
    </Box>
  );
}
