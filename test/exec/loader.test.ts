import { afterAll, describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { loadExecutor } from '../../src/exec/index.ts';

const dir = mkdtempSync(join(tmpdir(), 'tw-loader-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('loadExecutor', () => {
  it('loads a user module exporting execute(tree, context)', async () => {
    const file = join(dir, 'count-nodes.mjs');
    writeFileSync(file, `
      function size(v) { return v && typeof v === 'object' ? 1 + Object.values(v).reduce((s, x) => s + size(x), 0) : 0; }
      export async function execute(tree, context) {
        if (tree.kind === 'boom') throw new Error('kaput');
        if (tree.kind === 'bad') return { ok: false, error: 'no such thing' };
        return { ok: true, value: { nodes: size(tree), db: context.db ?? null } };
      }`);
    const run = await loadExecutor(file);
    expect(await run({ kind: 'add', left: { kind: 'num', value: 1 }, right: { kind: 'num', value: 2 } }, { db: 'x.sqlite' })).toEqual({ ok: true, value: { nodes: 3, db: 'x.sqlite' } });
    expect(await run({ kind: 'bad' }, {})).toEqual({ ok: false, error: 'no such thing' });
    expect(await run({ kind: 'boom' }, {})).toEqual({ ok: false, error: `${file}: execute threw (a bug in the executor): kaput` });
  });

  it('names the file and what it must export', async () => {
    const file = join(dir, 'nothing.mjs');
    writeFileSync(file, 'export const run = 1;');
    await expect(loadExecutor(file)).rejects.toThrow(`${file}: expected the module to export a function named "execute"`);
    await expect(loadExecutor(join(dir, 'missing.mjs'))).rejects.toThrow(/missing\.mjs: no such file \(expected an ES module exporting execute/);
    const odd = join(dir, 'odd.mjs');
    writeFileSync(odd, 'export async function execute() { return 42; }');
    expect(await (await loadExecutor(odd))({ kind: 'x' }, {})).toEqual({ ok: false, error: `${odd}: execute returned 42, expected { ok: true, value } or { ok: false, error }` });
  });
});
