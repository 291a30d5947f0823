/**
 * Deep nesting in every tree stage: the parser stops at its documented nesting limit with a located
 * ParseError, never a RangeError; the validator, the printer and the LF evaluator refuse JSON nested
 * deeper than MAX_JSON_DEPTH at the JSON path of the culprit; the CLI prints a located message
 * without a stack trace. The attack inputs are the ones reported against the server (parentheses,
 * SQL `NOT`, JSON arrays — a valid document — and 5,000-deep trees).
 * A stack overflow surfaces in V8 as a RangeError "Maximum call stack size exceeded" (CWE-674,
 * uncontrolled recursion); the checks below fail if one escapes.
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { main } from '../../src/cli/main.ts';
import { compileDescription, loadGrammar } from '../../src/description/index.ts';
import { createParser, ParseError, printTree, validateTree } from '../../src/tree/index.ts';
import { evaluateLf, makeFactBase } from '../../src/exec/index.ts';
import { jsonDepthProblem, MAX_JSON_DEPTH, MAX_PARSE_DEPTH } from '../../src/util/depth.ts';
import { GUARD_INSTALLED } from '../../src/tree/depth.ts';
import { createScorer } from '../../src/eval/target.ts';

vi.setConfig({ testTimeout: 60_000 });

const g = (name: string) => loadGrammar(`grammars/${name}/${name}.twg`);
const deepNeg = (n: number): string => '{"kind":"neg","operand":'.repeat(n) + '{"kind":"num","value":1}' + '}'.repeat(n);

/** Parses `text`; returns the ParseError (fails the test on success or on any other error). */
function parseFailure(grammar: string, text: string): ParseError {
  try {
    createParser(g(grammar)).parse(text);
  } catch (e) {
    expect(e, (e as Error).message.slice(0, 200)).toBeInstanceOf(ParseError);
    return e as ParseError;
  }
  throw new Error('parsed');
}

describe('parser nesting limit', () => {
  it('the guard is installed on this ohm-js', () => {
    expect(GUARD_INSTALLED).toBe(true);
  });

  // [grammar, program of nesting n, depth at which the reported attack overflowed the stack]
  const attacks: [string, (n: number) => string, number][] = [
    ['arith', (n) => '('.repeat(n) + '1' + ')'.repeat(n), 136],
    ['sql', (n) => 'SELECT name FROM growers WHERE ' + '('.repeat(n) + '1 = 1' + ')'.repeat(n), 168],
    ['json', (n) => '['.repeat(n) + ']'.repeat(n), 273],
    ['sql', (n) => 'SELECT name FROM growers WHERE ' + 'NOT '.repeat(n) + '1 = 1', 629],
    ['arith', (n) => '( '.repeat(n), 120],
    ['lf', (n) => 'lambda $x. ' + '~'.repeat(n) + 'grower($x)', 700],
  ];
  for (const [grammar, make, reported] of attacks) {
    it(`${grammar} ${JSON.stringify(make(2))}: the reported depth ${reported} and 20,000 are located parse errors`, () => {
      for (const n of [reported, 20_000]) {
        const text = make(n);
        const e = parseFailure(grammar, text);
        expect(e.line).toBe(1);
        expect(e.offset).toBeGreaterThan(0);
        expect(e.offset).toBeLessThan(text.length);
        // the excerpt is clipped: the message does not grow with the input
        expect(e.message.length).toBeLessThan(600);
        if (grammar !== 'arith' || !text.startsWith('( ')) {
          expect(e.message).toContain(`the parser follows at most ${MAX_PARSE_DEPTH} grammar rules at once (its nesting limit)`);
        }
      }
    });
  }

  it('programs well inside the limit still parse (and print back)', () => {
    // figures from the measurement quoted in README ("Limits"): 71 parentheses in arith, 158 arrays in json
    const arith = g('arith');
    const t = createParser(arith).parse('('.repeat(60) + '1' + ')'.repeat(60));
    expect(printTree(arith, t)).toBe('1');
    const json = g('json');
    const j = createParser(json).parse('['.repeat(150) + ']'.repeat(150));
    expect(printTree(json, j)).toBe('['.repeat(150) + ']'.repeat(150));
    const neg = createParser(arith).parse('-'.repeat(300) + '1');
    expect(printTree(arith, neg)).toBe('-'.repeat(300) + '1');
  });

  it('the CLI: a located message and exit 1, no stack trace', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'tw-depth-'));
    const file = join(dir, 'deep.arith');
    writeFileSync(file, '('.repeat(5000) + '1' + ')'.repeat(5000));
    let stderr = '';
    vi.spyOn(process.stdout, 'write').mockImplementation(() => true);
    vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => ((stderr += String(s)), true));
    try {
      expect(await main(['parse', '--grammar', 'arith', file])).toBe(1);
    } finally {
      vi.restoreAllMocks();
    }
    expect(stderr).toMatch(new RegExp(`^${file.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}:1:\\d+: expected the program to nest less deeply here`));
    expect(stderr).not.toMatch(/\n\s+at /);
    expect(stderr).not.toContain('RangeError');
  });
});

describe('description notation nesting', () => {
  it('a description with 3,000 nested optional groups is a located diagnostic, not a stack overflow', () => {
    const text = 'grammar g\nstart E\nspace " "\ntoken N = /[0-9]+/ as int\nsort E { a(x: N?) = ' + '[ '.repeat(3000) + 'x' + ' ]'.repeat(3000) + '; }\n';
    const { grammar, diagnostics } = compileDescription(text, 'deep.twg');
    expect(grammar).toBeNull();
    expect(diagnostics.map((d) => [d.code, d.file, d.message])).toEqual([
      ['too-deep', 'deep.twg', `expected the description to nest less deeply here: the parser follows at most ${MAX_PARSE_DEPTH} grammar rules at once (its nesting limit)`],
    ]);
    expect(diagnostics[0]!.span.start).toBeGreaterThan(text.indexOf('['));
  });
});

describe('evaluation scorer', () => {
  it('records an over-deep output as invalid and goes on (the reported run aborted at 120 "( ")', () => {
    const scorer = createScorer({ grammar: g('arith'), names: { Func: ['max'] }, execute: async () => ({ ok: true, value: null }) });
    for (const text of ['( '.repeat(120), '('.repeat(3000) + '1' + ')'.repeat(3000)]) {
      const a = scorer.analyse(text, true);
      expect(a.valid).toBe(false);
      expect(a.failure?.detail).toMatch(/nest less deeply/);
    }
    expect(scorer.analyse('(1)', false).valid).toBe(true);
  });
});

describe('JSON depth limit', () => {
  it('jsonDepthProblem names the first value too deep, iteratively', () => {
    expect(jsonDepthProblem({ a: [{ b: 1 }] }, 3)).toBeNull();
    expect(jsonDepthProblem({ a: [{ b: [] }] }, 3)).toBe('$.a[0].b');
    expect(jsonDepthProblem({ 'odd key': [[[]]] }, 3)).toBe('$["odd key"][0][0]');
    expect(jsonDepthProblem(JSON.parse('['.repeat(100_000) + ']'.repeat(100_000)), MAX_JSON_DEPTH)).toBe('$' + '[0]'.repeat(MAX_JSON_DEPTH));
  });

  it('validate and print refuse a 5,000-deep tree at its JSON path; the limit itself passes', () => {
    const arith = g('arith');
    const issue = validateTree(arith, JSON.parse(deepNeg(5000)));
    expect(issue).toEqual({ path: '$' + '.operand'.repeat(MAX_JSON_DEPTH), message: `nested more than ${MAX_JSON_DEPTH} arrays/objects deep; expected at most ${MAX_JSON_DEPTH} (the nesting limit)` });
    expect(() => printTree(arith, JSON.parse(deepNeg(5000)))).toThrow(/nesting limit/);
    expect(printTree(arith, JSON.parse(deepNeg(MAX_JSON_DEPTH - 1)))).toBe('-'.repeat(MAX_JSON_DEPTH - 1) + '1');
  });

  it('the LF evaluator refuses a deep tree with a located error instead of overflowing', () => {
    const facts = makeFactBase({ entities: ['a'], classes: { grower: ['a'] }, relations: {}, measures: {} });
    const tree = JSON.parse('{"kind":"truth","claim":' + '{"kind":"not","operand":'.repeat(5000) + '{"kind":"is","class":"grower","arg":{"kind":"const","name":"a"}}' + '}'.repeat(5000) + '}');
    const r = evaluateLf(facts, tree);
    expect(r.ok).toBe(false);
    expect(!r.ok && r.error).toMatch(/nesting limit/);
  });
});
