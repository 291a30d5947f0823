// End-to-end: the playground page in Debian's headless Chromium (driven by playwright-core) against
// a real server listening on 127.0.0.1 with the fixture model (random weights: the constrained
// output is still a program of the grammar, and it runs).
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import Database from 'better-sqlite3';
import { chromium, type BrowserContext, type Page } from 'playwright-core';
import type { FastifyInstance } from 'fastify';
import { buildServer, Registry } from '../../src/server/index.ts';

vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

const CHROMIUM = '/usr/bin/chromium';
// the demo model when its ONNX export is present (a trained model: realistic output), else the fixture
const DEMO = 'models/coop';
const MODEL = existsSync(join(DEMO, 'onnx')) && existsSync(join(DEMO, 'config.json')) ? DEMO : 'test/fixtures/tiny-seq2seq';
const dir = mkdtempSync(join(tmpdir(), 'tw-serve-e2e-'));
const artifacts = resolve('test-artifacts');
let app: FastifyInstance;
let registry: Registry;
let base: string;
let context: BrowserContext;
let page: Page;
const requests: string[] = [];
const pageErrors: string[] = [];

beforeAll(async () => {
  registry = await Registry.open({ models: [MODEL], threads: 1 });
  app = await buildServer(registry);
  await app.listen({ host: '127.0.0.1', port: 0 });
  const addr = app.server.address() as { port: number };
  base = `http://127.0.0.1:${addr.port}`;
  context = await chromium.launchPersistentContext(join(dir, 'profile'), {
    executablePath: CHROMIUM,
    headless: true,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    viewport: { width: 1280, height: 1000 },
  });
  page = await context.newPage();
  page.on('request', (r) => requests.push(r.url()));
  page.on('pageerror', (e) => pageErrors.push(e.message));
  await page.goto(`${base}/`);
  await page.waitForSelector('#grammar option[value="sql"]', { state: 'attached' });
});

afterAll(async () => {
  await context?.close();
  await app?.close();
  rmSync(dir, { recursive: true, force: true });
});

describe('playground page', () => {
  it('decodes an invented question both ways and shows the constrained tree, code and answer', async () => {
    await page.selectOption('#grammar', 'sql');
    await page.fill('#max-tokens', '48');
    await page.fill('#question', 'which orchards on the east slope grow elstar?');
    await page.click('#go');
    await page.waitForSelector('#c-answer', { timeout: 60_000 });

    // the constrained side: a tree whose root is a constructor of the SQL grammar's start sort
    const sql = registry.grammar('sql')!.grammar;
    const rootLabel = (await page.textContent('#c-tree > ul > li > .node'))!;
    expect(sql.sorts.find((x) => x.name === sql.start)!.constructors).toContain(rootLabel);
    const code = (await page.textContent('#c-code'))!;
    expect(code.startsWith('SELECT')).toBe(true);
    // the executor runs the canonical print of the tree; the page shows it next to the model's text
    const canonical = (await page.textContent('#c-canonical'))!;
    expect(canonical.replace(/\s+/g, '')).toBe(code.replace(/\s+/g, ''));
    const answer = (await page.textContent('#c-answer'))!;

    // outside check: the shown answer is what SQLite itself (better-sqlite3) says for the shown code
    const db = new Database(registry.dbPath, { readonly: true });
    try {
      const stmt = db.prepare(canonical);
      const columns = stmt.columns().map((c) => c.name);
      const rows = stmt.raw().all() as unknown[][];
      const expected = [columns.join(' | '), ...rows.slice(0, 20).map((r) => r.map(String).join(' | '))];
      if (rows.length > 20) expected.push(`… ${rows.length} rows`);
      expect(answer).toBe(expected.join('\n'));
    } catch (e) {
      expect(answer).toContain((e as Error).message);
    } finally {
      db.close();
    }

    // one chart bar per step on each side; the constrained side never leaves the grammar
    const cSteps = await page.$$eval('#c-tokens .chip', (els) => els.length);
    expect(await page.$$eval('#c svg.chart rect', (els) => els.length)).toBe(cSteps);
    expect(await page.$$eval('#c .chip.off', (els) => els.length)).toBe(0);
    // the bare model's side: at most one token marked as leaving the grammar, and only when its
    // text does not parse (the fixture's random text always leaves it; the page then shows no tree)
    const uOff = await page.$$eval('#u .chip.off', (els) => els.length);
    const uTree = (await page.textContent('#u-tree'))!;
    expect(uOff).toBeLessThanOrEqual(1);
    if (uOff === 1) expect(uTree).toContain('does not parse');
    if (MODEL !== DEMO) expect(uOff).toBe(1);

    // stepping back to the step with the fewest allowed tokens (the bar titles say how many) shows
    // a partial text, a tree that has not grown fully yet, and the tokens allowed next
    const counts = await page.$$eval('#c svg.chart rect title', (els) => els.map((e) => Number(/: (\d+) allowed/.exec(e.textContent ?? '')?.[1] ?? NaN)));
    let k = 1;
    for (let i = 1; i < counts.length - 1; i++) if (counts[i] < counts[k]) k = i;
    await page.$eval('#step', (el, v) => {
      (el as HTMLInputElement).value = String(v);
      el.dispatchEvent(new Event('input'));
    }, k);
    const partial = (await page.textContent('#c-sofar'))!;
    // the list of tokens allowed after the text so far holds the token the decoder chose next
    await page.waitForSelector('#c-allowed[data-count]');
    const nextToken = await page.$eval(`#c-tokens .chip:nth-child(${k + 1})`, (e) => (e as HTMLElement).title);
    const nextId = /\(id (\d+)\)/.exec(nextToken)![1];
    const allowedIds = (await page.getAttribute('#c-allowed', 'data-ids'))!.split(' ');
    const allowedCount = Number(await page.getAttribute('#c-allowed', 'data-count'));
    expect(allowedCount).toBeGreaterThanOrEqual(counts[k]); // no length budget here: never fewer
    expect(allowedIds.length).toBe(allowedCount); // all of them fit the page's request of 500
    expect(allowedIds).toContain(nextId);
    expect(code.startsWith(partial)).toBe(true);
    expect(partial.length).toBeLessThan(code.length);
    expect(await page.$$eval('#c-tree .node.open', (els) => els.length)).toBeGreaterThan(0);
    await page.$eval('#step', (el) => {
      (el as HTMLInputElement).value = (el as HTMLInputElement).max;
      el.dispatchEvent(new Event('input'));
    });
    expect(await page.$$eval('#c-tree .node.open', (els) => els.length)).toBe(0);
  });

  it('marks a description error at its line and column as you type', async () => {
    await page.selectOption('#grammar', 'arith');
    await page.click('#load-grammar');
    await page.waitForSelector('#check-status:has-text("compiles")');
    const text = readFileSync('grammars/arith/arith.twg', 'utf8');
    // the README's worked typo: the layout of `neg` names `operant` instead of its field `operand`
    const broken = text.replace('"-" ~operand', '"-" ~operant');
    expect(broken).not.toBe(text);
    const lines = broken.split('\n');
    const line = lines.findIndex((l) => l.includes('~operant')) + 1;
    const column = lines[line - 1].indexOf('operant') + 1;
    const layoutColumn = lines[line - 1].indexOf('"-"') + 1;
    await page.fill('#editor', broken);
    await page.waitForSelector('#gutter div.err');
    expect(await page.$$eval('#gutter div.err', (els) => els.map((e) => e.getAttribute('data-line')))).toEqual([String(line)]);
    const marks = await page.$$eval('#marks mark', (els) => els.map((e) => ({ line: e.getAttribute('data-line'), column: e.getAttribute('data-column'), text: e.textContent })));
    // two errors on that line (as in the README): the layout omits `operand`, and names `operant`
    expect(marks).toEqual([{ line: String(line), column: String(layoutColumn), text: '"-" ~operant' }]);
    const listed = (await page.textContent('#diagnostics'))!;
    expect(listed).toContain(`editor.twg:${line}:${layoutColumn}: error: layout of \`neg\` omits field \`operand\``);
    expect(listed).toContain(`editor.twg:${line}:${column}: error: layout of \`neg\` names \`operant\`, which is not one of its fields`);
    expect(await page.isDisabled('#use-grammar')).toBe(true);

    mkdirSync(artifacts, { recursive: true });
    await page.screenshot({ path: join(artifacts, 'serve-playground.png'), fullPage: true });

    // fixing it clears the marks
    await page.fill('#editor', text);
    await page.waitForSelector('#check-status:has-text("compiles")');
    expect(await page.$$eval('#gutter div.err', (els) => els.length)).toBe(0);
  });

  it('talks only to its own server and raises no script errors', () => {
    expect(pageErrors).toEqual([]);
    expect(requests.every((u) => u.startsWith(base + '/'))).toBe(true);
  });
});
