import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import { ResultsLog } from '../../src/eval/log.ts';
import { computeMetrics, computeTaxonomy, type Metrics } from '../../src/eval/metrics.ts';
import { writeReport } from '../../src/eval/report.ts';
import { runEvaluation, type EvalRow } from '../../src/eval/run.ts';
import { jsonScorer, makeItems, replayDecoder } from './fixtures/json-scorer.ts';
import { BROWSER_TESTS, CHROMIUM } from '../browser.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-report-'));
const artifacts = resolve('test-artifacts');
let context: BrowserContext;
let page: Page;
let metrics: Metrics;
const requests: string[] = [];
const pageErrors: string[] = [];

beforeAll(async () => {
  if (!BROWSER_TESTS) return;
  const log = new ResultsLog<EvalRow>(join(dir, 'results.jsonl'));
  await runEvaluation({ items: [...makeItems(30, 'test'), ...makeItems(15, 'compositional')], decode: replayDecoder(), scorer: jsonScorer, log });
  log.close();
  metrics = computeMetrics(log.rows);
  writeFileSync(join(dir, 'metrics.json'), JSON.stringify(metrics, null, 2));
  writeReport(join(dir, 'report.html'), {
    meta: { model: 'replay fixture', grammar: 'json trees', data: 'synthetic' },
    metrics,
    taxonomy: computeTaxonomy(log.rows),
    rows: log.rows,
  });
  context = await chromium.launchPersistentContext(join(dir, 'profile'), {
    executablePath: CHROMIUM,
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    viewport: { width: 1200, height: 900 },
  });
  page = await context.newPage();
  page.on('request', (r) => requests.push(r.url()));
  page.on('pageerror', (e) => pageErrors.push(e.message));
  await page.goto(pathToFileURL(join(dir, 'report.html')).href);
  await page.waitForSelector('body[data-charts="4"]', { timeout: 15000 });
}, 60000);

afterAll(async () => {
  await context?.close();
  rmSync(dir, { recursive: true, force: true });
});

function at(obj: unknown, path: string): unknown {
  return path.split('.').reduce<unknown>((o, k) => (o as Record<string, unknown>)[k], obj);
}

describe.skipIf(!BROWSER_TESTS)('report.html in headless Chromium', () => {
  it('loads without network or script errors', () => {
    expect(pageErrors).toEqual([]);
    expect(requests.every((u) => u.startsWith('file://'))).toBe(true);
    expect(requests.length).toBe(1);
  });

  it('draws every chart onto a non-blank canvas', async () => {
    const canvases = await page.$$eval('canvas[data-chart]', (els) =>
      (els as HTMLCanvasElement[]).map((c) => {
        const ctx = c.getContext('2d')!;
        const img = ctx.getImageData(0, 0, c.width, c.height).data;
        let painted = 0;
        const colours = new Set<number>();
        for (let i = 0; i < img.length; i += 4) {
          if (img[i + 3] > 0) {
            painted++;
            colours.add((img[i] << 16) | (img[i + 1] << 8) | img[i + 2]);
          }
        }
        return { id: c.id, w: c.width, h: c.height, painted, colours: colours.size };
      }),
    );
    expect(canvases.map((c) => c.id)).toEqual(['chart-rates-test', 'chart-rates-compositional', 'chart-latency', 'chart-taxonomy']);
    for (const c of canvases) {
      expect(c.w * c.h, c.id).toBeGreaterThan(10000);
      expect(c.painted / (c.w * c.h), c.id).toBeGreaterThan(0.02);
      expect(c.colours, c.id).toBeGreaterThan(3);
    }
    // the rate charts hold one bar per metric and mode, with the interval from metrics.json
    const bars = await page.evaluate(() => {
      const ch = (window as unknown as { twCharts: { data: { datasets: { data: { y: number; yMin: number; yMax: number }[] }[] } }[] }).twCharts[0];
      return ch.data.datasets.map((d) => d.data);
    });
    expect(bars[1][0].y).toBeCloseTo(100 * metrics.test.constrained.valid.rate!, 9);
    expect(bars[0][4].yMin).toBeCloseTo(100 * metrics.test.unconstrained.execution_accuracy.ci_low!, 9);
  });

  it('shows the same numbers as metrics.json', async () => {
    const cells = await page.$$eval('[data-key]', (els) => els.map((e) => [e.getAttribute('data-key')!, e.textContent!.trim()] as const));
    const fromFile = JSON.parse(readFileSync(join(dir, 'metrics.json'), 'utf8'));
    // per split: 2 modes × (5 measures × 4 numbers + 2 latencies) + 5 p-values + per measure a
    // difference, its count of differing items and, when some differ, its two bounds
    const withInterval = (s: string) => Object.values(fromFile[s].difference).filter((d) => (d as { ci_low: number | null }).ci_low !== null).length;
    expect(withInterval('test')).toBeGreaterThan(0);
    expect(cells.length).toBe(['test', 'compositional'].reduce((sum, s) => sum + 2 * (5 * 4 + 2) + 5 + 5 * 2 + 2 * withInterval(s), 0));
    for (const [key, text] of cells) {
      const want = at(fromFile, key) as number;
      if (key.includes('.difference.') && !key.endsWith('.discordant')) {
        // percentage points with a sign: "+60.0", "−5.0", "0.0"
        expect(Math.abs(Number(text.replace('\u2212', '-')) / 100 - want), key).toBeLessThanOrEqual(0.0005 + 1e-12);
      } else if (key.endsWith('.n') || key.endsWith('.discordant')) expect(Number(text), key).toBe(want);
      else if (text.endsWith('%')) expect(Math.abs(Number(text.slice(0, -1)) / 100 - want), key).toBeLessThanOrEqual(0.0005 + 1e-12);
      else if (text.endsWith(' ms')) expect(Math.abs(Number(text.slice(0, -3)) - want), key).toBeLessThanOrEqual(0.05 + 1e-9);
      else expect(Math.abs(Number(text) - want) / want, key).toBeLessThan(0.005);
    }
  });

  it('shows example cards with the first bad character marked', async () => {
    const cards = await page.$$eval('article.card', (els) => els.length);
    expect(cards).toBeGreaterThanOrEqual(4);
    const marks = await page.$$eval('article.card mark', (els) => els.map((e) => e.textContent));
    expect(marks.length).toBeGreaterThan(0);
    mkdirSync(artifacts, { recursive: true });
    await page.screenshot({ path: join(artifacts, 'eval-report.png'), fullPage: true });
  });
});
