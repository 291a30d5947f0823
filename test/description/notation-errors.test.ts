// Syntax errors of the description notation: whole formatted messages, word for word, one per
// condition of src/description/notation-errors.ts. None may show the parsing library's own wording
// or the notation grammar's internal rule names. The `file:line:col` convention and the caret
// excerpt are common practice for compilers (no source).
import { describe, expect, it } from 'vitest';
import { compileDescription, formatDiagnostics } from '../../src/description/index.ts';
import { declarationKeywords, scanLiterals } from '../../src/description/notation-errors.ts';
import { notationGrammar } from '../../src/description/notation.ts';

const HEAD = 'grammar g\nstart A\nspace " "\n';

function report(text: string): { code: string | undefined; text: string } {
  const { diagnostics, grammar } = compileDescription(text, 'g.twg');
  expect(grammar).toBeNull();
  return { code: diagnostics[0]?.code, text: formatDiagnostics(diagnostics, text) };
}

const lines = (...ls: string[]) => ls.join('\n');

describe('notation syntax errors', () => {
  it('the declaration keywords are read from the notation grammar', () => {
    expect(declarationKeywords()).toEqual(['start', 'space', 'blank', 'filler', 'token', 'names', 'kinds', 'sort']);
  });

  it('not-a-declaration: a keyword with extra letters is reported as one word, with the closest keyword', () => {
    expect(report(HEAD + 'sortt A { a() = "x"; }\n')).toEqual({
      code: 'not-a-declaration',
      text: lines(
        'g.twg:4:1: error: `sortt` is not a declaration; expected start, space, blank, filler, token, names, kinds or sort',
        '4 | sortt A { a() = "x"; }',
        '  | ^~~~~',
        'hint: did you mean `sort`?',
      ),
    });
  });

  it('not-a-declaration: a misspelt keyword', () => {
    expect(report(HEAD + 'srot A { a() = "x"; }\n').text).toBe(
      lines(
        'g.twg:4:1: error: `srot` is not a declaration; expected start, space, blank, filler, token, names, kinds or sort',
        '4 | srot A { a() = "x"; }',
        '  | ^~~~',
        'hint: did you mean `sort`?',
      ),
    );
  });

  it('not-a-declaration: stray punctuation between declarations', () => {
    expect(report(HEAD + 'sort A { a() = "x"; }\n}\n')).toEqual({
      code: 'not-a-declaration',
      text: lines(
        'g.twg:5:1: error: `}` is not a declaration; expected start, space, blank, filler, token, names, kinds or sort',
        '5 | }',
        '  | ^',
        'hint: every declaration after the `grammar` line begins with one of these words; see the reference section of README.md',
      ),
    });
  });

  it('unclosed-string, at the opening quote', () => {
    expect(report('grammar g\nstart A\nspace " \nsort A { a() = "x"; }\n')).toEqual({
      code: 'unclosed-string',
      text: lines(
        'g.twg:3:7: error: string literal is not closed on its line',
        '3 | space " ',
        '  |       ^~',
        'hint: end it with `"`; a string literal stays on one line (write `\\n` for a line break, `\\"` for a quote)',
      ),
    });
  });

  it('unclosed-string: an escaped quote does not close it', () => {
    expect(report(HEAD + 'sort A { a() = "x\\"; }\n').code).toBe('unclosed-string');
  });

  it('unclosed-regex', () => {
    expect(report(HEAD + 'token T = /[a-z]+ as text\nsort A { a(t: T) = t; }\n')).toEqual({
      code: 'unclosed-regex',
      text: lines(
        'g.twg:4:11: error: regular expression is not closed on its line',
        '4 | token T = /[a-z]+ as text',
        '  |           ^~~~~~~~~~~~~~~',
        'hint: end it with `/`; write `\\/` for a slash inside it',
      ),
    });
  });

  it('unclosed-regex-class: a slash inside [...] does not end the pattern', () => {
    expect(report(HEAD + 'token T = /[a-z/ as text\nsort A { a(t: T) = t; }\n')).toEqual({
      code: 'unclosed-regex-class',
      text: lines(
        'g.twg:4:12: error: character class `[` is not closed on its line',
        '4 | token T = /[a-z/ as text',
        '  |            ^~~~~~~~~~~~~',
        'hint: end it with `]`; inside `[...]` a `/` does not end the regular expression, and `\\]` stands for a bracket',
      ),
    });
  });

  it('empty-regex', () => {
    expect(report(HEAD + 'token T = // as text\nsort A { a(t: T) = t; }\n')).toEqual({
      code: 'empty-regex',
      text: lines(
        'g.twg:4:11: error: empty regular expression `//`',
        '4 | token T = // as text',
        '  |           ^~',
        'hint: a token pattern needs at least one character between the slashes; comments start with `#`',
      ),
    });
  });

  it('syntax: a list of what may come next, in our words', () => {
    expect(report(HEAD + 'sort A { a(x: ) = "x"; }\n').text).toBe(
      lines(
        'g.twg:4:15: error: expected a name, "known", "enter", "bound" or "new", found `)`',
        '4 | sort A { a(x: ) = "x"; }',
        '  |               ^',
        'hint: see the reference section of README.md for the notation',
      ),
    );
    expect(report(HEAD + 'sort A { a() = "x" @ infix lft 12; }\n').text).toBe(
      lines(
        'g.twg:4:28: error: expected left, right or none, found `lft`',
        '4 | sort A { a() = "x" @ infix lft 12; }',
        '  |                            ^~~',
        'hint: see the reference section of README.md for the notation',
      ),
    );
  });

  it('syntax: the end of the file, located after the last text', () => {
    expect(report(HEAD + 'token T = /a/ as \n\n').text).toBe(
      lines(
        'g.twg:4:17: error: expected a value kind, found the end of the file',
        '4 | token T = /a/ as ',
        '  |                 ^',
        'hint: see the reference section of README.md for the notation',
      ),
    );
  });

  it('syntax: a file that does not begin with its grammar line', () => {
    expect(report('start A\n').text).toBe(
      lines(
        'g.twg:1:1: error: expected "grammar", found `start`',
        '1 | start A',
        '  | ^~~~~',
        'hint: see the reference section of README.md for the notation',
      ),
    );
  });

  it('a comment, string or class may hold the characters that open the others', () => {
    expect(scanLiterals('# " / [\nspace "#/"\ntoken T = /[/"#]\\//u')).toBeNull();
  });

  it('no message shows an internal rule name or the library wording', () => {
    const internal = Object.keys(notationGrammar().rules).filter((r) => /[a-z][A-Z]|Decl|Kw$/.test(r));
    expect(internal.length).toBeGreaterThan(10);
    const cases = [
      'sortt', 'srot', 'sort A { a() = "x" }', 'sort A { a(x: T = "x"; }', 'token T = /a/ as', 'token T = /a/ as text reservedx',
      'names N off T', 'sort A parens "(" { }', 'sort A { a() = [ "x" ; }', 'sort A { a() = x sep ; }', 'sort A { a() = "x" @ prefix x; }',
      'start', 'space x', 'grammar h', 'token = /a/ as text', 'sort A { a(x: newT) = x; }', 'sort A { a() = ~ ; }',
    ];
    for (const c of cases) {
      const { text } = report(HEAD + c + '\n');
      const first = text.split('\n')[0]!;
      for (const r of internal) expect(first, c).not.toContain(r);
      expect(first, c).not.toMatch(/identPart|expected not |end of input|any object/);
    }
  });
});
