/**
 * The notation grammar is rebuilt from ohm's recipe (src/description/notation-recipe.ts) instead of
 * compiled from NOTATION_SOURCE at every start. Reference: ohm-js itself — the checked-in recipe
 * must be exactly what ohm makes of the current source (regenerate with
 * `node .build/gen-notation-recipe.mjs`), and the grammar rebuilt from it must match every shipped
 * description and the error examples the same way the grammar compiled from the source does.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import * as ohm from 'ohm-js';
import { describe, expect, it } from 'vitest';
import { NOTATION_RECIPE } from '../../src/description/notation-recipe.ts';
import { NOTATION_SOURCE, notationGrammar } from '../../src/description/notation.ts';

const toRecipe = (g: ohm.Grammar) => (g as unknown as { toRecipe(): string }).toRecipe();

function descriptions(): string[] {
  const files: string[] = [];
  for (const d of readdirSync('grammars', { withFileTypes: true })) {
    if (!d.isDirectory()) continue;
    for (const f of readdirSync(join('grammars', d.name))) if (f.endsWith('.twg')) files.push(join('grammars', d.name, f));
  }
  for (const f of readdirSync('docs/examples')) if (f.endsWith('.twg')) files.push(join('docs/examples', f));
  return files;
}

describe('notation recipe', () => {
  it('is what ohm makes of NOTATION_SOURCE now (else: node .build/gen-notation-recipe.mjs)', () => {
    const recipe = JSON.parse(NOTATION_RECIPE) as unknown[];
    expect((recipe[1] as { source: string }).source).toBe(NOTATION_SOURCE.trim()); // ohm keeps the grammar's own text, without the blank lines around it
    expect(recipe).toEqual(JSON.parse(toRecipe(ohm.grammar(NOTATION_SOURCE))));
  });

  it('the grammar in use is the one rebuilt from it, and matches as the compiled source does', () => {
    const fromRecipe = notationGrammar();
    expect(toRecipe(fromRecipe)).toBe(NOTATION_RECIPE);
    const compiled = ohm.grammar(NOTATION_SOURCE);
    const files = descriptions();
    expect(files.length).toBeGreaterThanOrEqual(6);
    for (const f of files) {
      const text = readFileSync(f, 'utf8');
      const a = fromRecipe.match(text, 'Description');
      const b = compiled.match(text, 'Description');
      expect(a.succeeded(), f).toBe(b.succeeded());
      type Failing = { getRightmostFailurePosition(): number };
      if (a.failed()) expect((a as unknown as Failing).getRightmostFailurePosition(), f).toBe((b as unknown as Failing).getRightmostFailurePosition());
    }
  });
});
