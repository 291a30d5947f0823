import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { compileDescription, DescriptionError, formatDiagnostics, loadGrammar } from '../../src/description/index.ts';

const GRAMMARS = ['arith', 'json', 'lf', 'sql'];

describe('shipped grammars', () => {
  for (const name of GRAMMARS) {
    const path = `grammars/${name}/${name}.twg`;
    it(`${name} compiles with no errors and no warnings`, () => {
      const text = readFileSync(path, 'utf8');
      const { grammar, diagnostics } = compileDescription(text, path);
      expect(formatDiagnostics(diagnostics, text)).toBe('');
      expect(grammar?.name).toBe(name);
    });
  }

  it('arith: the IR matches the description', () => {
    const g = loadGrammar('grammars/arith/arith.twg');
    expect(g.start).toBe('Expr');
    expect(g.space).toBe(' \t');
    expect(g.tokens.map((t) => [t.name, t.pattern, t.flags, t.value, t.reserved])).toEqual([
      ['Num', '[0-9]{1,9}(?:\\.[0-9]{1,6})?', '', 'number', false],
      ['Name', '[a-z][a-z0-9]*', '', 'text', true],
    ]);
    expect(g.nameSets.map((n) => [n.name, n.token])).toEqual([['Func', 'Name']]);
    expect(g.sorts.map((s) => [s.name, s.parens])).toEqual([['Expr', { open: '(', close: ')' }]]);
    expect(g.constructors.map((c) => c.name)).toEqual(['add', 'sub', 'mul', 'div', 'neg', 'pow', 'call', 'num']);
    expect(g.constructors.map((c) => c.index)).toEqual([0, 1, 2, 3, 4, 5, 6, 7]);
    expect(g.keywords).toEqual(['(', ')', '*', '+', ',', '-', '/', '^']);
    const pow = g.constructors[5]!;
    expect(pow.operator).toEqual({ fixity: 'infix', assoc: 'right', precedence: 40 });
    const call = g.constructors[6]!;
    expect(call.fields.map((f) => [f.name, f.type, f.card, f.scoping])).toEqual([
      ['fn', { kind: 'names', name: 'Func' }, 'one', 'none'],
      ['args', { kind: 'sort', name: 'Expr' }, 'nonempty', 'none'],
    ]);
    expect(call.layout.map(({ span: _s, ...rest }) => rest)).toEqual([
      { kind: 'slot', field: 'fn', sep: null, sepGlue: false, glue: false },
      { kind: 'text', text: '(', glue: true },
      { kind: 'slot', field: 'args', sep: ',', sepGlue: true, glue: true },
      { kind: 'text', text: ')', glue: true },
    ]);
    // Grammar.hash: sha256 hex (64 hex digits, FIPS 180-4), stable across loads
    expect(g.hash).toMatch(/^[0-9a-f]{64}$/);
    expect(loadGrammar('grammars/arith/arith.twg').hash).toBe(g.hash);
  });

  it('sql: optional groups, scoping-free fields, list separators', () => {
    const g = loadGrammar('grammars/sql/sql.twg');
    const when = (name: string) =>
      g.constructors.find((c) => c.name === name)!.layout.filter((i) => i.kind === 'when').map((i) => (i.kind === 'when' ? i.field : ''));
    expect(when('select')).toEqual(['where', 'order', 'limit']);
    // GROUP BY is required in `grouped`, so it is not an optional group there
    expect(when('grouped')).toEqual(['where', 'having', 'order', 'limit']);
  });

  it('lf: new/bound scoping markers', () => {
    const g = loadGrammar('grammars/lf/lf.twg');
    const lambda = g.constructors.find((c) => c.name === 'lambda')!;
    expect(lambda.fields[0]!.scoping).toBe('binds');
    const v = g.constructors.find((c) => c.name === 'var')!;
    expect(v.fields[0]!.scoping).toBe('bound');
  });

  it('loadGrammar throws DescriptionError with the formatted diagnostics', () => {
    const path = 'test/cases/description-fuzz/crlf-unknown-field.twg';
    let caught: unknown = null;
    try {
      loadGrammar(path);
    } catch (e) {
      caught = e;
    }
    expect(caught).toBeInstanceOf(DescriptionError);
    expect((caught as DescriptionError).message).toBe(
      [
        `${path}:4:16: error: layout of \`a\` names \`x\`, which is not one of its fields`,
        '4 | sort A { a() = x; }',
        '  |                ^',
        'hint: `a` has no fields; write literal text in quotes',
      ].join('\n'),
    );
    expect((caught as DescriptionError).diagnostics.map((d) => d.code)).toEqual(['unknown-layout-field']);
    expect(() => loadGrammar('grammars/none/missing.twg')).toThrow(/^grammars\/none\/missing\.twg: error: cannot read the description: ENOENT/);
  });
});

describe('compile cache', () => {
  it('returns the same immutable Grammar for the same file and text, a fresh diagnostics array', () => {
    const text = 'grammar g\nstart A\nspace " "\nsort A { a() = "x"; }\nsort B { b() = "y"; }\n';
    const one = compileDescription(text, 'cache.twg');
    const two = compileDescription(text, 'cache.twg');
    expect(two.grammar).toBe(one.grammar);
    expect(two.diagnostics).not.toBe(one.diagnostics);
    expect(two.diagnostics).toEqual(one.diagnostics);
    const other = compileDescription(text, 'other.twg');
    expect(other.grammar).not.toBe(one.grammar);
    expect(other.grammar?.file).toBe('other.twg');
  });
});
