/// <reference lib="dom" />
/// <reference lib="dom.iterable" />
// page.evaluate callbacks run in the browser, so this file sees the DOM types.
// The HTML report in a real browser: Debian's Chromium (/usr/bin/chromium, installed by
// scripts/provision.sh), headless, driven over the DevTools protocol by puppeteer-core (no
// browser download). The report comes from a recording of the demo scenario, whose plants
// are known (src/scenario/built-in-scenarios.ts: seat-17 hot from 0:20, seat-42 failing over
// to seat-43 from 2:30), and from records with hostile shard ids.
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import puppeteer, { type Browser } from 'puppeteer-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { countReports, hostileIds, runCli } from '../review/cli-run.js';
import { decodePng } from './png-pixels.js';

const chromium = '/usr/bin/chromium';
const dir = mkdtempSync(join(tmpdir(), 'shardwise-review-browser-'));
let browser: Browser;

beforeAll(async () => {
  if (!existsSync(chromium)) {
    throw new Error(
      'The report browser test needs Debian chromium: run scripts/provision.sh (npm test does), or apt-get install chromium',
    );
  }
  browser = await puppeteer.launch({
    executablePath: chromium,
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking'],
  });
});

afterAll(async () => {
  await browser?.close();
});

/** Opens a report and collects what the page did. */
async function open(path: string) {
  const page = await browser.newPage();
  await page.setViewport({ width: 1000, height: 800 });
  const consoleErrors: string[] = [];
  const requests: string[] = [];
  const dialogs: string[] = [];
  page.on('console', (message) => {
    if (message.type() === 'error') consoleErrors.push(message.text());
  });
  page.on('pageerror', (error) => consoleErrors.push(String(error)));
  page.on('request', (request) => requests.push(request.url()));
  page.on('dialog', (dialog) => {
    dialogs.push(dialog.message());
    void dialog.dismiss();
  });
  const url = pathToFileURL(path).href;
  await page.goto(url, { waitUntil: 'load' });
  return { page, consoleErrors, requests, dialogs, url };
}

describe('the HTML report in headless Chromium', () => {
  it('shows its charts and episode table with no console error, no request, and not blank', async () => {
    const recording = join(dir, 'demo.jsonl');
    const watched = await runCli([
      'watch',
      '--scenario',
      'demo',
      '--pace',
      'fast',
      '--start',
      '2025-12-01T00:00:00Z',
      '--no-ui',
      '--no-metrics',
      '--record',
      recording,
    ]);
    expect(watched.code).toBe(0);
    const report = join(dir, 'demo.html');
    const reviewed = await runCli(['review', '--recording', recording, '--out', report]);
    expect(reviewed.code).toBe(0);

    const { page, consoleErrors, requests, url } = await open(report);
    expect(consoleErrors).toEqual([]);
    // The page itself and nothing else: no font, image, style or script was fetched.
    expect(requests).toEqual([url]);
    const facts = await page.evaluate(() => ({
      charts: [...document.querySelectorAll('figure.chart')].map((figure) => ({
        id: figure.id,
        svgs: figure.querySelectorAll('svg').length,
        marks: figure.querySelectorAll('svg path, svg rect, svg line').length,
        width: figure.querySelector('svg')?.getBoundingClientRect().width ?? 0,
      })),
      rows: [...document.querySelectorAll('#episode-table tbody tr')].map((row) =>
        [...row.querySelectorAll('td')].slice(0, 2).map((cell) => cell.textContent),
      ),
      scripts: document.querySelectorAll('script').length,
    }));
    expect(facts.charts.map((chart) => chart.id)).toEqual([
      'chart-timeline',
      'chart-heat',
      'chart-histogram',
      'chart-pvalues',
      'chart-findings',
    ]);
    for (const chart of facts.charts) {
      expect(chart.svgs).toBe(1);
      expect(chart.marks).toBeGreaterThan(20);
      expect(chart.width).toBeGreaterThan(300);
    }
    expect(facts.rows).toContainEqual(['hotspot', 'seat-17']);
    expect(facts.rows).toContainEqual(['cold (failover pattern)', 'seat-42']);
    expect(facts.rows).toContainEqual(['hotspot (failover pattern)', 'seat-43']);
    expect(facts.scripts).toBe(0);

    const png = decodePng(await page.screenshot({ fullPage: true, type: 'png' }));
    const colours = new Set<number>();
    let inked = 0;
    for (let at = 0; at < png.rgba.length; at += 4) {
      const [r, g, b] = [png.rgba[at], png.rgba[at + 1], png.rgba[at + 2]];
      colours.add((r << 16) | (g << 8) | b);
      if (r + g + b < 600) inked++;
    }
    // A blank page is one colour; text, tables and five charts give hundreds, and ink on
    // more than 2% of the page.
    expect(colours.size).toBeGreaterThan(100);
    expect(inked / (png.width * png.height)).toBeGreaterThan(0.02);
    writeFileSync(join(dir, 'demo.png'), Buffer.from(await page.screenshot({ type: 'png' })));

    // The episode table at a laptop's width and at a narrow one: no shard id, time, count,
    // load or p-value breaks across lines (the table scrolls sideways instead). A cell's
    // text on one line has one line box (Range.getClientRects, CSSOM View).
    for (const viewportWidth of [1000, 640]) {
      await page.setViewport({ width: viewportWidth, height: 800 });
      const broken = await page.evaluate(() => {
        // Columns shard, start, end, duration, flagged windows, peak load, the two request
        // counts and least p (finding and cause are words and may wrap).
        const cells = [...document.querySelectorAll('#episode-table tbody tr')].flatMap((row) =>
          [...row.querySelectorAll('td')].slice(1, 10),
        );
        return {
          cells: cells.length,
          broken: cells
            .filter((cell) => {
              const range = document.createRange();
              range.selectNodeContents(cell);
              const lines = new Set(
                [...range.getClientRects()].map((rect) => Math.round(rect.top)),
              );
              return lines.size > 1;
            })
            .map((cell) => cell.textContent),
        };
      });
      expect(broken.cells).toBeGreaterThan(20);
      expect(broken.broken).toEqual([]);
    }
    await page.close();
  });

  it('keeps hostile shard ids inert: no script runs, no element is injected', async () => {
    const input = join(dir, 'hostile.jsonl');
    writeFileSync(input, countReports(hostileIds, 12, { shard: hostileIds[0], from: 3, to: 8 }));
    const report = join(dir, 'hostile.html');
    const reviewed = await runCli(['review', '--input', input, '--out', report]);
    expect(reviewed.code).toBe(0);
    const { page, consoleErrors, requests, dialogs, url } = await open(report);
    expect(dialogs).toEqual([]);
    expect(consoleErrors).toEqual([]);
    expect(requests).toEqual([url]);
    const facts = await page.evaluate(() => ({
      scripts: document.querySelectorAll('script').length,
      images: document.querySelectorAll('img').length,
      handlers: [...document.querySelectorAll('*')].flatMap((element) =>
        [...element.attributes].map((a) => a.name).filter((name) => name.startsWith('on')),
      ),
      shardCells: [...document.querySelectorAll('#episode-table td.shard')].map(
        (cell) => cell.textContent,
      ),
      svgText: [...document.querySelectorAll('svg text')].map((text) => text.textContent),
    }));
    expect(facts).toMatchObject({ scripts: 0, images: 0, handlers: [] });
    // The ids show as the text they are.
    expect(facts.shardCells).toContain(hostileIds[0]);
    expect(facts.svgText, facts.svgText.join(' | ')).toContain(hostileIds[0]);
    await page.close();
  });
});
