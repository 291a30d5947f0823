/**
 * Syntax tree → grammar IR, with every check that needs only one declaration or one constructor
 * at a time: names, types, literals, regular expressions, layouts, operator shapes. Whole-grammar
 * analyses (productivity, reachability, ambiguity, left recursion) live in analysis.ts and run on
 * the IR only when this pass found no error.
 */
import type {
  BlankClass,
  BlankUse,
  Filler,
  Cardinality,
  Constructor,
  Field,
  FieldType,
  Grammar,
  KindFamily,
  KindRef,
  KindSlot,
  LayoutItem,
  NameSet,
  Operator,
  Scoping,
  Sort,
  Span,
  TokenClass,
  ValueKind,
} from './ir.ts';
import * as E from './errors.ts';
import type { Diagnostic } from './errors.ts';
import type { CtorAst, DeclAst, DescriptionAst, Ident, ItemAst, RegexLit, SepPartAst, StrLit } from './syntax.ts';
import { lineColumn } from '../util/source.ts';
import { compileTokenRegex, nullable, runDfa, withoutWords, type TokenRegex } from './regex/index.ts';

const VALUE_KINDS: readonly ValueKind[] = ['text', 'int', 'number', 'json-string', 'sql-string'];

type TypeKind = 'sort' | 'token class' | 'name set' | 'kind family' | 'blank';

/** Decodes a JSON string literal; on failure the offset (absolute) and a description of the problem. */
export function decodeString(lit: StrLit): { value: string } | { at: Span; detail: string } {
  const raw = lit.raw;
  const base = lit.span.start;
  for (let i = 1; i < raw.length - 1; i++) {
    const c = raw.charCodeAt(i);
    if (c < 0x20) {
      return { at: { start: base + i, end: base + i + 1 }, detail: 'control character must be escaped' };
    }
    if (c === 92 /* \ */) {
      const n = raw[i + 1] ?? '';
      if (n === 'u') {
        if (!/^[0-9A-Fa-f]{4}$/.test(raw.slice(i + 2, i + 6))) {
          return { at: { start: base + i, end: base + Math.min(i + 6, raw.length - 1) }, detail: '`\\u` must be followed by four hex digits' };
        }
        i += 5;
      } else if ('"\\/bfnrt'.includes(n) && n !== '') {
        i += 1;
      } else {
        return { at: { start: base + i, end: base + i + 2 }, detail: `unknown escape \`\\${n}\`` };
      }
    }
  }
  return { value: JSON.parse(raw) as string };
}

/** No lone surrogates (String.prototype.isWellFormed, written out for older type libraries). */
function isWellFormed(s: string): boolean {
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c >= 0xd800 && c <= 0xdbff) {
      const d = s.charCodeAt(i + 1);
      if (!(d >= 0xdc00 && d <= 0xdfff)) return false;
      i++;
    } else if (c >= 0xdc00 && c <= 0xdfff) return false;
  }
  return true;
}

/**
 * Edit distance with adjacent transpositions (optimal string alignment), for "did you mean" hints:
 * `rigth` is one edit from `right`.
 */
function distance(a: string, b: string): number {
  const w = b.length + 1;
  const d = new Array<number>((a.length + 1) * w);
  for (let i = 0; i <= a.length; i++) d[i * w] = i;
  for (let j = 0; j <= b.length; j++) d[j] = j;
  for (let i = 1; i <= a.length; i++) {
    for (let j = 1; j <= b.length; j++) {
      const cost = a[i - 1] === b[j - 1] ? 0 : 1;
      let v = Math.min(d[(i - 1) * w + j]! + 1, d[i * w + j - 1]! + 1, d[(i - 1) * w + j - 1]! + cost);
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) v = Math.min(v, d[(i - 2) * w + j - 2]! + 1);
      d[i * w + j] = v;
    }
  }
  return d[a.length * w + b.length]!;
}

/** The closest candidate within a third of the name's length in edits (at least one), or null. */
export function suggest(name: string, candidates: Iterable<string>): string | null {
  let best: string | null = null;
  let bestD = Infinity;
  for (const c of candidates) {
    const d = distance(name.toLowerCase(), c.toLowerCase());
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  return best !== null && bestD <= Math.max(1, Math.floor(name.length / 3)) ? best : null;
}

const CARDS: Record<string, Cardinality> = { '?': 'optional', '*': 'list', '+': 'nonempty' };

export interface CompiledParts {
  readonly grammar: Grammar | null;
  readonly diagnostics: Diagnostic[];
}

/** Builds the IR from the syntax tree; `grammar` is null when any error was found. */
export function buildGrammar(ast: DescriptionAst, text: string, file: string, hash: string): CompiledParts {
  const diags: Diagnostic[] = [];
  const at = (span: Span) => ({ file, span });
  const where = (span: Span) => {
    const { line, column } = lineColumn(text, span.start);
    return `${line}:${column}`;
  };
  /** decoded literal text, checked to be non-empty and without whitespace; null after an error */
  const literal = (lit: StrLit, isText: boolean): string | null => {
    const r = decodeString(lit);
    if ('detail' in r) {
      diags.push(E.badStringEscape(at(r.at), r.detail));
      return null;
    }
    if (!isWellFormed(r.value)) {
      diags.push(E.literalNotWellFormed(at(lit.span)));
      return null;
    }
    if (isText) {
      if (r.value === '') {
        diags.push(E.emptyLiteral(at(lit.span)));
        return null;
      }
      if (/\s/u.test(r.value)) {
        diags.push(E.literalWithSpace(at(lit.span), r.value));
        return null;
      }
    }
    return r.value;
  };

  // ---- pass 1: type names (sorts, token classes and name sets share one namespace)
  const typeKinds = new Map<string, { kind: TypeKind; span: Span }>();
  const declare = (name: string, kind: TypeKind, span: Span): boolean => {
    const prev = typeKinds.get(name);
    if (prev) {
      diags.push(E.duplicateType(at(span), kind, name, prev.kind, where(prev.span)));
      return false;
    }
    typeKinds.set(name, { kind, span });
    return true;
  };

  let start: { name: string; span: Span } | null = null;
  let space: string | null = null;
  let spaceSpan: Span | null = null;
  const tokens: TokenClass[] = [];
  const nameSetDecls: Extract<DeclAst, { kind: 'names' }>[] = [];
  const sortDecls: Extract<DeclAst, { kind: 'sort' }>[] = [];
  const kindFamilies: KindFamily[] = [];
  const tokenFamilyRefs: { family: Ident; token: string }[] = [];
  const blankDecls: Extract<DeclAst, { kind: 'blank' }>[] = [];
  const fillers: Filler[] = [];
  const tokenDecls = new Map<string, Extract<DeclAst, { kind: 'token' }>>();

  for (const d of ast.decls) {
    switch (d.kind) {
      case 'start':
        if (start) diags.push(E.duplicateDeclaration(at(d.span), 'start', where(start.span)));
        else start = { name: d.name.text, span: d.name.span };
        break;
      case 'space': {
        if (spaceSpan) {
          diags.push(E.duplicateDeclaration(at(d.span), 'space', where(spaceSpan)));
          break;
        }
        spaceSpan = d.span;
        space = literal(d.value, false);
        const odd = space === null ? undefined : [...space].find((ch) => !/\s/u.test(ch));
        if (odd !== undefined) {
          diags.push(E.spaceNotWhitespace(at(d.value.span), odd));
          space = null;
        }
        break;
      }
      case 'blank':
        if (declare(d.name.text, 'blank', d.name.span)) blankDecls.push(d);
        break;
      case 'filler': {
        const regex = compileRegex(d.regex, 'filler');
        if (regex !== null) fillers.push({ index: fillers.length, pattern: d.regex.body, flags: d.regex.flags, regex, span: d.span });
        break;
      }
      case 'token': {
        const ok = declare(d.name.text, 'token class', d.name.span);
        if (ok) tokenDecls.set(d.name.text, d);
        const tok = compileToken(d, tokens.length);
        if (ok && tok) tokens.push(tok);
        break;
      }
      case 'names':
        if (declare(d.name.text, 'name set', d.name.span)) nameSetDecls.push(d);
        break;
      case 'kinds':
        if (declare(d.name.text, 'kind family', d.name.span)) kindFamilies.push({ index: kindFamilies.length, name: d.name.text, span: d.span });
        break;
      case 'sort':
        if (declare(d.name.text, 'sort', d.name.span)) sortDecls.push(d);
        break;
    }
  }

  function compileToken(d: Extract<DeclAst, { kind: 'token' }>, index: number): TokenClass | null {
    let ok = true;
    const kind = d.valueKind.text;
    if (!(VALUE_KINDS as readonly string[]).includes(kind)) {
      diags.push(E.unknownValueKind(at(d.valueKind.span), kind));
      ok = false;
    }
    const regex = compileRegex(d.regex, d.name.text);
    if (!regex || !ok) return null;
    if (d.family) tokenFamilyRefs.push({ family: d.family, token: d.name.text });
    return {
      index,
      name: d.name.text,
      pattern: d.regex.body,
      flags: d.regex.flags,
      regex,
      value: kind as ValueKind,
      family: d.family?.text ?? null,
      reserved: d.reserved,
      except: [],
      span: d.span,
    };
  }

  /**
   * Parses and compiles a token regex through the regex front-end (./regex/): a syntax error, a
   * construct it cannot honour exactly, an automaton past its size limits, the empty string or an
   * empty language are located errors here, so nothing later can fail on the regex.
   */
  function compileRegex(r: RegexLit, token: string): TokenRegex | null {
    let ok = true;
    const seen = new Set<string>();
    for (let i = 0; i < r.flags.length; i++) {
      const f = r.flags[i]!;
      const span = { start: r.flagsSpan.start + i, end: r.flagsSpan.start + i + 1 };
      if (f !== 'i' && f !== 'u') {
        diags.push(E.badRegexFlag(at(span), f));
        ok = false;
      } else if (seen.has(f)) {
        diags.push(E.duplicateRegexFlag(at(span), f));
        ok = false;
      }
      seen.add(f);
    }
    if (!ok) return null;
    const inPattern = (offset: number, length: number): Span => {
      const start = r.bodySpan.start + Math.min(offset, Math.max(0, r.body.length - 1));
      return { start, end: Math.min(start + length, r.bodySpan.end) };
    };
    // the engine's own syntax check as well (compiling a RegExp runs nothing on any input)
    try {
      new RegExp(r.body, r.flags);
    } catch (e) {
      const msg = String((e as Error).message ?? e);
      const m = /: ([^:]*)$/.exec(msg);
      const parsed = compileTokenRegex(r.body, r.flags);
      const where = 'code' in parsed && parsed.code === 'bad-regex' ? inPattern(parsed.offset, parsed.length) : r.bodySpan;
      diags.push(E.badRegex(at(where), m ? m[1]!.trim() : msg));
      return null;
    }
    const compiled = compileTokenRegex(r.body, r.flags);
    if ('code' in compiled) {
      if (compiled.code === 'regex-too-large') diags.push(E.regexTooLarge(at(r.span), token, compiled.message));
      else if (compiled.code === 'bad-regex') diags.push(E.badRegex(at(inPattern(compiled.offset, compiled.length)), compiled.message));
      else diags.push(E.regexUnsupported(at(inPattern(compiled.offset, compiled.length)), token, compiled.message));
      return null;
    }
    if (nullable(compiled.rx)) {
      diags.push(E.regexMatchesEmpty(at(r.span), token));
      return null;
    }
    if (compiled.dfa.start === 0) {
      diags.push(E.tokenNoLexeme(at(r.span), token, false));
      return null;
    }
    return compiled;
  }

  // ---- grammar-level declarations
  const head = ast.grammar.span;
  if (!start) diags.push(E.missingStart(at(head)));
  else {
    const k = typeKinds.get(start.name);
    if (!k) diags.push(E.undefinedStart(at(start.span), start.name, suggest(start.name, sortDecls.map((s) => s.name.text))));
    else if (k.kind !== 'sort') diags.push(E.startNotSort(at(start.span), start.name, k.kind));
  }
  if (!spaceSpan) diags.push(E.missingSpace(at(head)));

  // blanks: whitespace characters outside `space`, compiled to the run [chars]+ by the regex front-end
  const blanks: BlankClass[] = [];
  for (const d of blankDecls) {
    const chars = literal(d.value, false);
    if (chars === null) continue;
    if (chars === '') {
      diags.push(E.blankEmpty(at(d.value.span), d.name.text));
      continue;
    }
    const odd = [...chars].find((ch) => !/\s/u.test(ch));
    if (odd !== undefined) {
      diags.push(E.blankNotWhitespace(at(d.value.span), d.name.text, odd));
      continue;
    }
    const shared = [...chars].find((ch) => (space ?? '').includes(ch));
    if (shared !== undefined) {
      diags.push(E.blankInSpace(at(d.value.span), d.name.text, shared));
      continue;
    }
    const unique = [...new Set(chars)];
    const pattern = `[${unique.map((ch) => `\\u{${ch.codePointAt(0)!.toString(16)}}`).join('')}]+`;
    const regex = compileTokenRegex(pattern, 'u');
    if ('code' in regex) throw new Error(`blank ${d.name.text}: ${regex.message}`); // whitespace sets always compile
    blanks.push({ index: blanks.length, name: d.name.text, chars: unique.join(''), regex, span: d.span });
  }
  const blankByName = new Map(blanks.map((b) => [b.name, b]));

  const familyNames = kindFamilies.map((f) => f.name);
  /** true when `id` names a kind family; otherwise reports what it is */
  const checkFamily = (id: Ident): boolean => {
    const k = typeKinds.get(id.text);
    if (!k) diags.push(E.undefinedFamily(at(id.span), id.text, suggest(id.text, familyNames)));
    else if (k.kind !== 'kind family') diags.push(E.notAFamily(at(id.span), id.text, k.kind));
    return k?.kind === 'kind family';
  };
  for (const r of tokenFamilyRefs) checkFamily(r.family);

  const tokenNames = new Set(tokens.map((t) => t.name));
  const nameSets: NameSet[] = [];
  for (const d of nameSetDecls) {
    const k = typeKinds.get(d.token.text);
    if (!k) {
      diags.push(E.undefinedToken(at(d.token.span), d.token.text, suggest(d.token.text, tokenNames)));
      continue;
    }
    if (k.kind !== 'token class') {
      diags.push(E.namesOfNonToken(at(d.token.span), d.token.text, k.kind));
      continue;
    }
    let owner: string | null = null;
    if (d.owner) {
      const o = typeKinds.get(d.owner.text);
      const setNames = nameSetDecls.map((n) => n.name.text);
      if (!o) diags.push(E.undefinedOwner(at(d.owner.span), d.owner.text, suggest(d.owner.text, setNames)));
      else if (o.kind !== 'name set') diags.push(E.ownerNotNameSet(at(d.owner.span), d.owner.text, o.kind));
      else if (d.owner.text === d.name.text) diags.push(E.ownerIsSelf(at(d.owner.span), d.name.text));
      else owner = d.owner.text;
    }
    const slots: KindSlot[] = [];
    if (d.slots) {
      if (d.slots.length === 0) diags.push(E.emptySlots(at(d.slotsSpan!), d.name.text));
      for (const sd of d.slots) {
        if (slots.some((x) => x.name === sd.name.text)) {
          diags.push(E.duplicateSlot(at(sd.name.span), sd.name.text, d.name.text));
          continue;
        }
        if (checkFamily(sd.family)) slots.push({ index: slots.length, name: sd.name.text, family: sd.family.text, span: sd.span });
      }
    }
    nameSets.push({ index: nameSets.length, name: d.name.text, token: d.token.text, owner, slots, span: d.span });
  }
  // owner chains must end (a set cannot own itself through others)
  for (const ns of nameSets) {
    const seen = new Set<string>([ns.name]);
    for (let o = ns.owner; o !== null; o = nameSets.find((n) => n.name === o)?.owner ?? null) {
      if (seen.has(o)) {
        diags.push(E.ownerCycle(at(ns.span), ns.name, [...seen, o].join(' → ')));
        break;
      }
      seen.add(o);
    }
  }
  const nameSetByName = new Map(nameSets.map((n) => [n.name, n]));
  const tokenByName = new Map(tokens.map((t) => [t.name, t]));
  const sortFamily = new Map<string, string | null>();
  for (const sd of sortDecls) sortFamily.set(sd.name.text, sd.family && checkFamily(sd.family) ? sd.family.text : null);

  // ---- sorts and constructors
  const sorts: Sort[] = [];
  const constructors: Constructor[] = [];
  const ctorFirst = new Map<string, { sort: string; span: Span }>();
  const keywords = new Set<string>();

  for (const sd of sortDecls) {
    const sortName = sd.name.text;
    let parens: Sort['parens'] = null;
    if (sd.parens) {
      const open = literal(sd.parens.open, true);
      const close = literal(sd.parens.close, true);
      if (open !== null && close !== null) {
        parens = { open, close };
        keywords.add(open);
        keywords.add(close);
      }
    }
    const names: string[] = [];
    let hasOperator = false;
    const infixByPrecedence = new Map<number, { ctor: string; assoc: string }>();
    for (const cd of sd.ctors) {
      const prev = ctorFirst.get(cd.name.text);
      if (prev) {
        diags.push(E.duplicateConstructor(at(cd.name.span), cd.name.text, prev.sort, where(prev.span)));
        continue;
      }
      ctorFirst.set(cd.name.text, { sort: sortName, span: cd.name.span });
      const ctor = compileCtor(cd, sortName, constructors.length);
      if (cd.operator) {
        hasOperator = true;
        if (ctor?.operator?.fixity === 'infix') {
          const other = infixByPrecedence.get(ctor.operator.precedence);
          if (other && other.assoc !== ctor.operator.assoc) {
            diags.push(E.associativityConflict(at(cd.operator.span), ctor.name, other.ctor, ctor.operator.precedence));
          } else if (!other) infixByPrecedence.set(ctor.operator.precedence, { ctor: ctor.name, assoc: ctor.operator.assoc });
        }
      }
      if (ctor) {
        constructors.push(ctor);
        names.push(ctor.name);
      }
    }
    if (hasOperator && !sd.parens) diags.push(E.operatorWithoutParens(at(sd.name.span), sortName));
    sorts.push({ index: sorts.length, name: sortName, constructors: names, parens, family: sortFamily.get(sortName) ?? null, span: sd.span });
  }

  /** A separator's parts: one text, at most one blank before and one after it. */
  function separator(parts: readonly SepPartAst[], span: Span): { text: string; glue: boolean; before: BlankUse | null; after: BlankUse | null } | null {
    const texts = parts.filter((p) => p.kind === 'text');
    if (texts.length !== 1) {
      diags.push(E.badSeparator(at(span), texts.length === 0 ? 'has no text' : `has ${texts.length} texts`));
      return null;
    }
    const ti = parts.indexOf(texts[0]!);
    if (ti > 1 || parts.length - ti > 2) {
      diags.push(E.badSeparator(at(span), 'has more than one blank on one side of its text'));
      return null;
    }
    const use = (p: SepPartAst | undefined): BlankUse | null | false => {
      if (p === undefined) return null;
      if (p.kind !== 'blank') return false;
      if (!blankByName.has(p.name.text)) {
        const k = typeKinds.get(p.name.text);
        if (k === undefined) diags.push(E.unknownBlank(at(p.name.span), p.name.text, suggest(p.name.text, blankByName.keys())));
        else diags.push(E.badSeparator(at(p.name.span), `names the ${k.kind} ${'`' + p.name.text + '`'}, which is not a blank`));
        return false;
      }
      if (p.glue && !p.optional) {
        diags.push(E.glueOnRequiredBlank(at(p.span), p.name.text));
        return false;
      }
      return { blank: p.name.text, optional: p.optional, glue: p.glue };
    };
    const before = use(ti === 1 ? parts[0] : undefined);
    const after = use(parts[ti + 1]);
    const lit = literal((texts[0] as Extract<SepPartAst, { kind: 'text' }>).lit, true);
    if (before === false || after === false || lit === null) return null;
    // `sep ~","` glues the text to the element before it; with a blank before the text, that blank decides
    return { text: lit, glue: texts[0]!.glue, before, after };
  }

  /**
   * Blanks stand between two items of one layout and never meet another blank where one of them is
   * required (a run of blanks cannot be split between two places, and the parser reads runs
   * greedily). Scans the layout keeping the blanks that can stand directly before the current
   * position (only empty items between); a group is present or absent as a whole.
   */
  function checkBlankPlacement(layout: readonly LayoutItem[], fields: Map<string, Field>, ctor: string): void {
    type Pending = { name: string; optional: boolean } | 'start';
    const scan = (list: readonly LayoutItem[], pending: Pending[]): Pending[] => {
      for (const it of list) {
        if (it.kind === 'blank') {
          for (const p of pending) {
            if (p === 'start') diags.push(E.blankAtLayoutEdge(at(it.span), it.blank, ctor, 'start'));
            else if (!p.optional || !it.optional) diags.push(E.blanksMeet(at(it.span), it.blank, p.name));
            if (p === 'start' || !p.optional || !it.optional) break;
          }
          pending = [{ name: it.blank, optional: it.optional }];
        } else if (it.kind === 'text') pending = [];
        else if (it.kind === 'slot') {
          const f = fields.get(it.field);
          if (f && (f.card === 'one' || f.card === 'nonempty')) pending = [];
        } else {
          const inner = scan(it.items, pending);
          pending = [...pending, ...inner.filter((p) => !pending.includes(p))];
        }
      }
      return pending;
    };
    const end = scan(layout, ['start']);
    const last = end.find((p): p is { name: string; optional: boolean } => p !== 'start');
    if (last !== undefined) {
      const item = findLastBlank(layout, last.name);
      diags.push(E.blankAtLayoutEdge(at(item ?? layout[layout.length - 1]!.span), last.name, ctor, 'end'));
    }
  }
  function findLastBlank(list: readonly LayoutItem[], name: string): Span | null {
    for (let i = list.length - 1; i >= 0; i--) {
      const it = list[i]!;
      if (it.kind === 'blank' && it.blank === name) return it.span;
      if (it.kind === 'when') {
        const s = findLastBlank(it.items, name);
        if (s !== null) return s;
      }
    }
    return null;
  }

  function compileCtor(cd: CtorAst, sortName: string, index: number): Constructor | null {
    const before = diags.length;
    const fields: Field[] = [];
    const byName = new Map<string, Field>();
    for (const fd of cd.fields) {
      if (byName.has(fd.name.text)) {
        diags.push(E.duplicateField(at(fd.name.span), fd.name.text, cd.name.text));
        continue;
      }
      const k = typeKinds.get(fd.type.text);
      if (!k) {
        diags.push(E.undefinedType(at(fd.type.span), fd.type.text, suggest(fd.type.text, typeKinds.keys())));
        continue;
      }
      const type: FieldType =
        k.kind === 'sort'
          ? { kind: 'sort', name: fd.type.text }
          : k.kind === 'token class'
            ? { kind: 'token', name: fd.type.text }
            : { kind: 'names', name: fd.type.text };
      if (k.kind === 'kind family') {
        diags.push(E.familyAsFieldType(at(fd.type.span), fd.type.text, fd.name.text));
        continue;
      }
      if (k.kind === 'blank') {
        diags.push(E.blankAsFieldType(at(fd.type.span), fd.type.text, fd.name.text));
        continue;
      }
      let scoping: Scoping = 'none';
      if (fd.scoping) {
        const marker = fd.scoping.text;
        if ((marker === 'new' || marker === 'bound') && k.kind !== 'token class') {
          diags.push(E.scopingOnNonToken(at(fd.scoping.span), marker, fd.name.text, k.kind));
          continue;
        }
        if ((marker === 'enter' || marker === 'known') && k.kind !== 'name set') {
          diags.push(E.scopeMarkerOnNonNames(at(fd.scoping.span), marker, fd.name.text, k.kind));
          continue;
        }
        scoping = marker === 'new' ? 'binds' : marker === 'bound' ? 'bound' : marker === 'enter' ? 'enters' : 'known';
      }
      let family: string | null = null;
      if (type.kind === 'sort') family = sortFamily.get(type.name) ?? null;
      else if (type.kind === 'token') family = scoping === 'binds' || scoping === 'bound' ? (tokenByName.get(type.name)?.family ?? null) : null;
      else {
        const slots = nameSetByName.get(type.name)?.slots ?? [];
        family = slots.length === 1 ? slots[0]!.family : null;
      }
      const field: Field = {
        index: fields.length,
        name: fd.name.text,
        type,
        card: fd.card ? CARDS[fd.card.text]! : 'one',
        scoping,
        by: fd.by?.text ?? null,
        kindOf: null,
        family,
        span: fd.span,
      };
      fields.push(field);
      byName.set(field.name, field);
    }
    // `by` and `kind` clauses refer to other fields: checked once every field is known
    for (let i = 0; i < fields.length; i++) {
      const f = fields[i]!;
      const fd = cd.fields.find((x) => x.name.text === f.name)!;
      if (fd.by) {
        const set = f.type.kind === 'names' ? nameSetByName.get(f.type.name) : undefined;
        const target = byName.get(fd.by.text);
        if (f.scoping !== 'known') diags.push(E.byWithoutKnown(at(fd.by.span), f.name));
        else if (!set || set.owner === null) diags.push(E.byWithoutOwner(at(fd.by.span), f.name, f.type.name));
        else if (!target) diags.push(E.unknownByField(at(fd.by.span), fd.by.text, cd.name.text, suggest(fd.by.text, byName.keys())));
        else if (target.type.kind !== 'names' || target.type.name !== set.owner || target.card === 'list' || target.card === 'nonempty') {
          diags.push(E.byFieldType(at(fd.by.span), fd.by.text, set.owner));
        }
      }
      if (fd.kindOf) {
        const ref = kindRef(fd.kindOf, f);
        if (ref) fields[i] = { ...f, kindOf: ref };
      }
    }
    function kindRef(k: NonNullable<(typeof cd.fields)[number]['kindOf']>, f: Field): KindRef | null {
      if (f.family === null) {
        diags.push(E.fieldWithoutKind(at(k.span), f.name, whyNoKind(f)));
        return null;
      }
      if (k.field.text === 'self' && k.slot === null && !byName.has('self')) {
        const fam = sortFamily.get(sortName) ?? null;
        if (fam === null) {
          diags.push(E.selfWithoutKind(at(k.span), sortName));
          return null;
        }
        if (fam !== f.family) {
          diags.push(E.familyMismatch(at(k.span), f.name, f.family, 'the node', fam));
          return null;
        }
        return { kind: 'self', span: k.span };
      }
      const g = byName.get(k.field.text);
      if (!g) {
        diags.push(E.unknownKindField(at(k.field.span), k.field.text, cd.name.text, suggest(k.field.text, byName.keys())));
        return null;
      }
      if (g.name === f.name) {
        diags.push(E.kindOfItself(at(k.span), f.name));
        return null;
      }
      let fam: string | null;
      if (k.slot) {
        const set = g.type.kind === 'names' ? nameSetByName.get(g.type.name) : undefined;
        const slot = set?.slots.find((x) => x.name === k.slot!.text);
        if (!set || !slot) {
          const slots = set?.slots.map((x) => x.name) ?? [];
          diags.push(E.unknownSlot(at(k.slot.span), k.slot.text, g.name, g.type.name, slots));
          return null;
        }
        fam = slot.family;
      } else {
        fam = g.family;
        if (fam === null) {
          diags.push(E.fieldWithoutKind(at(k.field.span), g.name, whyNoKind(g)));
          return null;
        }
      }
      if (fam !== f.family) {
        diags.push(E.familyMismatch(at(k.span), f.name, f.family, k.slot ? `${g.name}.${k.slot.text}` : g.name, fam));
        return null;
      }
      return { kind: 'field', field: g.name, slot: k.slot?.text ?? null, span: k.span };
    }
    function whyNoKind(f: Field): string {
      if (f.type.kind === 'sort') return `sort ${f.type.name} is not declared with \`kind\``;
      if (f.type.kind === 'token') {
        return f.scoping === 'none' ? 'only `new`/`bound` variables carry a kind' : `token class ${f.type.name} is not declared with \`kind\``;
      }
      const n = nameSetByName.get(f.type.name)?.slots.length ?? 0;
      return n === 0 ? `name set ${f.type.name} has no kind slots` : `name set ${f.type.name} has ${n} kind slots: name one (\`${f.name}.slot\`)`;
    }

    const declared = new Set(cd.fields.map((f) => f.name.text));
    const used = new Set<string>();
    const fieldNames = cd.fields.map((f) => f.name.text);

    const items = (list: readonly ItemAst[], inGroup: boolean): LayoutItem[] => {
      const out: LayoutItem[] = [];
      for (const it of list) {
        if (it.kind === 'text') {
          const t = literal(it.lit, true);
          if (t !== null) {
            keywords.add(t);
            out.push({ kind: 'text', text: t, glue: it.glue, span: it.span });
          }
        } else if (it.kind === 'slot') {
          const name = it.field.text;
          const isBlank = typeKinds.get(name)?.kind === 'blank';
          if (isBlank && declared.has(name)) {
            diags.push(E.blankAndField(at(it.field.span), name, cd.name.text));
            used.add(name);
            continue;
          }
          if (isBlank) {
            if (!blankByName.has(name)) continue; // its declaration has an error, reported there
            if (it.sep) diags.push(E.sepOnNonList(at(it.sep.span), name));
            if (it.glue && it.optional === null) diags.push(E.glueOnRequiredBlank(at(it.span), name));
            out.push({ kind: 'blank', blank: name, optional: it.optional !== null, glue: it.glue, span: it.span });
            continue;
          }
          if (it.optional !== null && declared.has(name)) {
            diags.push(E.optionalMarkOnField(at({ start: it.field.span.start, end: it.optional.end }), name));
            used.add(name);
            continue;
          }
          if (!declared.has(name)) {
            diags.push(E.unknownLayoutField(at(it.field.span), name, cd.name.text, fieldNames, suggest(name, fieldNames.filter((n) => !used.has(n)))));
            continue;
          }
          if (used.has(name)) {
            diags.push(E.fieldUsedTwice(at(it.field.span), name, cd.name.text));
            continue;
          }
          used.add(name);
          const f = byName.get(name);
          let sep: string | null = null;
          let sepGlue = false;
          let sepBlanks: { before: BlankUse | null; after: BlankUse | null } | null = null;
          if (it.sep) {
            if (f && f.card !== 'list' && f.card !== 'nonempty') diags.push(E.sepOnNonList(at(it.sep.span), name));
            const r = separator(it.sep.parts, it.sep.span);
            if (r !== null) {
              sep = r.text;
              sepGlue = r.glue;
              if (r.before !== null || r.after !== null) sepBlanks = { before: r.before, after: r.after };
              keywords.add(sep);
            }
          }
          const slot: LayoutItem = { kind: 'slot', field: name, sep, sepGlue, glue: it.glue, span: it.span };
          out.push(sepBlanks === null ? slot : { ...slot, sepBlanks });
        } else {
          if (inGroup) {
            diags.push(E.nestedGroup(at(it.span)));
            continue;
          }
          const slots = it.items.filter((x) => x.kind === 'slot' && !(typeKinds.get(x.field.text)?.kind === 'blank' && !declared.has(x.field.text)));
          const inner = items(it.items, true);
          if (slots.length !== 1) {
            diags.push(E.groupSlotCount(at(it.span), slots.length));
            continue;
          }
          const slot = slots[0] as Extract<ItemAst, { kind: 'slot' }>;
          const f = byName.get(slot.field.text);
          if (f && f.card === 'one') {
            diags.push(E.groupFieldRequired(at(slot.field.span), f.name));
            continue;
          }
          out.push({ kind: 'when', field: slot.field.text, items: inner, glue: it.glue, span: it.span });
        }
      }
      return out;
    };
    const layout = items(cd.layout, false);
    if (diags.length === before) checkBlankPlacement(layout, byName, cd.name.text);
    for (const fd of cd.fields) {
      if (!used.has(fd.name.text) && fieldNames.indexOf(fd.name.text) === cd.fields.indexOf(fd)) {
        diags.push(E.fieldMissingFromLayout(at(cd.layoutSpan), fd.name.text, cd.name.text));
      }
    }

    let operator: Operator | null = null;
    if (cd.operator) {
      const op = cd.operator;
      const p = Number(op.precedence.text);
      if (!Number.isSafeInteger(p)) diags.push(E.badPrecedence(at(op.precedence.span), op.precedence.text));
      const fixity = op.fixity.text as Operator['fixity'];
      operator = { fixity, assoc: (op.assoc?.text ?? 'none') as Operator['assoc'], precedence: p };
      if (diags.length === before && !operatorFits(layout, fixity, byName, sortName)) {
        diags.push(E.operatorShape(at(cd.layoutSpan), cd.name.text, fixity, sortName));
      }
    }
    if (diags.length !== before) return null;
    return { index, name: cd.name.text, sort: sortName, fields, layout, operator, scope: cd.scope !== null, span: cd.span };
  }

  // reserved classes lose the keywords; no class may then be empty or begin with a space character
  const keywordList = [...keywords].sort();
  const keywordBytes = keywordList.map((k) => new TextEncoder().encode(k));
  const finalTokens: TokenClass[] = [];
  const accepts = (d: TokenRegex['dfa'], b: Uint8Array) => d.accept[runDfa(d, d.start, b)] === 1;
  for (const t0 of tokens) {
    const t = exceptWords(t0);
    if (t === null) continue;
    const clash = keywordList.filter((_, i) => accepts(t.regex.dfa, keywordBytes[i]!));
    let tok: TokenClass = { ...t, regex: { ...t.regex, keywords: clash } };
    if (t.reserved && clash.length > 0) {
      const dfa = withoutWords(t.regex.dfa, clash.map((k) => new TextEncoder().encode(k)));
      if (dfa === null) {
        diags.push(E.regexTooLarge(at(t.span), t.name, 'removing the keywords from it exceeds the automaton limit'));
        continue;
      }
      if (dfa.start === 0) {
        diags.push(E.tokenNoLexeme(at(t.span), t.name, true));
        continue;
      }
      tok = { ...tok, regex: { ...tok.regex, dfa } };
    }
    const d = tok.regex.dfa;
    for (const c of space ?? '') {
      if (runDfa(d, d.start, new TextEncoder().encode(c)) !== 0) {
        diags.push(E.tokenStartsWithSpace(at(t.span), t.name, c));
        break;
      }
    }
    finalTokens.push(tok);
  }

  /** The class minus its `except` words (each must be a lexeme of it, listed once). */
  function exceptWords(t: TokenClass): TokenClass | null {
    const d = tokenDecls.get(t.name);
    if (!d?.except) return t;
    const words: string[] = [];
    for (const w of d.except.words) {
      const word = literal(w, true);
      if (word === null) continue;
      if (words.includes(word)) diags.push(E.exceptWord(at(w.span), t.name, word, 'which is listed twice'));
      else if (!accepts(t.regex.dfa, new TextEncoder().encode(word))) diags.push(E.exceptWord(at(w.span), t.name, word, `which is not a lexeme of it (/${t.pattern}/${t.flags})`));
      else words.push(word);
    }
    if (words.length !== d.except.words.length) return null;
    const dfa = withoutWords(t.regex.dfa, words.map((w) => new TextEncoder().encode(w)));
    if (dfa === null) {
      diags.push(E.exceptTooLarge(at(d.except.span), t.name));
      return null;
    }
    if (dfa.start === 0) {
      diags.push(E.exceptEverything(at(d.except.span), t.name));
      return null;
    }
    return { ...t, except: words, regex: { ...t.regex, dfa } };
  }

  checkFillers(fillers, finalTokens, keywordList, blanks);

  /** Fillers end by their own text, and begin with a character nothing else begins with. */
  function checkFillers(fs: readonly Filler[], toks: readonly TokenClass[], kws: readonly string[], bls: readonly BlankClass[]): void {
    for (const f of fs) {
      const d = f.regex.dfa;
      const closed = closedExample(d);
      if (closed !== null) {
        diags.push(E.fillerNotClosed(at(f.span), closed[0], closed[1]));
        continue;
      }
      const starts = new Set<number>();
      for (let b = 0; b < 256; b++) if (d.trans[d.start * 256 + b] !== 0) starts.add(b);
      const enc = new TextEncoder();
      const show = (b: number) => (b < 0x80 ? String.fromCharCode(b) : `\\x${b.toString(16)}`);
      const kw = kws.find((k) => starts.has(enc.encode(k)[0]!));
      if (kw !== undefined) {
        diags.push(E.fillerClash(at(f.span), show(enc.encode(kw)[0]!), `the literal ${JSON.stringify(kw)}`));
        continue;
      }
      const t = toks.find((x) => [...starts].some((b) => x.regex.dfa.trans[x.regex.dfa.start * 256 + b] !== 0));
      if (t !== undefined) {
        const b = [...starts].find((c) => t.regex.dfa.trans[t.regex.dfa.start * 256 + c] !== 0)!;
        diags.push(E.fillerClash(at(f.span), show(b), `token class ${'`'}${t.name}${'`'}`));
        continue;
      }
      const bl = bls.find((x) => [...x.chars].some((c) => starts.has(enc.encode(c)[0]!)));
      if (bl !== undefined) diags.push(E.fillerClash(at(f.span), [...bl.chars].find((c) => starts.has(enc.encode(c)[0]!))!, `blank ${'`'}${bl.name}${'`'}`));
      const sp = [...(space ?? '')].find((c) => starts.has(enc.encode(c)[0]!));
      if (sp !== undefined) diags.push(E.fillerClash(at(f.span), sp, 'the `space` characters'));
    }
  }

  if (diags.some((d) => d.severity === 'error')) return { grammar: null, diagnostics: diags };
  const grammar: Grammar = {
    name: ast.grammar.text,
    file,
    hash,
    start: start!.name,
    space: space!,
    blanks,
    fillers,
    tokens: finalTokens,
    nameSets,
    kindFamilies,
    scoped:
      kindFamilies.length > 0 ||
      constructors.some((c) => c.scope || c.fields.some((f) => f.scoping === 'enters' || f.scoping === 'known' || f.kindOf !== null)),
    sorts,
    constructors,
    keywords: keywordList,
  };
  return { grammar, diagnostics: diags };
}

/** Does `layout` have the shape `fixity` requires (operands: required fields of `sort`)? */
function operatorFits(layout: readonly LayoutItem[], fixity: Operator['fixity'], fields: Map<string, Field>, sort: string): boolean {
  const operand = (item: LayoutItem | undefined) => {
    if (!item || item.kind !== 'slot') return false;
    const f = fields.get(item.field);
    return !!f && f.card === 'one' && f.type.kind === 'sort' && f.type.name === sort;
  };
  const first = layout[0];
  const last = layout[layout.length - 1];
  switch (fixity) {
    case 'infix':
      // the operator is marked by a text or a required blank (`l Ws r`)
      return layout.length >= 3 && operand(first) && operand(last) && layout.slice(1, -1).some((i) => i.kind === 'text' || (i.kind === 'blank' && !i.optional));
    case 'prefix':
      return layout.length >= 2 && first?.kind === 'text' && operand(last);
    case 'postfix':
      return layout.length >= 2 && operand(first) && last?.kind === 'text';
  }
}

/**
 * A match of `d` that is the start of a longer match (as two latin1 strings), or null when the
 * matches are prefix-free: no accepting state has a transition to a live state. Breadth-first, so
 * the example is a shortest one.
 */
/** Bytes in the order examples prefer them: printable ASCII first. */
const EXAMPLE_BYTES = [...Array(256).keys()].sort((a, b) => Number(a < 0x20 || a > 0x7e) - Number(b < 0x20 || b > 0x7e) || a - b);

function closedExample(d: { start: number; trans: Int32Array | Uint32Array | Uint16Array | number[]; accept: Uint8Array | number[]; stateCount: number }): [string, string] | null {
  const prev = new Map<number, [number, number]>();
  const queue = [d.start];
  prev.set(d.start, [-1, -1]);
  const path = (s: number): string => {
    const out: number[] = [];
    for (let x = s; prev.get(x)![0] >= 0; x = prev.get(x)![0]) out.unshift(prev.get(x)![1]);
    return new TextDecoder().decode(Uint8Array.from(out));
  };
  for (let i = 0; i < queue.length; i++) {
    const s = queue[i]!;
    if (d.accept[s] === 1) {
      for (const b of EXAMPLE_BYTES) {
        const t = d.trans[s * 256 + b]!;
        if (t === 0) continue;
        // the shortest completion from t
        const seen = new Map<number, [number, number]>([[t, [-1, -1]]]);
        const q = [t];
        for (let j = 0; j < q.length; j++) {
          const u = q[j]!;
          if (d.accept[u] === 1) {
            const tail: number[] = [];
            for (let x = u; seen.get(x)![0] >= 0; x = seen.get(x)![0]) tail.unshift(seen.get(x)![1]);
            const head = path(s);
            return [head, head + new TextDecoder().decode(Uint8Array.from([b, ...tail]))];
          }
          for (const c of EXAMPLE_BYTES) {
            const v = d.trans[u * 256 + c]!;
            if (v !== 0 && !seen.has(v)) {
              seen.set(v, [u, c]);
              q.push(v);
            }
          }
        }
      }
    }
    for (const b of EXAMPLE_BYTES) {
      const t = d.trans[s * 256 + b]!;
      if (t !== 0 && !prev.has(t)) {
        prev.set(t, [s, b]);
        queue.push(t);
      }
    }
  }
  return null;
}
