/**
 * Nesting measurement (not a test): for each shipped grammar and a few kinds of nesting, the
 * deepest program the parser accepts under its nesting limit (MAX_PARSE_DEPTH grammar rules at
 * once, src/util/depth.ts), found by bisection, and the message a far deeper one gets. README's
 * "Errors and limits" table quotes these figures.
 *
 *   npx tsx test/bench/nesting.ts
 */
import { loadGrammar } from '../../src/description/index.ts';
import { createParser } from '../../src/tree/index.ts';
import { MAX_PARSE_DEPTH } from '../../src/util/depth.ts';

const g = (n: string) => loadGrammar(`grammars/${n}/${n}.twg`);
/** The largest n in 1..5000 for which `f(n)` does not fail on nesting. */
function deepest(f: (n: number) => void): number {
  let lo = 0;
  let hi = 5000;
  while (lo < hi) {
    const m = (lo + hi + 1) >> 1;
    try {
      f(m);
      lo = m;
    } catch (e) {
      if (!/nest/.test((e as Error).message)) throw e;
      hi = m - 1;
    }
  }
  return lo;
}

const cases: [string, string, (n: number) => string][] = [
  ['arith', 'parentheses', (n) => '('.repeat(n) + '1' + ')'.repeat(n)],
  ['arith', 'prefix -', (n) => '-'.repeat(n) + '1'],
  ['json', 'arrays', (n) => '['.repeat(n) + ']'.repeat(n)],
  ['json', 'objects', (n) => '{"a":'.repeat(n) + '1' + '}'.repeat(n)],
  ['sql', 'parentheses', (n) => 'SELECT name FROM growers WHERE ' + '('.repeat(n) + '1 = 1' + ')'.repeat(n)],
  ['sql', 'NOT', (n) => 'SELECT name FROM growers WHERE ' + 'NOT '.repeat(n) + '1 = 1'],
  ['lf', 'parentheses', (n) => 'lambda $x. ' + '('.repeat(n) + 'grower($x)' + ')'.repeat(n)],
  ['lf', 'negation ~', (n) => 'lambda $x. ' + '~'.repeat(n) + 'grower($x)'],
];
process.stdout.write(`nesting limit: ${MAX_PARSE_DEPTH} grammar rules at once\n`);
for (const [name, what, make] of cases) {
  const p = createParser(g(name));
  const ok = deepest((n) => p.parse(make(n)));
  let far = '';
  try {
    p.parse(make(20_000));
  } catch (e) {
    far = (e as Error).message.split('\n')[0]!;
  }
  process.stdout.write(`${name.padEnd(6)} ${what.padEnd(12)} deepest accepted ${String(ok).padStart(4)}   20,000 deep: ${far.slice(0, 60)}…\n`);
}
