// Reads the Prometheus text exposition format (version 0.0.4, as documented by the
// Prometheus project: "Exposition formats") into samples, for assertions on what a
// scraper would see. Strict: a line it cannot read fails the test.

export interface Sample {
  readonly name: string;
  readonly labels: Readonly<Record<string, string>>;
  readonly value: number;
}

const sampleLine = /^([a-zA-Z_:][a-zA-Z0-9_:]*)(?:\{(.*)\})?\s+(\S+)(?:\s+-?\d+)?$/;
const labelPair = /([a-zA-Z_][a-zA-Z0-9_]*)="((?:[^"\\]|\\.)*)",?/gy;

export function parseExposition(text: string): Sample[] {
  const samples: Sample[] = [];
  for (const line of text.split('\n')) {
    if (line === '' || line.startsWith('#')) continue;
    const match = sampleLine.exec(line);
    if (match === null) throw new Error(`not an exposition line: ${JSON.stringify(line)}`);
    const labels: Record<string, string> = {};
    const body = match[2] ?? '';
    labelPair.lastIndex = 0;
    let consumed = 0;
    for (let pair = labelPair.exec(body); pair !== null; pair = labelPair.exec(body)) {
      labels[pair[1]] = pair[2].replace(/\\(.)/g, (_, c: string) => (c === 'n' ? '\n' : c));
      consumed = labelPair.lastIndex;
    }
    if (consumed !== body.length) throw new Error(`bad labels in ${JSON.stringify(line)}`);
    samples.push({ name: match[1], labels, value: Number(match[3]) });
  }
  return samples;
}

/** The one sample named `name` whose labels include `labels`; throws unless exactly one. */
export function sampleOf(
  samples: readonly Sample[],
  name: string,
  labels: Record<string, string> = {},
): Sample {
  const found = samplesOf(samples, name, labels);
  if (found.length !== 1) {
    throw new Error(`${found.length} samples of ${name} ${JSON.stringify(labels)}`);
  }
  return found[0];
}

export function samplesOf(
  samples: readonly Sample[],
  name: string,
  labels: Record<string, string> = {},
): Sample[] {
  return samples.filter(
    (sample) =>
      sample.name === name &&
      Object.entries(labels).every(([key, value]) => sample.labels[key] === value),
  );
}
