/**
 * Generation benchmark (not a test): tokens/s and per-question latency of unconstrained vs
 * constrained greedy and beam-4 decoding, and the share of time spent on masks.
 *
 *   npx tsx test/bench/generation.ts --model models/coop --grammar sql --db coop.db \
 *     --questions models/coop/data/test.jsonl --prefix "to sql: " --limit 50
 *   npx tsx test/bench/generation.ts --model models/coop --grammar lf --db coop.db ... --prefix "to lf: "
 *   npx tsx test/bench/generation.ts            # the tiny fixture model and the lf grammar
 * (--db: SQL grammars bind Table/Column from the schema; the lf grammar binds the coop fact base's
 * names, src/exec/coop.ts. The coop database: buildCoop('grammars/sql/coop.sql', path).)
 *
 * Questions file: JSON lines with a "question" (or "input" / "source") field. One warm-up question
 * per mode is not counted. Figures: output tokens/s (tokens of the returned output, EOS included,
 * over total decoding time), median and p90 latency per question, ms per decoder step (a beam step
 * decodes all live hypotheses in one call), and the share of time in masks (writeAllowed, applying the
 * mask, advancing states). One run; the machine may be shared.
 */
import { readFileSync } from 'node:fs';
import { parseArgs } from 'node:util';
import { loadGrammar } from '../../src/description/index.ts';
import { generate, maskEngine, type GenerateOptions } from '../../src/decode/index.ts';
import { loadModel } from '../../src/model/index.ts';
import { loadNames, namesFromDatabase } from '../../src/tree/index.ts';
import { factsFromDatabase } from '../../src/exec/coop.ts';
import { openDatabaseFile } from '../../src/exec/database.ts';
import { factNames } from '../../src/exec/facts.ts';
import type { NameBindings } from '../../src/description/ir.ts';

const FIXTURE_QUESTIONS = [
  'lf: which orchards does chen li own?',
  'lf: what is the largest orchard by hectares?',
  'lf: does fenna dekker manage a cold room?',
  'lf: how many lots of conference pears were harvested in 2021?',
  'lf: which growers grow elstar?',
  'lf: what is the total tonnage stored in shed a?',
];

const { values: a } = parseArgs({
  options: {
    model: { type: 'string', default: 'test/fixtures/tiny-seq2seq' },
    grammar: { type: 'string', default: 'grammars/lf/lf.twg' },
    names: { type: 'string' },
    db: { type: 'string' },
    questions: { type: 'string' },
    filter: { type: 'string' },
    prefix: { type: 'string', default: '' },
    limit: { type: 'string', default: '50' },
    threads: { type: 'string' },
    'max-tokens': { type: 'string', default: '128' },
  },
});

function median(xs: number[]): number {
  const s = [...xs].sort((x, y) => x - y);
  return s.length === 0 ? NaN : s.length % 2 ? s[(s.length - 1) >> 1] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
}

const grammarPath = /^[a-z]+$/.test(a.grammar!) ? `grammars/${a.grammar}/${a.grammar}.twg` : a.grammar!;
const grammar = loadGrammar(grammarPath);
let names: NameBindings = {};
if (a.names) names = loadNames(a.names);
else if (a.db) {
  // a SQLite file or a .sql script, as every --db of the CLI
  const db = openDatabaseFile(a.db);
  names = grammar.name === 'lf' ? factNames(factsFromDatabase(db.path)) : namesFromDatabase(db.path);
  db.dispose();
}
else if (grammarPath.endsWith('lf/lf.twg')) names = loadNames('grammars/lf/samples/names.json');

let questions = FIXTURE_QUESTIONS;
if (a.questions) {
  questions = readFileSync(a.questions, 'utf8')
    .split('\n')
    .filter((l) => l.trim() !== '')
    .map((l) => {
      const o = JSON.parse(l) as Record<string, unknown>;
      return a.prefix! + String(o.question ?? o.input ?? o.source);
    });
}
if (a.filter) questions = questions.filter((q) => q.startsWith(a.filter!));
questions = questions.slice(0, Number(a.limit));

const model = await loadModel(a.model!, { threads: a.threads ? Number(a.threads) : undefined });
const t0 = performance.now();
maskEngine(model, grammar);
const compileMs = performance.now() - t0;
const maxTokens = Math.min(Number(a['max-tokens']), model.config.maxPositions - 1);

const modes: { name: string; opts: GenerateOptions }[] = [
  { name: 'greedy, unconstrained', opts: { strategy: 'greedy', unconstrained: true } },
  { name: 'greedy, constrained', opts: { strategy: 'greedy' } },
  { name: 'beam-4, unconstrained', opts: { strategy: 'beam', beamWidth: 4, unconstrained: true } },
  { name: 'beam-4, constrained', opts: { strategy: 'beam', beamWidth: 4 } },
];

console.log(`model ${a.model} (${model.cached ? 'KV cache' : 'no cache'}, vocabulary ${model.vocabSize}); grammar ${grammar.name}; ${questions.length} questions; max ${maxTokens} tokens`);
console.log(`mask tables compiled in ${compileMs.toFixed(0)} ms (once per grammar × vocabulary)\n`);
const rows: { name: string; tps: number; med: number; p90: number; perStep: number; maskShare: number; modelShare: number; wellTyped: number; steps: number }[] = [];
for (const { name, opts } of modes) {
  await generate(model, questions[0], { ...opts, grammar, names, maxTokens }); // warm-up
  const lat: number[] = [];
  let tokens = 0;
  let total = 0;
  let mask = 0;
  let modelMs = 0;
  let ok = 0;
  let steps = 0;
  for (const q of questions) {
    const r = await generate(model, q, { ...opts, grammar, names, maxTokens });
    const n = r.tokens.length + (r.finished === 'eos' ? 1 : 0);
    tokens += n;
    total += r.total_ms;
    mask += r.mask_ms;
    modelMs += r.model_ms;
    lat.push(r.total_ms);
    steps += r.steps;
    if (r.well_typed) ok++;
  }
  const sorted = [...lat].sort((x, y) => x - y);
  rows.push({
    name,
    tps: (tokens / total) * 1000,
    med: median(lat),
    p90: sorted[Math.min(sorted.length - 1, Math.floor(sorted.length * 0.9))],
    perStep: total / steps,
    steps: steps / questions.length,
    maskShare: mask / total,
    modelShare: modelMs / total,
    wellTyped: ok / questions.length,
  });
}
const pad = (s: string, n: number) => s.padEnd(n);
console.log(`${pad('mode', 24)}${pad('tokens/s', 11)}${pad('median ms', 11)}${pad('p90 ms', 9)}${pad('steps/q', 9)}${pad('ms/step', 9)}${pad('model share', 13)}${pad('mask share', 12)}well-typed`);
for (const r of rows) {
  console.log(
    `${pad(r.name, 24)}${pad(r.tps.toFixed(1), 11)}${pad(r.med.toFixed(1), 11)}${pad(r.p90.toFixed(1), 9)}${pad(r.steps.toFixed(1), 9)}${pad(r.perStep.toFixed(2), 9)}${pad((100 * r.modelShare).toFixed(1) + ' %', 13)}${pad((100 * r.maskShare).toFixed(1) + ' %', 12)}${(100 * r.wellTyped).toFixed(0)} %`,
  );
}
console.log(`\nconstrained / unconstrained: output tokens/s greedy ${(rows[1].tps / rows[0].tps).toFixed(3)}×, beam-4 ${(rows[3].tps / rows[2].tps).toFixed(3)}×; ` +
  `time per step greedy ${(rows[0].perStep / rows[1].perStep).toFixed(3)}×, beam-4 ${(rows[2].perStep / rows[3].perStep).toFixed(3)}× (higher is faster)`);
await model.dispose();
