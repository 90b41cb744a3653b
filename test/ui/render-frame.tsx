// Frames through ink-testing-library. Its virtual terminal is fixed at 100 columns; Ink
// reads stdout.columns on every render, so a wider terminal is had by shadowing that getter
// on the instance and rendering again.
import { render } from 'ink-testing-library';
import type { ReactElement } from 'react';

export function renderAt(tree: ReactElement, columns: number): ReturnType<typeof render> {
  const instance = render(tree);
  if (columns !== 100) {
    Object.defineProperty(instance.stdout, 'columns', { get: () => columns });
    instance.rerender(tree);
  }
  return instance;
}
