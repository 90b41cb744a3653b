import { useInput } from 'ink';
import { useSyncExternalStore } from 'react';
import { commandForKey } from './key-bindings.js';
import type { ScreenCommand } from './screen-controller.js';
import { Screen } from './screen.js';
import type { ScreenModel } from './view-model.js';

/** Where frames come from and where keys go (a ScreenController fits). */
export interface ScreenFeed {
  readonly subscribe: (listener: () => void) => () => void;
  readonly getSnapshot: () => ScreenModel;
  command(command: ScreenCommand): void;
}

export interface Props {
  /** The frames to draw, published at a bounded rate, and the receiver of the keys. */
  readonly feed: ScreenFeed;
}

/**
 * The screen connected to its controller: draws each published frame, turns keys into
 * commands. Holds no state of its own, so a frame is exactly what the controller built.
 */
export function LiveScreen({ feed }: Props) {
  const model = useSyncExternalStore(feed.subscribe, feed.getSnapshot);
  useInput((input, key) => {
    const command = commandForKey(input, key);
    if (command !== null) feed.command(command);
  });
  return <Screen model={model} />;
}
