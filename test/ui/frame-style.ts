// SGR codes of a frame made readable, so a test can state a whole frame, style included, as
// one literal string. Codes and meanings per ECMA-48 (select graphic rendition), the set
// chalk writes at level 1: intensity, underline and inverse each end with their own reset,
// colours with 39.

const names: Readonly<Record<string, string>> = {
  '1': '{bold}',
  '2': '{dim}',
  '22': '{/intensity}',
  '4': '{underline}',
  '24': '{/underline}',
  '7': '{inverse}',
  '27': '{/inverse}',
  '31': '{red}',
  '32': '{green}',
  '33': '{yellow}',
  '34': '{blue}',
  '35': '{magenta}',
  '36': '{cyan}',
  '90': '{gray}',
  '39': '{/colour}',
};

const sgr = /\u001b\[([0-9;]*)m/g;

/** The frame with each SGR code as a named tag; a code not in the table fails the test. */
export function styled(frame: string | undefined): string {
  return (frame ?? '').replace(sgr, (_, code: string) => {
    const name = names[code];
    if (name === undefined) throw new Error(`unexpected SGR code ${code} in ${frame}`);
    return name;
  });
}

/** The frame's text alone. */
export function plain(frame: string | undefined): string {
  return (frame ?? '').replace(sgr, '');
}
