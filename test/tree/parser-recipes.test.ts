/**
 * The compiled package rebuilds the shipped grammars' parsers from ohm recipes made at build time
 * (dist/tree/parsers.json, src/tree/parse.ts). Reference: ohm-js' own compilation of the same
 * generated grammar text — the rebuilt grammar, token lexers installed as the parser does, must
 * accept and refuse every sample program exactly where the compiled one does; a recipe of any
 * other text is never used.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import * as ohm from 'ohm-js';
import { describe, expect, it } from 'vitest';
import { loadGrammar } from '../../src/description/index.ts';
import { grammarFromRecipes, ohmSource, parserPrebuilt, parserRecipes } from '../../src/tree/parse.ts';
import { installLexers } from '../../src/tree/parse-lex.ts';

const NAMES = readdirSync('grammars').filter((n) => !n.startsWith('.'));
const grammars = NAMES.map((n) => loadGrammar(join('grammars', n, `${n}.twg`)));

function programs(name: string): string[] {
  const dir = join('grammars', name, 'samples');
  const out: string[] = [];
  for (const f of readdirSync(dir)) {
    if (f.startsWith('valid.')) out.push(...readFileSync(join(dir, f), 'utf8').split('\n').filter((l) => l.trim() !== '' && !l.startsWith('#')));
  }
  for (const f of readdirSync(join(dir, 'invalid'))) if (!f.endsWith('.expected')) out.push(readFileSync(join(dir, 'invalid', f), 'utf8').replace(/\n$/, ''));
  return out;
}

describe('prebuilt parser recipes', () => {
  const table = parserRecipes(grammars);

  it('one recipe per shipped grammar', () => {
    expect(grammars.length).toBeGreaterThanOrEqual(5);
    expect(Object.keys(table)).toHaveLength(grammars.length);
  });

  grammars.forEach((g, i) => {
    it(`${NAMES[i]}: the rebuilt parser accepts and refuses the samples where ohm's compiled one does`, () => {
      const { source } = ohmSource(g);
      const rebuilt = grammarFromRecipes(table, source)!;
      expect(rebuilt).not.toBeNull();
      const compiled = ohm.grammar(source);
      installLexers(rebuilt, g);
      installLexers(compiled, g);
      const texts = programs(NAMES[i]!);
      expect(texts.length).toBeGreaterThan(3);
      let accepted = 0;
      for (const t of texts) {
        const a = rebuilt.match(t, 'Start');
        const b = compiled.match(t, 'Start');
        expect(a.succeeded(), t).toBe(b.succeeded());
        if (a.succeeded()) accepted++;
        else expect((a as unknown as { getRightmostFailurePosition(): number }).getRightmostFailurePosition(), t).toBe((b as unknown as { getRightmostFailurePosition(): number }).getRightmostFailurePosition());
      }
      expect(accepted).toBeGreaterThan(0);
      expect(accepted).toBeLessThan(texts.length);
    });
  });

  it('a recipe is used only for the very text it was made from', () => {
    const { source } = ohmSource(grammars[0]!);
    const key = Object.keys(parserRecipes([grammars[0]!]))[0]!;
    // another grammar's recipe filed under this text's key: refused (its source differs)
    const other = parserRecipes([grammars[1]!]);
    expect(grammarFromRecipes({ [key]: Object.values(other)[0] }, source)).toBeNull();
    expect(grammarFromRecipes({ [key]: 'not json' }, source)).toBeNull();
    expect(grammarFromRecipes({}, source)).toBeNull();
  });

  it('the sources (no dist/tree/parsers.json beside them) compile their parsers', () => {
    expect(parserPrebuilt(grammars[0]!)).toBe(false);
  });
});
