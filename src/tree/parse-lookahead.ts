/**
 * The parser builder's look-ahead analysis: PEG expressions (`PE`, written as ohm text by `emit`),
 * FIRST and FOLLOW over the syntactic rules, and the one-token look-ahead guards added where a PEG
 * choice could otherwise commit to an alternative (or take an optional part or list element) that
 * the next token rules out.
 *
 * Input: the syntactic rules from parse-generate.ts; output: the same rules with guards, plus the
 * guard rules' text and the items each guard stands for in messages.
 * Cost: FIRST/FOLLOW are fixpoints over the rules, O(rounds · size) with rounds ≤ the rule count.
 */

/** A PEG expression over rule names (analysed for FIRST/FOLLOW, then written as ohm text). */
export type PE =
  | { readonly k: 'seq'; readonly xs: readonly PE[] }
  | { readonly k: 'alt'; readonly xs: readonly PE[]; readonly cases: readonly string[] | null }
  | { readonly k: 'opt' | 'star' | 'plus' | 'and'; readonly x: PE }
  | { readonly k: 'app'; readonly rule: string }
  | { readonly k: 'end' };

export const seq = (...xs: PE[]): PE => ({ k: 'seq', xs });
export const app = (rule: string): PE => ({ k: 'app', rule });

export function emit(pe: PE): string {
  switch (pe.k) {
    case 'seq':
      return pe.xs.length === 0 ? '""' : pe.xs.map((x) => (x.k === 'alt' ? `(${emit(x)})` : emit(x))).join(' ');
    case 'alt':
      return pe.xs
        .map((x, i) => (pe.cases === null ? emit(x) : `${emit(x)} -- ${pe.cases[i]}`))
        .join(pe.cases === null ? ' | ' : '\n    | ');
    case 'opt':
    case 'star':
    case 'plus': {
      const inner = pe.x.k === 'app' ? emit(pe.x) : `(${emit(pe.x)})`;
      return inner + (pe.k === 'opt' ? '?' : pe.k === 'star' ? '*' : '+');
    }
    case 'and':
      return `&(${emit(pe.x)})`;
    case 'app':
      return pe.rule;
    case 'end':
      return 'end';
  }
}

/**
 * FIRST and FOLLOW over the syntactic rules, read as a context-free grammar (terminals: lexical
 * rule names and '$' for the end; look-aheads are ignored).
 */
export function analyse(rules: ReadonlyMap<string, PE>): { follow: Map<string, Set<string>>; firstOf(pe: PE): Set<string>; nullableOf(pe: PE): boolean } {
  const isTerminal = (r: string) => !rules.has(r);
  const nullable = new Map<string, boolean>();
  const first = new Map<string, Set<string>>();
  for (const r of rules.keys()) {
    nullable.set(r, false);
    first.set(r, new Set());
  }
  const nul = (pe: PE): boolean => {
    switch (pe.k) {
      case 'seq': return pe.xs.every(nul);
      case 'alt': return pe.xs.some(nul);
      case 'opt': case 'star': case 'and': return true;
      case 'plus': return nul(pe.x);
      case 'app': return isTerminal(pe.rule) ? false : nullable.get(pe.rule)!;
      case 'end': return false;
    }
  };
  const fst = (pe: PE, out: Set<string>): void => {
    switch (pe.k) {
      case 'seq':
        for (const x of pe.xs) {
          fst(x, out);
          if (!nul(x)) return;
        }
        return;
      case 'alt':
        for (const x of pe.xs) fst(x, out);
        return;
      case 'opt': case 'star': case 'plus':
        fst(pe.x, out);
        return;
      case 'and':
        return;
      case 'app':
        if (isTerminal(pe.rule)) out.add(pe.rule);
        else for (const t of first.get(pe.rule)!) out.add(t);
        return;
      case 'end':
        out.add('$');
        return;
    }
  };
  for (let changed = true; changed; ) {
    changed = false;
    for (const [r, pe] of rules) {
      if (!nullable.get(r) && nul(pe)) {
        nullable.set(r, true);
        changed = true;
      }
      const f = first.get(r)!;
      const before = f.size;
      fst(pe, f);
      if (f.size !== before) changed = true;
    }
  }
  const follow = new Map<string, Set<string>>();
  for (const r of rules.keys()) follow.set(r, new Set());
  // walk: `after` is the set that follows pe; `afterNullableOf` the rule whose FOLLOW also follows
  const visit = (pe: PE, after: Set<string>, owner: string, changedRef: { v: boolean }): void => {
    switch (pe.k) {
      case 'seq': {
        // right to left, accumulating what follows each element
        let acc = new Set(after);
        for (let i = pe.xs.length - 1; i >= 0; i--) {
          const x = pe.xs[i]!;
          visit(x, acc, owner, changedRef);
          const f = new Set<string>();
          fst(x, f);
          acc = nul(x) ? new Set([...f, ...acc]) : f;
        }
        return;
      }
      case 'alt':
        for (const x of pe.xs) visit(x, after, owner, changedRef);
        return;
      case 'opt':
        visit(pe.x, after, owner, changedRef);
        return;
      case 'star':
      case 'plus': {
        const f = new Set<string>();
        fst(pe.x, f);
        visit(pe.x, new Set([...after, ...f]), owner, changedRef);
        return;
      }
      case 'and':
      case 'end':
        return;
      case 'app': {
        if (isTerminal(pe.rule)) return;
        const target = follow.get(pe.rule)!;
        const before = target.size;
        for (const t of after) target.add(t);
        if (target.size !== before) changedRef.v = true;
        return;
      }
    }
  };
  for (let changedRef = { v: true }; changedRef.v; ) {
    changedRef.v = false;
    for (const [r, pe] of rules) visit(pe, follow.get(r)!, r, changedRef);
  }
  return {
    follow,
    nullableOf: nul,
    firstOf: (pe) => {
      const out = new Set<string>();
      fst(pe, out);
      return out;
    },
  };
}

/** What the guards need from the generator. */
export interface GuardInput {
  /** syntactic rules by name; constructor (`C<i>`) and atom (`S<i>_A`) rules are rewritten in place */
  readonly rules: Map<string, PE>;
  /** the atom alternatives of each sort index */
  readonly atomAlts: ReadonlyMap<number, { readonly xs: PE[]; readonly cases: string[] }>;
  readonly constructorCount: number;
  /** first bytes (UTF-8) of a terminal rule's lexemes: two terms can only be confused when these meet */
  firstBytes(term: string): ReadonlySet<number>;
  /** message order of a terminal ('$' is the end) */
  termRank(term: string): number;
}

export interface Guards {
  /** guard rules as ohm text (`G<i> (g<i>) = ...`, `H<n> (h<n>) = ...`) */
  readonly text: readonly string[];
  /** guard description → the terminal rule names (or 'end of input') it looks for */
  readonly items: ReadonlyMap<string, readonly string[]>;
}

/**
 * Adds the look-ahead guards. A guard is a described rule (`G<i> (g<i>)`), so a failing guard shows
 * up as one item that messages expand to its FOLLOW set only when nothing more precise failed at
 * the same position.
 */
export function addLookaheads(input: GuardInput): Guards {
  const { rules, atomAlts, termRank } = input;
  const { follow, firstOf, nullableOf } = analyse(rules);
  const guards: string[] = [];
  const guardItems = new Map<string, readonly string[]>();
  const meets = (a: ReadonlySet<number>, b: ReadonlySet<number>) => [...a].some((x) => b.has(x));
  const charsOf = (terms: Set<string>): Set<number> => {
    const out = new Set<number>();
    for (const t of terms) for (const b of input.firstBytes(t)) out.add(b);
    return out;
  };
  for (const [si, alts] of atomAlts) {
    const firsts = alts.xs.map((x) => charsOf(firstOf(x)));
    // alternative i needs the look-ahead when a later alternative can begin the same way
    const needs = alts.xs.map((x, i) => firsts.some((f, j) => j > i && meets(f, firsts[i]!)) || firstOf(x).size === 0);
    if (!needs.some(Boolean)) continue;
    const f = [...(follow.get(`S${si}_A`) ?? [])].sort((a, b) => termRank(a) - termRank(b));
    const body: PE = { k: 'alt', xs: f.map((t) => (t === '$' ? ({ k: 'end' } as PE) : app(t))), cases: null };
    guards.push(`G${si} (g${si})\n    = ${emit(body)}`);
    guardItems.set(`g${si}`, f.map((t) => (t === '$' ? 'end of input' : t)));
    const guard: PE = { k: 'and', x: app(`G${si}`) };
    rules.set(`S${si}_A`, { k: 'alt', xs: alts.xs.map((x, i) => (needs[i] ? seq(x, guard) : x)), cases: alts.cases });
  }

  // Optional parts and list elements inside a constructor's layout: when what they begin with can
  // also begin what follows them, each taken element must be followed by a token that can come
  // next (one-token look-ahead, `H<n>`), so the PEG does not take an element it must leave.
  const seqGuards = new Map<string, string>();
  const lookahead = (after: Set<string>): PE => {
    const f = [...after].sort((a, b) => termRank(a) - termRank(b));
    const key = f.join(' ');
    let name = seqGuards.get(key);
    if (name === undefined) {
      name = `H${seqGuards.size}`;
      seqGuards.set(key, name);
      const body: PE = { k: 'alt', xs: f.map((t) => (t === '$' ? ({ k: 'end' } as PE) : app(t))), cases: null };
      guards.push(`${name} (${name.toLowerCase()})\n    = ${emit(body)}`);
      guardItems.set(name.toLowerCase(), f.map((t) => (t === '$' ? 'end of input' : t)));
    }
    return { k: 'and', x: app(name) };
  };
  const overlaps = (a: Set<string>, b: Set<string>) => meets(charsOf(a), charsOf(b));
  const guardItemsIn = (pe: PE, after: Set<string>): PE => {
    switch (pe.k) {
      case 'seq': {
        const xs = [...pe.xs];
        let acc = after;
        for (let i = xs.length - 1; i >= 0; i--) {
          const x = xs[i]!;
          xs[i] = guardItemsIn(x, acc);
          const f = firstOf(x);
          acc = nullableOf(x) ? new Set([...f, ...acc]) : f;
        }
        return { k: 'seq', xs };
      }
      case 'opt': {
        const inner = guardItemsIn(pe.x, after);
        return overlaps(firstOf(pe.x), after) ? { k: 'opt', x: seq(inner, lookahead(after)) } : { k: 'opt', x: inner };
      }
      case 'star':
      case 'plus': {
        const next = new Set([...firstOf(pe.x), ...after]);
        const inner = guardItemsIn(pe.x, next);
        return overlaps(firstOf(pe.x), after) ? { k: pe.k, x: seq(inner, lookahead(next)) } : { k: pe.k, x: inner };
      }
      default:
        return pe;
    }
  };
  for (let ci = 0; ci < input.constructorCount; ci++) {
    const name = `C${ci}`;
    const pe = rules.get(name);
    if (pe !== undefined) rules.set(name, guardItemsIn(pe, follow.get(name) ?? new Set()));
  }
  return { text: guards, items: guardItems };
}
