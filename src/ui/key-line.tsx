import { Text } from 'ink';
import type { KeyHint } from './view-model.js';

export interface Props {
  /** The keys and what they do. */
  readonly keys: readonly KeyHint[];
}

/** The bottom line: every key the screen answers to. */
export function KeyLine({ keys }: Props) {
  return (
    <Text wrap="truncate-end">
      {keys.map((hint, index) => (
        <Text key={hint.key}>
          {index > 0 ? '  ' : ''}
          <Text bold inverse>{` ${hint.key} `}</Text>
          {` ${hint.action}`}
        </Text>
      ))}
    </Text>
  );
}
