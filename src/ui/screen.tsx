import { Box } from 'ink';
import type { ReactNode } from 'react';
import { HeaderBar } from './header-bar.js';
import { HelpOverlay } from './help-overlay.js';
import { HistoryStrip } from './history-strip.js';
import { IncidentLine } from './incident-line.js';
import { KeyLine } from './key-line.js';
import { ShardTable } from './shard-table.js';
import { SourceLine } from './source-line.js';
import { SpreadChart } from './spread-chart.js';
import { VerdictPanel } from './verdict-panel.js';
import type { ScreenModel } from './view-model.js';

export interface Props {
  /** One ready frame: layout, verdict, panels, keys. */
  readonly model: ScreenModel;
}

/**
 * The whole screen, top to bottom in the order an operator asks: what is the verdict,
 * which shards, how is the load spread, since when, is the source alive, which keys. Wide
 * terminals put the shard table beside the spread chart; the help takes the panels' place.
 * Only the panels between the verdict and the history give way on a terminal too short for
 * everything: they are cut from the bottom. Every other part keeps its lines (flexShrink 0),
 * since Yoga would otherwise squeeze lines to no height and Ink draw them over their
 * neighbours.
 */
export function Screen({ model }: Props) {
  const { layout } = model;
  const width = layout.columns;
  const shards = (
    <ShardTable
      table={model.shards}
      width={layout.shardPanelWidth}
      rows={layout.shardRows}
      idWidth={layout.shardIdWidth}
      barWidth={layout.barWidth}
    />
  );
  const spread = (
    <SpreadChart
      spread={model.spread}
      width={layout.spreadPanelWidth}
      height={layout.chartHeight}
    />
  );
  const fixed = (part: ReactNode) => <Box flexShrink={0}>{part}</Box>;
  return (
    <Box flexDirection="column" width={width} height={layout.lines} overflow="hidden">
      {fixed(<HeaderBar header={model.header} width={width} />)}
      {model.help !== null ? (
        <HelpOverlay help={model.help} width={width} height={layout.lines - 2} />
      ) : (
        <>
          {fixed(
            <VerdictPanel
              verdict={model.verdict}
              width={width}
              evidenceLines={layout.evidenceLines}
            />,
          )}
          {layout.sideBySide ? (
            <Box flexDirection="row" width={width} flexGrow={1} overflow="hidden">
              {fixed(shards)}
              <Box marginLeft={1} flexShrink={0}>
                {spread}
              </Box>
            </Box>
          ) : (
            <Box flexDirection="column" width={width} flexGrow={1} overflow="hidden">
              {fixed(shards)}
              {fixed(spread)}
            </Box>
          )}
          {fixed(
            <HistoryStrip
              history={model.history}
              width={width}
              labelWidth={layout.historyLabelWidth}
            />,
          )}
          {fixed(<IncidentLine incidents={model.incidents} />)}
          {fixed(<SourceLine source={model.source} />)}
        </>
      )}
      <Box flexGrow={model.help !== null ? 1 : 0} />
      {fixed(<KeyLine keys={model.keys} />)}
    </Box>
  );
}
