import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PassThrough } from 'node:stream';
import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';

async function run(args: string[]): Promise<{ code: number; out: string; err: string }> {
  const stdout = new PassThrough();
  const stderr = new PassThrough();
  let out = '';
  let err = '';
  stdout.on('data', (d) => (out += d));
  stderr.on('data', (d) => (err += d));
  const code = await main(args, { stdout, stderr, stdin: new PassThrough(), env: {} });
  return { code, out, err };
}

describe('shardwise odds', () => {
  it('prints the docs/formats.md JSON shape; birthday problem 0.5072972343239857 (published)', async () => {
    const { code, out } = await run([
      'odds',
      '--shards',
      '365',
      '--requests',
      '23',
      '--max-at-least',
      '2',
      '--json',
    ]);
    expect(code).toBe(0);
    const result = JSON.parse(out);
    expect(Object.keys(result)).toEqual([
      'shards',
      'requests',
      'null',
      'max',
      'min',
      'empty',
      'answers',
    ]);
    expect(result.null).toBe('uniform');
    expect(Object.keys(result.max.quantiles)).toEqual(['0.5', '0.9', '0.99', '0.999']);
    expect(Object.keys(result.min.quantiles)).toEqual(['0.001', '0.01', '0.1', '0.5']);
    expect(result.answers).toHaveLength(1);
    expect(result.answers[0].query).toBe('max>=2');
    expect(result.answers[0].probability).toBeCloseTo(0.5072972343239857, 12);
    // E[empty] = 365 (364/365)^23 (classical occupancy mean)
    expect(result.empty.mean).toBeCloseTo(365 * (364 / 365) ** 23, 9);
  });

  it('answers repeated queries in the order given', async () => {
    const { out } = await run([
      'odds',
      '--shards',
      '365',
      '--requests',
      '88',
      '--max-at-least',
      '3',
      '--empty-at-least',
      '300',
      '--max-at-least=2',
      '--min-at-most',
      '0',
      '--json',
    ]);
    const queries = JSON.parse(out).answers.map((a: { query: string }) => a.query);
    expect(queries).toEqual(['max>=3', 'empty>=300', 'max>=2', 'min<=0']);
    // OEIS A014088: 88 people give a better-than-even chance that 3 share a birthday
    expect(JSON.parse(out).answers[0].probability).toBeGreaterThan(0.5);
  });

  it('takes unequal shares from a shard map and answers in relative load', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'shardwise-odds-'));
    const map = join(dir, 'map.csv');
    writeFileSync(map, 'shard,weight\na,1\nb,1\nc,2\n');
    const { code, out } = await run([
      'odds',
      '--shard-map',
      map,
      '--requests',
      '4',
      '--max-at-least',
      '2',
      '--json',
    ]);
    expect(code).toBe(0);
    const result = JSON.parse(out);
    expect(result.null).toBe('map');
    // Worked by hand: shares 1/4, 1/4, 1/2 and N = 4; "relative load >= 2" means a >= 2 or b >= 2
    // or c >= 4. P(a <= 1, b <= 1, c <= 3) = sum over (a, b) in {0,1}^2 of 4!/(a! b! c!) (1/4)^(a+b) (1/2)^c
    // with c = 4 - a - b: (0,0) c=4 excluded; (1,0),(0,1): 4 * 1/4 * 1/8 = 1/8 each; (1,1): 12 * 1/16 * 1/4 = 3/16.
    // So P(max r >= 2) = 1 - (1/8 + 1/8 + 3/16) = 9/16.
    expect(result.answers[0].probability).toBeCloseTo(9 / 16, 12);
  });

  it('with a shard map names the range of expected loads, not one fair share, and one precision', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'shardwise-odds-'));
    const map = join(dir, 'map.csv');
    writeFileSync(map, 'shard,weight\na,1\nb,2\nc,1.5\nd,0.5\n');
    const { code, out } = await run(['odds', '--shard-map', map, '--requests', '10000']);
    expect(code).toBe(0);
    // Shares 1/5, 2/5, 3/10, 1/10 of 10 000 (worked by hand): expected loads 1000 to 4000.
    expect(out.split('\n')[0]).toContain('expected loads N p from 1000 to 4000 requests');
    expect(out).not.toContain('fair share');
    const loads = out
      .split('\n')
      .filter((line) => /quantile|mean/.test(line) && !line.startsWith('empty'))
      .map((line) => line.trim().split(/\s+/).pop() ?? '');
    expect(loads.length).toBe(10);
    for (const value of loads) expect(value).toMatch(/^\d\.\d{4}$/);
  });

  it('prints a readable table without --json', async () => {
    const { code, out } = await run([
      'odds',
      '--shards',
      '365',
      '--requests',
      '23',
      '--max-at-least',
      '2',
    ]);
    expect(code).toBe(0);
    expect(out).toContain('fullest shard (requests)');
    expect(out).toContain('P(max>=2) = 0.5072972343');
  });

  for (const [args, fragment] of [
    [['odds', '--shards', '0', '--requests', '5'], '--shards: "0" must be at least 1'],
    [['odds', '--shards', '-3', '--requests', '5'], '--shards: "-3" is not a whole number'],
    [['odds', '--shards', '2.5', '--requests', '5'], '--shards: "2.5" is not a whole number'],
    [['odds', '--shards', '10', '--requests', '1e20'], '--requests: "1e20" is beyond 2^53 - 1'],
    [['odds', '--shards', '10', '--requests', '9007199254740993'], 'beyond 2^53 - 1'],
    [['odds', '--shards', '10'], '--requests'],
    [['odds', '--shards', '10', '--requests', '5', '--colour'], '--colour'],
    [['odds', '--shards', '10', '--requests', '5', '--max-at-least', 'x'], '--max-at-least: "x"'],
  ] as const) {
    it(`exits 2 with one line naming the option: ${args.slice(1).join(' ')}`, async () => {
      const { code, err } = await run([...args]);
      expect(code).toBe(2);
      expect(err).toContain(fragment);
      expect(err.trim().split('\n')).toHaveLength(1);
    });
  }

  for (const [content, fragment] of [
    ['shard,weight\na,0\nb,1\n', 'weight'],
    ['shard,weight\na,-1\nb,1\n', 'weight'],
    ['shard,weight\na,NaN\nb,1\n', 'NaN'],
    ['{}', 'map.json'],
  ] as const) {
    it(`rejects a bad shard map with exit 2: ${JSON.stringify(content)}`, async () => {
      const dir = mkdtempSync(join(tmpdir(), 'shardwise-odds-'));
      const file = join(dir, content.startsWith('{') ? 'map.json' : 'map.csv');
      writeFileSync(file, content);
      const { code, err } = await run(['odds', '--shard-map', file, '--requests', '5']);
      expect(code).toBe(2);
      expect(err).toContain(fragment);
    });
  }
});

describe('shardwise plan', () => {
  it('reports the chance ceiling, headroom and the day-level risk', async () => {
    const { code, out } = await run([
      'plan',
      '--rate',
      '10000',
      '--window',
      '10s',
      '--capacity',
      '1700',
      '--shards',
      '64',
      '--json',
    ]);
    expect(code).toBe(0);
    const result = JSON.parse(out);
    const row = result.rows[0];
    expect(row.requestsPerWindow).toBe(100000);
    expect(row.fairShare).toBeCloseTo(1562.5, 9);
    expect(row.headroom).toBeGreaterThan(1);
    // The per-day figure is 1 - (1 - p)^8640 for 10 s windows (definition).
    expect(row.exceedPerDay).toBeCloseTo(-Math.expm1(8640 * Math.log1p(-row.exceedPerWindow)), 12);
    expect(result.smallestShardsMeetingTarget).toBeGreaterThan(0);
  });

  it('says a chance below the 1e-300 floor is a bound, not 1e-300 times the windows in a day', async () => {
    // 10 000 requests/s on 64 shards with 400/s capacity: 4000 per 10 s window against a
    // fair share of 1562.5 (about 62 standard deviations): far below 1e-300 (definition of
    // the floor in docs/formats.md).
    const args = ['plan', '--rate', '10000', '--capacity', '400', '--shards', '64'];
    const table = await run(args);
    expect(table.code).toBe(0);
    expect(table.out).not.toMatch(/\d\.\d+e-29\d/);
    const row = table.out.split('\n').find((line) => line.trimStart().startsWith('64 '));
    expect(row).toMatch(/< 1e-300 +< 1e-296/);
    const json = JSON.parse((await run([...args, '--json'])).out);
    expect(json.rows[0].exceedIsBound).toBe(true);
    expect(json.rows[0].exceedPerWindow).toBe(1e-300);
  });

  it('two-choice what-if is seeded and lowers the fullest shard (Azar et al. 1999, balanced allocations)', async () => {
    const args = [
      'plan',
      '--rate',
      '100',
      '--window',
      '10s',
      '--capacity',
      '1000',
      '--shards',
      '1000',
      '--two-choice',
      '--simulations',
      '20',
      '--json',
    ];
    const a = JSON.parse((await run(args)).out);
    const b = JSON.parse((await run(args)).out);
    expect(a.rows[0].twoChoice).toEqual(b.rows[0].twoChoice);
    expect(a.rows[0].twoChoice.meanMaximum).toBeLessThan(a.rows[0].ceiling);
  });

  it('exits 2 naming the option for a bad window', async () => {
    const { code, err } = await run([
      'plan',
      '--rate',
      '100',
      '--window',
      'ten',
      '--capacity',
      '5',
      '--shards',
      '8',
    ]);
    expect(code).toBe(2);
    expect(err).toContain('--window: "ten"');
  });
});
