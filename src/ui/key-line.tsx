import { Text } from 'ink';
import { keyLineLabel, type KeyHint } from './view-model.js';

export interface Props {
  /** The keys and what they do, already fitted to the line. */
  readonly keys: readonly KeyHint[];
}

/** The bottom line: the keys the screen answers to, each key bold beside its action in plain words. */
export function KeyLine({ keys }: Props) {
  return (
    <Text wrap="truncate-end">
      <Text dimColor>{keyLineLabel}</Text>
      {keys.map((hint, index) => (
        <Text key={hint.key}>
          {index > 0 ? '   ' : ''}
          <Text bold color="cyan">
            {hint.key}
          </Text>
          {` ${hint.action}`}
        </Text>
      ))}
    </Text>
  );
}
