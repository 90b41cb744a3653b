// Ink colours through chalk, which reads FORCE_COLOR once, when it loads. A test file that
// imports this module before anything that loads Ink gets frames with 16-colour SGR codes
// (level 1), so it can check the colour and weight a tone or a mark gives, not only the text.
// The variable is put back after the file, so no later file in the same worker inherits it.
import { afterAll } from 'vitest';

const before = process.env.FORCE_COLOR;
process.env.FORCE_COLOR = '1';

afterAll(() => {
  if (before === undefined) delete process.env.FORCE_COLOR;
  else process.env.FORCE_COLOR = before;
});
