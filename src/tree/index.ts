/**
 * The tree stage: typed JSON trees of a grammar and everything that moves between trees and code.
 *
 * Produces, from a compiled Grammar (description/ir.ts):
 * - validateTree(grammar, value, {names, sort}) → the first problem as a JSON path, or null
 *   ("well-typed": structure, kinds, fields, cardinalities, token values, bound names, scoping);
 * - toJsonSchema(grammar, names?) → a draft 2020-12 JSON Schema of the trees;
 * - printTree(grammar, tree) → canonical code (README layout rules, minimal parentheses);
 * - createParser(grammar).parse(text, {file, names}) → a tree, or a located ParseError
 *   (`file:line:col: expected "(", Num or Func` and an excerpt with `^`);
 * - sampleTree / createSampler(grammar, {seed, maxDepth, names, weights, sort}) → random
 *   well-typed trees, reproducible from the seed;
 * - loadNames(path) / namesFromDatabase(path) (names.ts) → bindings for open name sets.
 *
 * Example (arith):
 *   const g = loadGrammar('grammars/arith/arith.twg');
 *   const t = createParser(g).parse('(1 + 2) * max(3, -4)');
 *   // {kind: 'mul', left: {kind: 'add', ...}, right: {kind: 'call', fn: 'max', args: [...]}}
 *   printTree(g, t) === '(1 + 2) * max(3, -4)'
 *
 * Worst-case cost: validation, printing and sampling are linear in the tree (sampling builds its
 * depth tables once, O(constructors · fields · rounds)); parsing is ohm's memoising PEG, O(n · R)
 * time and memory for n characters and R generated rules; building a parser compiles one ohm
 * grammar per Grammar object (cached).
 *
 * Limits: the parser is a PEG with one-token look-ahead where a sort's alternatives, or an
 * optional part / list element and what follows it, can begin alike; otherwise lists and optionals
 * are greedy; token regexes are read as PEG (see regex.ts, parse.ts) — a grammar that needs more
 * look-ahead than that is parsed incompletely (the property tests catch it for the shipped
 * grammars). The word-boundary rule is part of the token rule when every lexeme ends with
 * a word character; for classes whose lexemes may end either way it is checked on the parsed
 * lexeme, after the PEG has chosen it (so it cannot steer the choice). The
 * JSON Schema cannot express variable scoping or numeric token regexes (schema.ts).
 */
export { validateTree, assertTree, TreeError, type Tree, type TreeValue, type TreeIssue, type ValidateOptions } from './validate.ts';
export { printTree, printTokens, printedBlank, PrintError } from './print.ts';
export { createParser, ParseError, GrammarFeatureError, type Parser, type ParseOptions } from './parse.ts';
export { mulberry32 } from '../util/random.ts';
export { sampleTree, createSampler, SampleError, type Sampler, type SampleOptions } from './sample.ts';
export { toJsonSchema } from './schema.ts';
export { resolveTree, locateIssue, type ResolveIssue } from './resolve.ts';
export { loadNames, namesFromDatabase, namesFromJson, checkNames, mergeNames, withFacts, NamesError } from './names.ts';
export { bindNames, meetKinds, type BoundNames, type BoundSet, type BoundFamily } from '../description/bound.ts';
export { valueToLexeme, lexemeToValue } from './lexeme.ts';
