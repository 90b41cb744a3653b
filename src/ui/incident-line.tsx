import { Text } from 'ink';
import { toneColors } from './tone-colors.js';
import type { IncidentView } from './view-model.js';

export interface Props {
  /** Open incidents with their start, and the false-incident rate. */
  readonly incidents: IncidentView;
}

/** One line: the incidents open at the window on show, each with its symbol and start. */
export function IncidentLine({ incidents }: Props) {
  return (
    <Text wrap="truncate-end">
      <Text bold>Incidents </Text>
      {incidents.none !== null ? <Text dimColor>{incidents.none}</Text> : null}
      {incidents.items.map((item, index) => (
        <Text key={index}>
          {index > 0 ? ' · ' : ''}
          <Text color={toneColors[item.tone]} bold>
            {item.symbol}
          </Text>
          {` ${item.text}`}
        </Text>
      ))}
      {incidents.more === '' ? '' : `${incidents.items.length > 0 ? ' · ' : ''}${incidents.more}`}
      {incidents.falseRate === '' ? '' : <Text dimColor>{` · ${incidents.falseRate}`}</Text>}
    </Text>
  );
}
