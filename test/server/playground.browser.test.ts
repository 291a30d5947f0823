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
import { BROWSER_TESTS, CHROMIUM } from '../browser.ts';

vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

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
  if (!BROWSER_TESTS) return;
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

describe.skipIf(!BROWSER_TESTS)('playground page', () => {
  it('starts on the first listed grammar, with a placeholder question the demo data can answer', async () => {
    const options = await page.$$eval('#grammar option', (os) => os.map((o) => (o as HTMLOptionElement).value));
    expect(options.length).toBeGreaterThan(1);
    expect(await page.inputValue('#grammar')).toBe(options[0]);
    // the editor shows that grammar's description (the file on disk)
    await page.waitForSelector('#check-status:has-text("compiles")');
    expect(await page.inputValue('#editor')).toBe(registry.grammar(options[0])!.text);
    // the placeholder names a variety and an altitude; outside check with SQLite itself: some
    // orchard above that altitude grows that variety in the demo database
    const placeholder = (await page.getAttribute('#question', 'placeholder'))!;
    const m = /above (\d+) metres grow ([A-Z][a-z]+(?: [A-Z][a-z]+)*)\?/.exec(placeholder);
    expect(m, placeholder).not.toBeNull();
    const db = new Database(registry.dbPath, { readonly: true });
    try {
      const rows = db
        .prepare('SELECT DISTINCT orchards.name FROM orchards JOIN lots ON lots.orchard_id = orchards.id JOIN varieties ON varieties.id = lots.variety_id WHERE varieties.name = ? AND orchards.altitude_m > ?')
        .all(m![2], Number(m![1]));
      expect(rows.length).toBeGreaterThan(0);
    } finally {
      db.close();
    }
  });

  it('decodes a question both ways, one step at a time, and shows the constrained tree, code and answer', async () => {
    const decoded: Record<string, { constrained: boolean; steps: { allowed_count: number | null; byte: number | null; text: string; id: number }[]; model_ms: number; mask_ms: number; left_grammar_at: number | null }> = {};
    const onResponse = async (r: import('playwright-core').Response) => {
      if (!r.url().endsWith('/api/decode')) return;
      const body = await r.json();
      decoded[body.constrained ? 'c' : 'u'] = body;
    };
    page.on('response', onResponse);
    await page.selectOption('#grammar', 'sql');
    await page.fill('#max-tokens', '48');
    // a compositional question of the shipped data (coop-compositional-00011), on which the demo
    // model's unconstrained output leaves the SQL grammar
    await page.fill('#question', 'What is the total tonnage of batches held in sheds colder than 3 degrees?');
    await page.click('#go');
    await page.waitForSelector('#c-answer', { timeout: 60_000 });
    page.off('response', onResponse);
    const u = decoded.u!;
    const c = decoded.c!;

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
      const columns = stmt.columns().map((col) => col.name);
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
    expect(cSteps).toBe(c.steps.length);
    expect(await page.$$eval('#c svg.chart rect', (els) => els.length)).toBe(cSteps);
    expect(await page.$$eval('#c .chip.off', (els) => els.length)).toBe(0);
    const uOff = await page.$$eval('#u-tokens .chip.off', (els) => els.length);
    if (MODEL === DEMO) expect(uOff).toBe(1);
    expect(uOff).toBe(u.left_grammar_at === null ? 0 : 1);

    // times: per decoding step and per side, from the server's own model and mask times; the
    // status line compares no wall times
    expect(await page.textContent('#ask-status')).not.toMatch(/\d\s*ms/);
    const perStep = (ms: number, n: number) => (ms / n).toFixed(ms / n < 10 ? 2 : 1);
    expect(await page.textContent('#u-timing')).toBe(`server time per step: model ${perStep(u.model_ms, u.steps.length)} ms (no masks)`);
    expect(await page.textContent('#c-timing')).toBe(`server time per step: model ${perStep(c.model_ms, c.steps.length)} ms, masks ${perStep(c.mask_ms, c.steps.length)} ms`);

    const setStep = async (k: number) => {
      await page.$eval('#step', (el, v) => {
        (el as HTMLInputElement).value = String(v);
        el.dispatchEvent(new Event('input'));
      }, k);
    };
    const n = Math.max(u.steps.length, c.steps.length);
    expect(await page.getAttribute('#step', 'max')).toBe(String(n));

    // the labels agree with the slider on both sides, also past the end of the shorter run
    for (const k of [1, 2, Math.min(u.steps.length, c.steps.length), n]) {
      await setStep(k);
      expect(await page.textContent('#step-label')).toBe(`step ${k} of ${n}`);
      for (const [key, run] of [['u', u], ['c', c]] as const) {
        const label = (await page.textContent(`#${key} svg.chart text.label`))!;
        const line = (await page.textContent(`#${key}-stepline`))!;
        expect(label.startsWith(`step ${k}:`), label).toBe(true);
        expect(line.startsWith(`step ${k}:`), line).toBe(true);
        if (k <= run.steps.length && run.steps[k - 1].allowed_count !== null) {
          expect(label).toBe(`step ${k}: ${run.steps[k - 1].allowed_count!.toLocaleString('en')} allowed`);
        }
        if (k > run.steps.length) expect(line).toContain(`this run ended after step ${run.steps.length}`);
        // the text so far is the text after the selected step (after the last one past the end)
        expect(await page.textContent(`#${key}-sofar`)).toBe(run.steps[Math.min(k, run.steps.length) - 1]!.text);
      }
    }

    // every token chip on both sides: a byte-fallback step shows its byte as <0xNN> and is marked
    // as a byte; an ordinary token never is (the server's steps say which is which)
    for (const [key, run] of [['u', u], ['c', c]] as const) {
      const chips = await page.$$eval(`#${key}-tokens .chip`, (els) => els.map((e) => ({ byte: e.classList.contains('byte'), text: e.textContent })));
      expect(chips.length).toBe(run.steps.length);
      run.steps.forEach((s, i) => {
        expect(chips[i]!.byte, `${key} step ${i + 1}`).toBe(s.byte !== null);
        if (s.byte !== null) expect(chips[i]!.text).toBe(`<0x${s.byte.toString(16).toUpperCase().padStart(2, '0')}>`);
      });
    }

    // a real log axis: ticks at 1, 10, 100, 1k up to the vocabulary, and each bar's top where its
    // count falls between them (log10 of the count, measured on the drawn tick positions)
    const axis = await page.$$eval('#c svg.chart text.tick.y', (ts) => ts.map((t) => ({ text: t.textContent, y: Number(t.getAttribute('y')) - 3 })));
    expect(axis.map((t) => t.text)).toEqual(['1', '10', '100', '1k'].slice(0, axis.length));
    expect(axis.length).toBeGreaterThanOrEqual(3);
    const y1 = axis[0].y;
    const decade = axis[0].y - axis[1].y;
    expect(axis[2].y).toBeCloseTo(y1 - 2 * decade, 6);
    const bars = await page.$$eval('#c svg.chart rect', (rs) => rs.map((r) => Number(r.getAttribute('y'))));
    c.steps.forEach((s, i) => {
      if (s.allowed_count! > 1) expect(bars[i]).toBeCloseTo(y1 - decade * Math.log10(s.allowed_count!), 6);
    });

    // per-step verdict and tree on the bare model's side: a valid beginning (or a whole program)
    // before the step that leaves the grammar, and no program from that step on — not the final
    // verdict at every step
    const verdictAt = async (key: string, k: number) => {
      await setStep(k);
      return { cls: (await page.getAttribute(`#${key}-verdict`, 'class'))!, text: (await page.textContent(`#${key}-verdict`))!, tree: (await page.textContent(`#${key}-tree`))! };
    };
    if (u.left_grammar_at !== null) {
      const leftStep = u.left_grammar_at + 1;
      const before = await verdictAt('u', leftStep - 1);
      expect(before.cls).toMatch(/verdict (ok|part)/);
      expect(before.tree).not.toContain('does not parse');
      const at = await verdictAt('u', leftStep);
      expect(at.cls).toBe('verdict bad');
      expect(at.text).toBe(`step ${leftStep} left the grammar: no program begins with this text`);
      const early = await verdictAt('u', 3);
      expect(early.text).toBe('a valid beginning of a program, not complete yet');
      expect(early.tree).toBe('no tree yet: the text so far is not a complete program');
    }
    // the constrained side ends with a whole program
    const last = await verdictAt('c', c.steps.length);
    expect(last.cls).toBe('verdict ok');
    expect(last.text.startsWith('a complete program so far')).toBe(true);

    // stepping back to the step with the fewest allowed tokens shows a partial text, a tree that
    // has not grown fully yet, and the tokens allowed next
    const counts = c.steps.map((s) => s.allowed_count!);
    let k = 1;
    for (let i = 1; i < counts.length - 1; i++) if (counts[i] < counts[k]) k = i;
    await setStep(k);
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

    // byte-fallback tokens are shown as bytes, apart from ordinary tokens: outside check against the
    // tokenizer's own pieces (tokenizer.json: a piece `<0xNN>` is the byte NN)
    const tok = JSON.parse(readFileSync(join(MODEL, 'tokenizer.json'), 'utf8'));
    const pieces: string[] = Array.isArray(tok.model.vocab) ? tok.model.vocab.map((e: [string, number]) => e[0]) : Object.entries(tok.model.vocab as Record<string, number>).reduce<string[]>((a, [p, id]) => ((a[id] = p), a), []);
    const shown = await page.$$eval('#c-allowed .tok', (ts) => ts.map((t) => ({ id: Number(t.getAttribute('data-id')), byte: t.classList.contains('byte'), text: t.textContent })));
    expect(shown.length).toBeGreaterThan(0);
    for (const t of shown) {
      const isBytePiece = /^<0x[0-9A-F]{2}>$/i.test(pieces[t.id] ?? '');
      expect(t.byte, `${t.id} ${pieces[t.id]}`).toBe(isBytePiece);
      if (t.byte) expect(t.text).toBe(pieces[t.id]!.toUpperCase().replace('0X', '0x'));
    }
    if (MODEL === DEMO) expect(shown.some((t) => t.byte)).toBe(true);

    // the bare model's parse error keeps its excerpt lines: the ^ stands under the column it names
    await setStep(n);
    if (u.left_grammar_at !== null) {
      const aligned = await page.$eval('#u-error', (box) => {
        const text = box.textContent!;
        const lines = text.split('\n');
        const col = Number(/:\d+:(\d+):/.exec(lines[0])![1]);
        const source = lines[1];
        const bar = source.indexOf('| ') + 2;
        const caretLine = lines[2];
        const node = box.firstChild as Text;
        const at = (offset: number) => {
          const r = document.createRange();
          r.setStart(node, offset);
          r.setEnd(node, offset + 1);
          return r.getBoundingClientRect().left;
        };
        const lineStart = (i: number) => lines.slice(0, i).reduce((a, l) => a + l.length + 1, 0);
        const target = lineStart(1) + bar + col - 1;
        const caret = lineStart(2) + caretLine.indexOf('^');
        return { target: target < text.length ? at(target) : NaN, caret: at(caret), pre: getComputedStyle(box).whiteSpace };
      });
      expect(aligned.pre).toBe('pre');
      expect(Math.abs(aligned.caret - aligned.target)).toBeLessThan(1);
    }

    mkdirSync(artifacts, { recursive: true });
    await page.screenshot({ path: join(artifacts, 'serve-decode.png'), fullPage: true });
    await setStep(k);
    await page.screenshot({ path: join(artifacts, 'serve-decode-step.png'), fullPage: true });
    await setStep(n);
    expect(await page.$$eval('#c-tree .node.open', (els) => els.length)).toBe(0);
  });

  it('the editor follows the chosen grammar', async () => {
    await page.selectOption('#grammar', 'lf');
    await page.waitForFunction(() => (document.querySelector('#editor') as HTMLTextAreaElement).value.startsWith('#') || (document.querySelector('#editor') as HTMLTextAreaElement).value.includes('grammar lf'));
    expect(await page.inputValue('#editor')).toBe(registry.grammar('lf')!.text);
    await page.selectOption('#grammar', 'arith');
    await page.waitForFunction(() => (document.querySelector('#editor') as HTMLTextAreaElement).value.includes('grammar arith'));
    expect(await page.inputValue('#editor')).toBe(readFileSync('grammars/arith/arith.twg', 'utf8'));
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
    // trailing blank lines: after filling, the caret (at the end) is far below the error
    await page.fill('#editor', broken + '\n'.repeat(60));
    await page.waitForSelector('#gutter div.err');
    // the first error's line is scrolled into view and the caret put at its line and column
    await page.waitForFunction(() => (document.querySelector('#editor') as HTMLTextAreaElement).selectionStart < 1000);
    const view = await page.$eval('#editor', (t) => {
      const ta = t as HTMLTextAreaElement;
      const row = document.querySelector('#gutter div.err')!.getBoundingClientRect();
      const box = ta.getBoundingClientRect();
      return { caret: ta.selectionStart, rowTop: row.top, rowBottom: row.bottom, top: box.top, bottom: box.bottom };
    });
    expect(view.rowTop).toBeGreaterThanOrEqual(view.top);
    expect(view.rowBottom).toBeLessThanOrEqual(view.bottom);
    // lines never wrap in the editor, and the error's mark stands exactly under its line and column
    // of the visible text (monospace: column × the width of one character, line × the line height)
    const placed = await page.$eval('#editor', (t, at) => {
      const ta = t as HTMLTextAreaElement;
      const style = getComputedStyle(ta);
      const probe = document.createElement('span');
      probe.textContent = 'x'.repeat(100);
      probe.style.font = style.font;
      probe.style.whiteSpace = 'pre';
      probe.style.position = 'absolute';
      document.body.append(probe);
      const ch = probe.getBoundingClientRect().width / 100;
      probe.remove();
      const box = ta.getBoundingClientRect();
      const mark = document.querySelector('#marks mark')!.getBoundingClientRect();
      return {
        wrap: ta.getAttribute('wrap'),
        whiteSpace: style.whiteSpace,
        left: mark.left,
        wantLeft: box.left + parseFloat(style.paddingLeft) + (at.column - 1) * ch - ta.scrollLeft,
        top: mark.top,
        wantTop: box.top + parseFloat(style.paddingTop) + (at.line - 1) * parseFloat(style.lineHeight) - ta.scrollTop,
        lineHeight: parseFloat(style.lineHeight),
      };
    }, { line, column: layoutColumn });
    expect(placed.wrap).toBe('off');
    expect(placed.whiteSpace).toBe('pre');
    expect(Math.abs(placed.left - placed.wantLeft)).toBeLessThan(1);
    expect(Math.abs(placed.top - placed.wantTop)).toBeLessThan(placed.lineHeight / 2);
    expect(view.caret).toBe(lines.slice(0, line - 1).reduce((a, l) => a + l.length + 1, 0) + layoutColumn - 1);
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
