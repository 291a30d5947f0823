// Blanks (`blank Ws = " \t"`, `Ws`, `Ws?`, separator blanks), filler (`filler /#[^\n]*\n/`) and
// per-class exclusions (`except`):
// whole formatted diagnostics word for word, and what a valid description compiles to. The texts
// were reviewed against the notation reference in README.md; `file:line:col` and the caret
// excerpt are common practice for compilers (no source).
import { describe, expect, it } from 'vitest';
import { compileDescription, formatDiagnostics } from '../../src/description/index.ts';

function report(text: string): string {
  const { diagnostics } = compileDescription(text, 'g.twg');
  return formatDiagnostics(diagnostics, text);
}

describe('blank and except diagnostics', () => {
  it("blank-empty", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \"\"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N, y: N) = x Ws y; }\n";
    expect(report(text)).toBe("g.twg:4:12: error: blank `Ws` lists no character\n4 | blank Ws = \"\"\n  |            ^~\nhint: list the characters a blank is made of, e.g. `blank Ws = \" \\t\"`");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("blank-not-whitespace", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" x\"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N, y: N) = x Ws y; }\n";
    expect(report(text)).toBe("g.twg:4:12: error: blank `Ws` lists \"x\", which is not a whitespace character\n4 | blank Ws = \" x\"\n  |            ^~~~\nhint: list only whitespace characters, e.g. `blank Ws = \" \\t\"`");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("blank-in-space", () => {
    const text = "grammar g\nstart A\nspace \" \\t\"\nblank Ws = \"\\t\"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N, y: N) = x Ws y; }\n";
    expect(report(text)).toBe("g.twg:4:12: error: blank `Ws` lists \"\\t\", which `space` already skips between any two tokens\n4 | blank Ws = \"\\t\"\n  |            ^~~~\nhint: a blank is read only where a layout places it: take its characters out of `space` (e.g. `space \"\"`), or drop the blank");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("blank-as-field-type", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: Ws) = x; }\n";
    expect(report(text)).toBe("g.twg:6:15: error: field `x` has type `Ws`, which is a blank\n6 | sort A { a(x: Ws) = x; }\n  |               ^~\nhint: a blank is not a value: place it in the layout (`l Ws r`) instead of declaring a field");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("optional-mark-on-field", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N?) = \"a\" x?; }\n";
    expect(report(text)).toBe("g.twg:6:25: error: `x?` in a layout: `x` is a field, and only a blank takes `?` here\n6 | sort A { a(x: N?) = \"a\" x?; }\n  |                         ^~\nhint: make the field optional in its declaration (`x: T?`)");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("blank-and-field", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(Ws: N) = \"a\" Ws; }\n";
    expect(report(text)).toBe("g.twg:6:25: error: layout of `a` names `Ws`, which is both one of its fields and a blank\n6 | sort A { a(Ws: N) = \"a\" Ws; }\n  |                         ^~\nhint: rename the field or the blank");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("glue-on-required-blank", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N, y: N) = x ~Ws y; }\n";
    expect(report(text)).toBe("g.twg:6:28: error: `~` before the required blank `Ws`\n6 | sort A { a(x: N, y: N) = x ~Ws y; }\n  |                            ^~~\nhint: a required blank is always printed; write `~Ws?` for an optional blank the printer leaves out");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("blank-at-layout-edge start", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N?, y: N) = x Ws y; }\n";
    expect(report(text)).toBe("g.twg:6:29: error: blank `Ws` can stand at the start of the layout of `a`\n6 | sort A { a(x: N?, y: N) = x Ws y; }\n  |                             ^~\nhint: place blanks between two items of one layout (the enclosing layout decides what stands around a node)");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("blank-at-layout-edge end", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N, y: N, z: N?) = x \"=\" y [Ws? \"!\" z] Ws?; }\n";
    expect(report(text)).toBe("g.twg:6:53: error: blank `Ws` can stand at the end of the layout of `a`\n6 | sort A { a(x: N, y: N, z: N?) = x \"=\" y [Ws? \"!\" z] Ws?; }\n  |                                                     ^~~\nhint: place blanks between two items of one layout (the enclosing layout decides what stands around a node)");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("blanks-meet", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N, m: N*, y: N) = x Ws? m sep \",\" Ws y; }\n";
    expect(report(text)).toBe("g.twg:6:49: error: blank `Ws` can directly follow blank `Ws` (only empty items between them), and one of them is required\n6 | sort A { a(x: N, m: N*, y: N) = x Ws? m sep \",\" Ws y; }\n  |                                                 ^~\nhint: two blanks that meet read as one run: write a single blank there");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("bad-separator two texts", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N+) = x sep (\",\" \";\"); }\n";
    expect(report(text)).toBe("g.twg:6:23: error: separator has 2 texts\n6 | sort A { a(x: N+) = x sep (\",\" \";\"); }\n  |                       ^~~~~~~~~~~~~\nhint: write `sep \",\"`, `sep ~\",\"`, or with blanks `sep (Ws? \",\" Ws?)`: one text, at most one blank on each side");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("bad-separator no text", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N+) = x sep (Ws); }\n";
    expect(report(text)).toBe("g.twg:6:23: error: separator has no text\n6 | sort A { a(x: N+) = x sep (Ws); }\n  |                       ^~~~~~~~\nhint: write `sep \",\"`, `sep ~\",\"`, or with blanks `sep (Ws? \",\" Ws?)`: one text, at most one blank on each side");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("bad-separator not blank", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N+) = x sep (N \",\"); }\n";
    expect(report(text)).toBe("g.twg:6:28: error: separator names the token class `N`, which is not a blank\n6 | sort A { a(x: N+) = x sep (N \",\"); }\n  |                            ^\nhint: write `sep \",\"`, `sep ~\",\"`, or with blanks `sep (Ws? \",\" Ws?)`: one text, at most one blank on each side");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("unknown-blank", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank Ws = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N+) = x sep (Wss? \",\"); }\n";
    expect(report(text)).toBe("g.twg:6:28: error: `Wss` in a separator is not a blank\n6 | sort A { a(x: N+) = x sep (Wss? \",\"); }\n  |                            ^~~\nhint: did you mean `Ws`?");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("except-word not lexeme", () => {
    const text = "grammar g\nstart A\nspace \"\"\ntoken N = /[a-z]+/ as text except \"on\" \"Off\"\nsort A { a(x: N) = x; }\n";
    expect(report(text)).toBe("g.twg:4:40: error: `except` of token class `N` lists \"Off\", which is not a lexeme of it (/[a-z]+/)\n4 | token N = /[a-z]+/ as text except \"on\" \"Off\"\n  |                                        ^~~~~\nhint: list words the class would otherwise accept");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("except-word twice", () => {
    const text = "grammar g\nstart A\nspace \"\"\ntoken N = /[a-z]+/ as text except \"on\" \"on\"\nsort A { a(x: N) = x; }\n";
    expect(report(text)).toBe("g.twg:4:40: error: `except` of token class `N` lists \"on\", which is listed twice\n4 | token N = /[a-z]+/ as text except \"on\" \"on\"\n  |                                        ^~~~\nhint: list words the class would otherwise accept");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("except all", () => {
    const text = "grammar g\nstart A\nspace \"\"\ntoken N = /on/ as text except \"on\"\nsort A { a(x: N) = x; }\n";
    expect(report(text)).toBe("g.twg:4:24: error: token class `N` has no lexeme once its `except` words are removed\n4 | token N = /on/ as text except \"on\"\n  |                        ^~~~~~~~~~~\nhint: drop some of the words, or widen the pattern");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("dup blank", () => {
    const text = "grammar g\nstart A\nspace \"\"\nblank N = \" \"\ntoken N = /[a-z]+/ as text\nsort A { a(x: N) = x; }\n";
    expect(report(text)).toBe("g.twg:5:7: error: token class `N` has the same name as the blank declared at 4:7\n5 | token N = /[a-z]+/ as text\n  |       ^\nhint: sorts, token classes, name sets, kind families and blanks share one namespace; rename one of them\n\ng.twg:6:15: error: field `x` has type `N`, which is a blank\n6 | sort A { a(x: N) = x; }\n  |               ^\nhint: a blank is not a value: place it in the layout (`l Ws r`) instead of declaring a field");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });


});

describe('filler diagnostics', () => {
  it("filler-not-closed", () => {
    const text = "grammar g\nstart A\nspace \" \"\nfiller /#[^\\n]*/\ntoken N = /[a-z]+/ as text\nsort A { a(x: N) = x; }\n";
    expect(report(text)).toBe("g.twg:4:1: error: filler matches \"#\" and also the longer \"# \": where it ends is not decided by its own text\n4 | filler /#[^\\n]*/\n  | ^~~~~~~~~~~~~~~~\nhint: end every match with a delimiter, e.g. `filler /#[^\\n]*\\n/` (a comment up to and including the line break)");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("filler-clash literal", () => {
    const text = "grammar g\nstart A\nspace \" \"\nfiller /;/\ntoken N = /[a-z]+/ as text\nsort A { a(x: N+) = x sep \";\"; }\n";
    expect(report(text)).toBe("g.twg:4:1: error: filler can begin with \";\", and so can the literal \";\"\n4 | filler /;/\n  | ^~~~~~~~~~\nhint: a filler must begin with a character nothing else of the grammar begins with (the parser skips filler before every token)");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("filler-clash token", () => {
    const text = "grammar g\nstart A\nspace \" \"\nfiller /-[^\\n]*\\n/\ntoken N = /-?[0-9]+/ as int\nsort A { a(x: N) = x; }\n";
    expect(report(text)).toBe("g.twg:4:1: error: filler can begin with \"-\", and so can token class `N`\n4 | filler /-[^\\n]*\\n/\n  | ^~~~~~~~~~~~~~~~~~\nhint: a filler must begin with a character nothing else of the grammar begins with (the parser skips filler before every token)");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("filler-clash space", () => {
    const text = "grammar g\nstart A\nspace \" \"\nfiller / +x/\ntoken N = /[a-z]+/ as text\nsort A { a(x: N) = x; }\n";
    expect(report(text)).toBe("g.twg:4:1: error: filler can begin with \" \", and so can the `space` characters\n4 | filler / +x/\n  | ^~~~~~~~~~~~\nhint: a filler must begin with a character nothing else of the grammar begins with (the parser skips filler before every token)");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("filler matches empty", () => {
    const text = "grammar g\nstart A\nspace \" \"\nfiller /#*/\ntoken N = /[a-z]+/ as text\nsort A { a(x: N) = x; }\n";
    expect(report(text)).toBe("g.twg:4:8: error: token class `filler` matches the empty string\n4 | filler /#*/\n  |        ^~~~\nhint: every lexeme must have at least one character: use `+` instead of `*`, or drop the `?`");
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });


});

describe('blank and except in the IR', () => {
  const text = [
    'grammar g',
    'start L',
    'space ""',
    'blank Ws = " \\t "',
    'token N = /[a-z]+/ as text except "on" "off"',
    'sort L { list(items: S+) = items sep (~Ws? "," Ws?); }',
    'sort S parens "(" ")" {',
    '  desc(l: S, r: S) = l Ws r @ infix left 1;',
    '  child(l: S, r: S) = l Ws? ">" ~Ws? r @ infix left 1;',
    '  leaf(n: N) = n;',
    '}',
    '',
  ].join('\n');
  const { grammar, diagnostics } = compileDescription(text, 'g.twg');

  it('compiles without diagnostics', () => {
    expect(diagnostics).toEqual([]);
    expect(grammar).not.toBeNull();
  });

  it('a blank keeps its distinct characters and reads runs of them', () => {
    const b = grammar!.blanks[0]!;
    expect(b.name).toBe('Ws');
    expect(b.chars).toBe(' \t');
    expect(b.regex.dfa.start).not.toBe(0);
  });

  it('layouts and separators carry the blanks', () => {
    const desc = grammar!.constructors.find((c) => c.name === 'desc')!;
    expect(desc.layout.map((i) => i.kind)).toEqual(['slot', 'blank', 'slot']);
    expect(desc.layout[1]).toMatchObject({ kind: 'blank', blank: 'Ws', optional: false, glue: false });
    const child = grammar!.constructors.find((c) => c.name === 'child')!;
    expect(child.layout[1]).toMatchObject({ kind: 'blank', optional: true, glue: false });
    expect(child.layout[3]).toMatchObject({ kind: 'blank', optional: true, glue: true });
    const list = grammar!.constructors.find((c) => c.name === 'list')!;
    expect(list.layout[0]).toMatchObject({
      kind: 'slot',
      sep: ',',
      sepBlanks: { before: { blank: 'Ws', optional: true, glue: true }, after: { blank: 'Ws', optional: true, glue: false } },
    });
    // a blank is not a keyword
    expect(grammar!.keywords).toEqual(['(', ')', ',', '>']);
  });

  it('except removes exactly the listed words from the class', () => {
    const n = grammar!.tokens[0]!;
    expect(n.except).toEqual(['on', 'off']);
    const accepts = (w: string) => {
      let s = n.regex.dfa.start;
      for (const b of new TextEncoder().encode(w)) s = n.regex.dfa.trans[s * 256 + b]!;
      return n.regex.dfa.accept[s] === 1;
    };
    expect(['on', 'off'].map(accepts)).toEqual([false, false]);
    expect(['o', 'of', 'one', 'offs', 'onto', 'x'].map(accepts)).toEqual([true, true, true, true, true, true]);
  });
});
