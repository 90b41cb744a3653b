import { Text } from 'ink';
import { toneColors } from './tone-colors.js';
import type { SourceView } from './view-model.js';

export interface Props {
  /** The source's state and its measurements. */
  readonly source: SourceView;
}

/** One line: the source's state as symbol and word, then its rates, lag and counts. */
export function SourceLine({ source }: Props) {
  return (
    <Text wrap="truncate-end">
      <Text bold>Source </Text>
      <Text color={toneColors[source.tone]} bold>
        {`${source.symbol} ${source.state}`}
      </Text>
      {` · ${source.facts}`}
    </Text>
  );
}
