// Whole formatted diagnostics, word for word, for every check of the description compiler.
// The expected texts were reviewed line by line against the notation reference in README.md; the
// `file:line:col` convention and the caret excerpt are common practice for compilers (no source).
import { describe, expect, it } from 'vitest';
import { compileDescription, formatDiagnostics } from '../../src/description/index.ts';

function report(text: string): string {
  const { diagnostics } = compileDescription(text, 'g.twg');
  return formatDiagnostics(diagnostics, text);
}

function lines(...ls: string[]): string {
  return ls.join('\n');
}

describe('diagnostics', () => {
  it("syntax", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A {", "  a() = \"x\"", "}", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:6:1: error: expected \";\", \"@\", a name, a string literal or \"[\", found `}`",
        "6 | }",
        "  | ^",
        "hint: see the reference section of README.md for the notation",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("badEscape", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a() = \"\\q\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:17: error: invalid string literal: unknown escape `\\q`",
        "4 | sort A { a() = \"\\q\"; }",
        "  |                 ^~",
        "hint: string literals use JSON escapes: \\\" \\\\ \\/ \\b \\f \\n \\r \\t \\uXXXX",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("badRegex", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token T = /a(b/ as text", "sort A { a(t: T) = t; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:14: error: invalid regular expression: Unterminated group",
        "4 | token T = /a(b/ as text",
        "  |              ^",
        "hint: token patterns are ECMAScript regular expressions",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("badFlag", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token T = /a/g as text", "sort A { a(t: T) = t; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:14: error: regular expression flag `g` is not allowed",
        "4 | token T = /a/g as text",
        "  |              ^",
        "hint: only the flags `i` and `u` are accepted",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("emptyToken", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token T = /[a-z]*/ as text", "sort A { a(t: T) = t; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:11: error: token class `T` matches the empty string",
        "4 | token T = /[a-z]*/ as text",
        "  |           ^~~~~~~~",
        "hint: every lexeme must have at least one character: use `+` instead of `*`, or drop the `?`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("kind", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token T = /[a-z]+/ as integer", "sort A { a(t: T) = t; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:23: error: unknown value kind `integer`",
        "4 | token T = /[a-z]+/ as integer",
        "  |                       ^~~~~~~",
        "hint: expected one of `text`, `int`, `number`, `json-string`, `sql-string`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("missingStart", () => {
    const text = lines("grammar g", "space \" \"", "sort A { a() = \"x\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:1:9: error: the description has no `start` declaration",
        "1 | grammar g",
        "  |         ^",
        "hint: add `start SORT` naming the sort of a whole program",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("missingSpace", () => {
    const text = lines("grammar g", "start A", "sort A { a() = \"x\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:1:9: error: the description has no `space` declaration",
        "1 | grammar g",
        "  |         ^",
        "hint: add e.g. `space \" \\t\\r\\n\"` to say which characters may stand between tokens",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("dupStart", () => {
    const text = lines("grammar g", "start A", "start A", "space \" \"", "sort A { a() = \"x\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:3:1: error: a second `start` declaration",
        "3 | start A",
        "  | ^~~~~~~",
        "hint: the first one is at 2:7",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("dupSort", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a() = \"x\"; }", "sort A { b() = \"y\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:6: error: duplicate sort `A`",
        "5 | sort A { b() = \"y\"; }",
        "  |      ^",
        "hint: the first sort `A` is declared at 4:6",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("dupTypeName", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token A = /x/ as text", "sort A { a() = \"x\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:2:7: error: start `A` is a token class, not a sort",
        "2 | start A",
        "  |       ^",
        "hint: the start must name a sort",
        "",
        "g.twg:5:6: error: sort `A` has the same name as the token class declared at 4:7",
        "5 | sort A { a() = \"x\"; }",
        "  |      ^",
        "hint: sorts, token classes, name sets, kind families and blanks share one namespace; rename one of them",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("dupToken", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token T = /x/ as text", "token T = /y/ as text", "sort A { a(t: T) = t; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:7: error: duplicate token class `T`",
        "5 | token T = /y/ as text",
        "  |       ^",
        "hint: the first token class `T` is declared at 4:7",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("dupNames", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token T = /[a-z]+/ as text", "names N of T", "names N of T", "sort A { a(n: N) = n; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:6:7: error: duplicate name set `N`",
        "6 | names N of T",
        "  |       ^",
        "hint: the first name set `N` is declared at 5:7",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("dupCtor", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(b: B) = \"x\" b; }", "sort B { a() = \"y\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:10: error: duplicate constructor `a`",
        "5 | sort B { a() = \"y\"; }",
        "  |          ^",
        "hint: a constructor `a` is already declared at 4:10 (in sort `A`); constructor names are unique in the whole grammar",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("dupField", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: A?, x: A?) = \"x\" x; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:19: error: constructor `a` has two fields named `x`",
        "4 | sort A { a(x: A?, x: A?) = \"x\" x; }",
        "  |                   ^",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("undefinedStart", () => {
    const text = lines("grammar g", "start Querry", "space \" \"", "sort Query { a() = \"x\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:2:7: error: start sort `Querry` is not declared",
        "2 | start Querry",
        "  |       ^~~~~~",
        "hint: did you mean `Query`?",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("startNotSort", () => {
    const text = lines("grammar g", "start T", "space \" \"", "token T = /x/ as text", "sort A { a(t: T) = t; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:2:7: error: start `T` is a token class, not a sort",
        "2 | start T",
        "  |       ^",
        "hint: the start must name a sort",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("undefinedType", () => {
    const text = lines("grammar g", "start Expr", "space \" \"", "sort Expr { a(x: Exp?) = \"a\" x; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:18: error: unknown type `Exp`: not a sort, token class or name set",
        "4 | sort Expr { a(x: Exp?) = \"a\" x; }",
        "  |                  ^~~",
        "hint: did you mean `Expr`?",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("undefinedToken", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token Ident = /[a-z]+/ as text", "names N of Ident2", "sort A { a(t: Ident) = t; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:12: error: unknown token class `Ident2`",
        "5 | names N of Ident2",
        "  |            ^~~~~~",
        "hint: did you mean `Ident`?",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("namesOfSort", () => {
    const text = lines("grammar g", "start A", "space \" \"", "names N of A", "sort A { a() = \"x\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:12: error: `A` is a sort, not a token class",
        "4 | names N of A",
        "  |            ^",
        "hint: a name set is spelled by a token class: `names SET of TOKEN`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("unknownField", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: A?) = \"a\" y; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:21: error: layout of `a` omits field `x`",
        "4 | sort A { a(x: A?) = \"a\" y; }",
        "  |                     ^~~~~",
        "hint: add a slot `x` to the layout",
        "",
        "g.twg:4:25: error: layout of `a` names `y`, which is not one of its fields",
        "4 | sort A { a(x: A?) = \"a\" y; }",
        "  |                         ^",
        "hint: did you mean `x`?",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("fieldTwice", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: A?) = \"a\" x \"b\" x; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:31: error: layout of `a` writes field `x` a second time",
        "4 | sort A { a(x: A?) = \"a\" x \"b\" x; }",
        "  |                               ^",
        "hint: each field appears in exactly one slot",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("fieldMissing", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: A?, y: A?) = \"a\" x; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:28: error: layout of `a` omits field `y`",
        "4 | sort A { a(x: A?, y: A?) = \"a\" x; }",
        "  |                            ^~~~~",
        "hint: add a slot `y` to the layout",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("groupTwo", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: A?, y: A?) = \"a\" [ x \",\" y ]; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:32: error: an optional group must contain exactly one field slot, this one contains 2",
        "4 | sort A { a(x: A?, y: A?) = \"a\" [ x \",\" y ]; }",
        "  |                                ^~~~~~~~~~~",
        "hint: write `[ \"KEYWORD\" field ]` with one optional or list field",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("groupNone", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: A?) = \"a\" x [ \"b\" ]; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:27: error: an optional group must contain exactly one field slot, this one contains 0",
        "4 | sort A { a(x: A?) = \"a\" x [ \"b\" ]; }",
        "  |                           ^~~~~~~",
        "hint: write `[ \"KEYWORD\" field ]` with one optional or list field",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("groupRequired", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: B) = \"a\" [ \"b\" x ]; }", "sort B { b() = \"c\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:30: error: field `x` in an optional group is neither optional nor a list",
        "4 | sort A { a(x: B) = \"a\" [ \"b\" x ]; }",
        "  |                              ^",
        "hint: mark it optional (`x: T?`) or a list (`*`), or move it out of the group",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("nestedGroup", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: A?) = \"a\" [ \"b\" [ \"c\" ] x ]; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:31: error: an optional group cannot contain another group",
        "4 | sort A { a(x: A?) = \"a\" [ \"b\" [ \"c\" ] x ]; }",
        "  |                               ^~~~~~~",
        "hint: flatten the groups: each group holds one field",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("sepNonList", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: A?) = \"a\" [ x sep \",\" ]; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:29: error: `sep` on field `x`, which is not a list",
        "4 | sort A { a(x: A?) = \"a\" [ x sep \",\" ]; }",
        "  |                             ^~~~~~~",
        "hint: declare it a list (`x: T*` or `+`) or drop the separator",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("scopingSort", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(x: new A?) = \"a\" x; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:15: error: `new` on field `x`, whose type is a sort",
        "4 | sort A { a(x: new A?) = \"a\" x; }",
        "  |               ^~~",
        "hint: `new` and `bound` mark token-typed fields only",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("boundNoNew", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token V = /[a-z]+/ as text", "sort A { a(v: bound V) = \"a\" v; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:12: error: field `v` is `bound V`, but no field anywhere is `new V`",
        "5 | sort A { a(v: bound V) = \"a\" v; }",
        "  |            ^~~~~~~~~~",
        "hint: mark the field that introduces the variable as `new V`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("emptyLiteral", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a() = \"x\" \"\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:20: error: literal text is empty",
        "4 | sort A { a() = \"x\" \"\"; }",
        "  |                    ^~",
        "hint: remove it, or write the text it stands for",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("spaceLiteral", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a() = \"GROUP BY\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:16: error: literal text \"GROUP BY\" contains whitespace",
        "4 | sort A { a() = \"GROUP BY\"; }",
        "  |                ^~~~~~~~~~",
        "hint: write each word as its own literal: \"GROUP\" \"BY\"",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("tabLiteral", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a() = \"x\\ty\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:16: error: literal text \"x\\ty\" contains whitespace",
        "4 | sort A { a() = \"x\\ty\"; }",
        "  |                ^~~~~~",
        "hint: write each word as its own literal: \"GROUP\" \"BY\"",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("unproductive", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a(b: B) = \"a\" b; }", "sort B { b(a: A) = \"b\" a; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:6: error: sort `A` has no finite tree: every constructor needs a term of a sort that has none",
        "4 | sort A { a(b: B) = \"a\" b; }",
        "  |      ^",
        "hint: add a constructor whose required fields do not lead back to this sort, or make one of those fields optional or a `*` list",
        "",
        "g.twg:5:6: error: sort `B` has no finite tree: every constructor needs a term of a sort that has none",
        "5 | sort B { b(a: A) = \"b\" a; }",
        "  |      ^",
        "hint: add a constructor whose required fields do not lead back to this sort, or make one of those fields optional or a `*` list",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("unreachable", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a() = \"a\"; }", "sort B { b() = \"b\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:6: warning: sort `B` cannot occur in a tree of the start sort `A`",
        "5 | sort B { b() = \"b\"; }",
        "  |      ^",
        "hint: use it in a field, or remove it",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).not.toBeNull();
  });

  it("unboundedDigits", () => {
    // 2^53 = 9007199254740992 is the first integer past Number.MAX_SAFE_INTEGER (ECMA-262); every
    // 15-digit integer is below it. ECMAScript Number::toString prints 0.0000001 as 1e-7.
    const text = lines("grammar g", "start A", "space \" \"", "token Int = /[0-9]+/ as int", "token Num = /[0-9]{1,9}\\.[0-9]{1,7}/ as number", "token Ok = /-?[0-9]{1,9}(?:\\.[0-9]{1,6})?/ as number", "token Id = /[0-9]+/ as text", "sort A { a(i: Int, n: Num, o: Ok, d: Id) = \"a\" i n o d; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:1: warning: values of Int beyond 2^53 cannot be represented; bound the digits (e.g. [0-9]{1,15})",
        "4 | token Int = /[0-9]+/ as int",
        "  | ^~~~~~~~~~~~~~~~~~~~~~~~~~~",
        "",
        "g.twg:5:1: warning: values of Num with more than 15 digits, or more than 6 after the point, do not print back as written; bound the digits (e.g. [0-9]{1,9}(?:\\.[0-9]{1,6})?)",
        "5 | token Num = /[0-9]{1,9}\\.[0-9]{1,7}/ as number",
        "  | ^~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~~",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).not.toBeNull();
  });

  it("unboundedDigits: digits counted across groups, repetitions and classes", () => {
    const warned = (pattern: string, kind: string) =>
      compileDescription(lines("grammar g", "start A", "space \" \"", `token N = /${pattern}/ as ${kind}`, "sort A { a(n: N) = n; }", ''), 'g.twg').diagnostics.map((d) => d.code);
    expect(warned('[0-9]{1,15}', 'int')).toEqual([]);
    expect(warned('[0-9]{1,16}', 'int')).toEqual(['unbounded-digits']);
    expect(warned('(?:[0-9]{5}){3}', 'int')).toEqual([]);
    expect(warned('(?:[0-9]{5}){4}', 'int')).toEqual(['unbounded-digits']);
    expect(warned('[1-9][0-9]{1,7}[0-9]{1,8}', 'int')).toEqual(['unbounded-digits']);
    expect(warned('\\d+', 'int')).toEqual(['unbounded-digits']);
    expect(warned('[^a-z ]{1,20}', 'int')).toEqual(['unbounded-digits']);
    expect(warned('[^a-z]{1,20}', 'int')).toEqual(['token-starts-with-space']); // the space character is in the class
    expect(warned('0|[1-9][0-9]*', 'int')).toEqual(['unbounded-digits']);
    expect(warned('[0-9]{1,8}(?:[.][0-9]{1,6})?', 'number')).toEqual([]);
    expect(warned('[0-9]{1,8}(?:.[0-9]{1,7})?', 'number')).toEqual(['unbounded-digits']);
    expect(warned('[0-9]{1,12}\\.[0-9]{1,6}', 'number')).toEqual(['unbounded-digits']);
    expect(warned('[0-9]+', 'text')).toEqual([]);
  });

  it("identical", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token T = /[a-z]+/ as text", "sort A {", "  a(x: T) = \"(\" x \")\";", "  b(y: T) = \"(\" ~y ~\")\";", "}", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:7:3: error: constructors `a` and `b` of sort `A` have the same layout, so different trees print the same text",
        "7 |   b(y: T) = \"(\" ~y ~\")\";",
        "  |   ^",
        "hint: add literal text that tells them apart",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("sepBegins", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort A { list(items: B*) = \"[\" items sep \"-\" \"]\"; }", "sort B { neg(b: B) = \"-\" b; num(n: N) = n; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:32: error: separator \"-\" of list `items` can also begin an element (`B`)",
        "5 | sort A { list(items: B*) = \"[\" items sep \"-\" \"]\"; }",
        "  |                                ^~~~~~~~~~~~~",
        "hint: choose a separator that no element can begin or end with",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("sepEnds", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort A { list(items: B*) = \"[\" items sep \"!\" \"]\"; }", "sort B { fact(n: N) = n \"!\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:32: error: separator \"!\" of list `items` can also end an element (`B`)",
        "5 | sort A { list(items: B*) = \"[\" items sep \"!\" \"]\"; }",
        "  |                                ^~~~~~~~~~~~~",
        "hint: choose a separator that no element can begin or end with",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("sepToken", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token W = /[a-z]+/ as text", "sort A { list(items: W+) = items sep \"and\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:28: error: separator \"and\" of list `items` can also begin an element (`W`)",
        "5 | sort A { list(items: W+) = items sep \"and\"; }",
        "  |                            ^~~~~~~~~~~~~~~",
        "hint: choose a separator that no element can begin or end with",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("nullableElement", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { list(items: B*) = \"[\" items sep \",\" \"]\"; }", "sort B { b(x: A?) = x; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:32: error: list `items` has elements of `B`, which can print as nothing",
        "4 | sort A { list(items: B*) = \"[\" items sep \",\" \"]\"; }",
        "  |                                ^~~~~~~~~~~~~",
        "hint: give every constructor of the element sort some text, or make the list a single optional field",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("adjacentTokens", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort A { list(items: N*) = \"[\" items \"]\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:32: error: list `items` has no separator and its elements can run together: two N lexemes in a row can read as one",
        "5 | sort A { list(items: N*) = \"[\" items \"]\"; }",
        "  |                                ^~~~~",
        "hint: add a separator: `items sep \",\"`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("adjacentToken", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort A { list(items: B*) = \"[\" items \"]\"; }", "sort B { b(n: N) = n \"!\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:32: error: list `items` has no separator and its elements can run together: an element can begin with a N token",
        "5 | sort A { list(items: B*) = \"[\" items \"]\"; }",
        "  |                                ^~~~~",
        "hint: add a separator: `items sep \",\"`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("adjacentInner", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort A { list(items: B*) = \"[\" items \"]\"; }", "sort B { b(n: N, c: C?) = \"let\" n c; }", "sort C { c() = \"let\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:32: error: list `items` has no separator and its elements can run together: \"let\", which begins an element, can also occur inside one",
        "5 | sort A { list(items: B*) = \"[\" items \"]\"; }",
        "  |                                ^~~~~",
        "hint: add a separator: `items sep \",\"`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("adjacentRecursive", () => {
    const text = lines("grammar g", "start A", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort A { list(items: B*) = \"[\" items \"]\"; }", "sort B { b(n: N, c: B?) = \"let\" n \"in\" c; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:32: error: list `items` has no separator and its elements can run together: an element (`B`) can contain another one",
        "5 | sort A { list(items: B*) = \"[\" items \"]\"; }",
        "  |                                ^~~~~",
        "hint: add a separator: `items sep \",\"`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("leftDirect", () => {
    const text = lines("grammar g", "start E", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort E { add(l: E, r: E) = l \"+\" r; num(n: N) = n; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:28: error: constructor `add` is left-recursive: its layout begins with field `l` of its own sort `E`",
        "5 | sort E { add(l: E, r: E) = l \"+\" r; num(n: N) = n; }",
        "  |                            ^",
        "hint: declare it `@ infix left P` (or `@ postfix P`), or begin its layout with literal text",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("leftIndirect", () => {
    const text = lines("grammar g", "start E", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort E { call(f: F) = f \"()\"; num(n: N) = n; }", "sort F { fn(e: E) = e \".\" \"f\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:23: error: constructor `call` is left-recursive: its layout begins with field `f` of sort `F`, which can begin with a `E` again",
        "5 | sort E { call(f: F) = f \"()\"; num(n: N) = n; }",
        "  |                       ^",
        "hint: declare it `@ infix left P` (or `@ postfix P`), or begin its layout with literal text",
        "",
        "g.twg:6:21: error: constructor `fn` is left-recursive: its layout begins with field `e` of sort `E`, which can begin with a `F` again",
        "6 | sort F { fn(e: E) = e \".\" \"f\"; }",
        "  |                     ^",
        "hint: declare it `@ infix left P` (or `@ postfix P`), or begin its layout with literal text",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("infixShape", () => {
    const text = lines("grammar g", "start E", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort E parens \"(\" \")\" { add(l: E, r: E) = \"+\" l r @ infix left 10; num(n: N) = n; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:43: error: layout of `add` does not fit `infix`: an infix layout begins and ends with a required field of sort `E` and has literal text between them",
        "5 | sort E parens \"(\" \")\" { add(l: E, r: E) = \"+\" l r @ infix left 10; num(n: N) = n; }",
        "  |                                           ^~~~~~~",
        "hint: e.g. `left \"+\" right @ infix left 10` with both fields of this sort",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("prefixShape", () => {
    const text = lines("grammar g", "start E", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort E parens \"(\" \")\" { neg(o: E) = o \"-\" @ prefix 10; num(n: N) = n; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:37: error: layout of `neg` does not fit `prefix`: a prefix layout begins with literal text and ends with a required field of sort `E`",
        "5 | sort E parens \"(\" \")\" { neg(o: E) = o \"-\" @ prefix 10; num(n: N) = n; }",
        "  |                                     ^~~~~",
        "hint: e.g. `\"-\" operand @ prefix 30` with the field of this sort",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("postfixShape", () => {
    const text = lines("grammar g", "start E", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort E parens \"(\" \")\" { fact(o: E) = \"!\" o @ postfix 10; num(n: N) = n; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:38: error: layout of `fact` does not fit `postfix`: a postfix layout begins with a required field of sort `E` and ends with literal text",
        "5 | sort E parens \"(\" \")\" { fact(o: E) = \"!\" o @ postfix 10; num(n: N) = n; }",
        "  |                                      ^~~~~",
        "hint: e.g. `operand \"!\" @ postfix 40` with the field of this sort",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("noParens", () => {
    const text = lines("grammar g", "start E", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort E { add(l: E, r: E) = l \"+\" r @ infix left 10; num(n: N) = n; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:5:6: error: sort `E` has operators but no `parens`",
        "5 | sort E { add(l: E, r: E) = l \"+\" r @ infix left 10; num(n: N) = n; }",
        "  |      ^",
        "hint: declare the brackets: `sort E parens \"(\" \")\" { ... }`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("assocConflict", () => {
    const text = lines("grammar g", "start E", "space \" \"", "token N = /[0-9]{1,9}/ as int", "sort E parens \"(\" \")\" {", "  add(l: E, r: E) = l \"+\" r @ infix left 10;", "  sub(l: E, r: E) = l \"-\" r @ infix right 10;", "  num(n: N) = n;", "}", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:7:29: error: infix operators `add` and `sub` share precedence 10 but not associativity",
        "7 |   sub(l: E, r: E) = l \"-\" r @ infix right 10;",
        "  |                             ^~~~~~~~~~~~~~~~",
        "hint: give operators of one precedence the same associativity, or different precedences",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("loneSurrogate", () => {
    const text = lines("grammar g", "start A", "space \" \"", "sort A { a() = \"\\ud800\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:4:16: error: literal text contains a lone surrogate",
        "4 | sort A { a() = \"\\ud800\"; }",
        "  |                ^~~~~~~~",
        "hint: write the whole character (both halves of the surrogate pair)",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it("spaceNotWhitespace", () => {
    const text = lines("grammar g", "start A", "space \" _\"", "sort A { a() = \"x\"; }", '');
    expect(report(text)).toBe(
      lines(
        "g.twg:3:7: error: `space` lists \"_\", which is not a whitespace character",
        "3 | space \" _\"",
        "  |       ^~~~",
        "hint: list only whitespace characters, e.g. `space \" \\t\\r\\n\"`",
      ),
    );
    expect(compileDescription(text, 'g.twg').grammar).toBeNull();
  });

  it('a valid description has no diagnostics and every check ran on it', () => {
    const text = lines('grammar g', 'start A', 'space " "', 'sort A { a() = "x"; }', '');
    expect(report(text)).toBe('');
    expect(compileDescription(text, 'g.twg').grammar?.keywords).toEqual(['x']);
  });

  it('collects several errors in one run, errors before warnings, in source order', () => {
    const text = lines(
      'grammar g',
      'start A',
      'space " "',
      'sort A { a(x: Nope) = "a" x; b(y: A?) = "b" z; }',
      'sort A { c() = "c"; }',
      '',
    );
    const codes = compileDescription(text, 'g.twg').diagnostics.map((d) => d.code);
    expect(codes).toEqual(['undefined-type', 'field-missing-from-layout', 'unknown-layout-field', 'duplicate-sort']);
  });

  it('unknown layout name far from every field lists the fields', () => {
    const text = lines('grammar g', 'start A', 'space " "', 'sort A { a(orchard: A?) = "a" orchard q; }', '');
    expect(report(text)).toBe(
      lines(
        'g.twg:4:39: error: layout of `a` names `q`, which is not one of its fields',
        '4 | sort A { a(orchard: A?) = "a" orchard q; }',
        '  |                                       ^',
        'hint: its fields are `orchard`; write literal text in quotes',
      ),
    );
  });

  it('a transposed field name is one edit away', () => {
    const text = lines('grammar g', 'start A', 'space " "', 'sort A { a(left: A?, right: A?) = left "+" rigth; }', '');
    expect(compileDescription(text, 'g.twg').diagnostics.map((d) => [d.code, d.hint])).toEqual([
      ['field-missing-from-layout', 'add a slot `right` to the layout'],
      ['unknown-layout-field', 'did you mean `right`?'],
    ]);
  });
});
