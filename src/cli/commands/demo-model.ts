/**
 * The model part of `treewright demo`: the shipped seq2seq model (models/coop) answers invented
 * questions about the fruit-growing cooperative, once unconstrained and once constrained by the
 * grammar's token masks, for both targets (SQL and logical forms). For each output it shows the
 * code, whether it is valid and well-typed, the tree (constrained run) and the executed answer
 * (SQL on the read-only demo database, logical forms on the fact base built from the same rows).
 *
 * The questions are the invented ones of the shipped data files: two from the test split (same
 * distribution as training) and three from the compositional split, where the bare model is known
 * to write invalid programs — there the constrained output is still a valid program. The
 * demo says so, and prints the aggregate figures of the shipped evaluation (read from its
 * metrics.json files, models/coop/eval/TARGET/) so the five questions are not mistaken for typical.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Grammar, NameBindings } from '../../description/ir.ts';
import { generate, type GenerateResult } from '../../decode/index.ts';
import { evaluateLf, factNames, factsFromDatabase, SqlRunner, sqlExecutor, formatResult, type FactBase } from '../../exec/index.ts';
import { loadModel } from '../../model/index.ts';
import type { DemoContext, DemoSection } from './demo-context.ts';

const ROOT = fileURLToPath(new URL('../../../', import.meta.url));
const MODEL_DIR = 'models/coop';

/** Data-file rows shown by the demo: [split, id, target]. */
const QUESTIONS: readonly (readonly [string, string, 'sql' | 'lf'])[] = [
  ['test', 'coop-test-00001', 'sql'],
  ['test', 'coop-test-00002', 'lf'],
  ['compositional', 'coop-compositional-00010', 'lf'],
  ['compositional', 'coop-compositional-00011', 'sql'],
  ['compositional', 'coop-compositional-00027', 'sql'],
];

interface Row {
  readonly id: string;
  readonly question: string;
  readonly sql: string;
  readonly lf: string;
}

function readRows(split: string): Map<string, Row> {
  const text = readFileSync(join(ROOT, MODEL_DIR, 'data', `${split}.jsonl`), 'utf8');
  const rows = new Map<string, Row>();
  for (const line of text.split('\n')) {
    if (line.trim() === '') continue;
    const row = JSON.parse(line) as Row;
    rows.set(row.id, row);
  }
  return rows;
}

/** One rate of a metrics.json (eval/metrics.ts): the fraction and its interval. */
interface Rate {
  readonly rate: number;
  readonly ci_low: number;
  readonly ci_high: number;
  readonly n: number;
}
type ModeMetrics = Record<'valid' | 'well_typed' | 'executable' | 'exact_match' | 'execution_accuracy', Rate>;
type Mode = 'unconstrained' | 'constrained';
type Metrics = Record<string, Record<Mode, ModeMetrics>>;

const EVAL_DIR = 'models/coop/eval';
const MEASURES = ['valid', 'well_typed', 'executable', 'execution_accuracy'] as const;

/** The shipped evaluation's aggregate figures as a table, read from its metrics.json files. */
export function evaluationTable(root: string): string[] {
  const pct = (r: Rate) => `${(100 * r.rate).toFixed(1)} %`;
  const lines: string[] = [];
  const head = ['target', 'split (n)', 'mode', ...MEASURES];
  const rows: string[][] = [];
  for (const target of ['sql', 'lf'] as const) {
    const m = readMetrics(root, target);
    for (const split of ['test', 'compositional']) {
      const s = m[split];
      if (!s) throw new Error(`${EVAL_DIR}/${target}/metrics.json has no split ${split}`);
      for (const mode of ['unconstrained', 'constrained'] as const) {
        rows.push([target, `${split} (${s[mode].valid.n})`, mode, ...MEASURES.map((k) => pct(s[mode][k]))]);
      }
    }
  }
  const widths = head.map((h, i) => Math.max(h.length, ...rows.map((r) => r[i]!.length)));
  const fmt = (r: string[]) => '  ' + r.map((c, i) => (i < 3 ? c.padEnd(widths[i]!) : c.padStart(widths[i]!))).join('  ');
  lines.push(fmt(head));
  for (const r of rows) lines.push(fmt(r));
  return lines;
}

function readMetrics(root: string, target: 'sql' | 'lf'): Metrics {
  return JSON.parse(readFileSync(join(root, EVAL_DIR, target, 'metrics.json'), 'utf8')) as Metrics;
}

/**
 * What the shipped evaluation says, in words, with every figure read from its metrics.json files
 * (so the sentences stay true when the evaluation is re-run): validity with the masks, where
 * well-typedness falls short of it, and what changes on the compositional split.
 */
export function evaluationSummary(root: string): string[] {
  const pct = (x: number) => `${(100 * x).toFixed(1)} %`;
  const targets = ['sql', 'lf'] as const;
  const splits = ['test', 'compositional'] as const;
  const m = { sql: readMetrics(root, 'sql'), lf: readMetrics(root, 'lf') };
  const lines: string[] = [];
  const constrainedValid = targets.flatMap((t) => splits.map((s) => m[t][s]!.constrained.valid.rate));
  lines.push(
    constrainedValid.every((r) => r === 1)
      ? 'With the masks every output is valid, on both targets and both splits.'
      : `With the masks, valid ranges from ${pct(Math.min(...constrainedValid))} to ${pct(Math.max(...constrainedValid))}.`,
  );
  for (const t of targets) {
    const wt = splits.map((s) => m[t][s]!.constrained.well_typed.rate);
    if (wt.every((r) => r === 1)) lines.push(`${t}: every constrained output is also well-typed.`);
    else lines.push(`${t}: well-typed with the masks ${splits.map((s, i) => `${pct(wt[i]!)} (${s})`).join(', ')}: kinds are checked after decoding, not yet masked.`);
  }
  const c = (t: 'sql' | 'lf', mode: Mode, k: keyof ModeMetrics) => pct(m[t].compositional![mode][k].rate);
  lines.push('Compositional split, without → with the masks:');
  for (const t of targets) {
    lines.push(`  ${t}: executable ${c(t, 'unconstrained', 'executable')} → ${c(t, 'constrained', 'executable')}, ` +
      `right answers (execution_accuracy) ${c(t, 'unconstrained', 'execution_accuracy')} → ${c(t, 'constrained', 'execution_accuracy')}`);
  }
  const bareTest = targets.map((t) => m[t].test!.unconstrained.valid.rate);
  lines.push(`On the test split the bare model is already valid in at least ${pct(Math.min(...bareTest))} of outputs: it rarely needs the masks there.`);
  return lines;
}

export const modelSection: DemoSection = {
  title: 'The shipped model answers questions, unconstrained and constrained',
  async run(ctx: DemoContext, out) {
    const model = await loadModel(join(ROOT, MODEL_DIR));
    const facts: FactBase = factsFromDatabase(ctx.database);
    const grammars: Record<'sql' | 'lf', Grammar> = { sql: ctx.grammars.get('sql')!, lf: ctx.grammars.get('lf')! };
    const names: Record<'sql' | 'lf', NameBindings> = { sql: ctx.sqlNames, lf: factNames(facts) };
    const runner = new SqlRunner(ctx.database, { timeoutMs: 2000, rowCap: 1000 });
    const runSql = sqlExecutor(runner, grammars.sql);
    const splits = new Map<string, Map<string, Row>>();
    out(`model ${MODEL_DIR} (${model.vocabulary.vocabSize} tokens); SQL runs read-only on the demo database, logical forms on its fact base.`);
    out('');
    out('Why these questions: Q1 and Q2 come from the test split (phrased like the training data), where');
    out('the bare model is nearly always right. Q3–Q5 come from the compositional split (combinations and');
    out('nesting depths absent from training) and were picked because the bare model writes invalid');
    out('programs for them — they show what the token masks change. They are not typical; the figures');
    out('after them are the whole evaluation.');
    out('');
    out('Under each output: its tokens and two times for the whole output — "model" is the time spent');
    out('running the network over all its steps, "masks" the time spent computing the allowed tokens at');
    out('every step (none when unconstrained): the price of the guarantee. Single runs on a shared');
    out('machine vary; `npx treewright bench` measures the masks per step properly.');
    try {
      // Warm-up, untimed: the first constrained run of a grammar computes its kept masks lazily.
      for (const target of ['sql', 'lf'] as const) {
        await generate(model, model.input('How many sheds are there?', target).ids, { grammar: grammars[target], names: names[target], maxTokens: 40 });
      }
      let n = 0;
      for (const [split, id, target] of QUESTIONS) {
        if (!splits.has(split)) splits.set(split, readRows(split));
        const row = splits.get(split)!.get(id);
        if (!row) throw new Error(`${MODEL_DIR}/data/${split}.jsonl has no row ${id}`);
        n++;
        out('');
        out(`Q${n} [${split}] ${row.question}`);
        out(`   ${`gold (${target})`.padEnd(13)}  ${target === 'sql' ? row.sql : row.lf}`);
        const input = model.input(row.question, target).ids;
        for (const unconstrained of [true, false]) {
          const r: GenerateResult = await generate(model, input, {
            grammar: grammars[target],
            names: names[target],
            unconstrained,
            maxTokens: 160,
          });
          const label = unconstrained ? 'unconstrained' : 'constrained  ';
          out(`   ${label}  ${r.text}`);
          // the measures' own names (metrics.json): valid = a program of the grammar; well-typed = also
          // every name resolves and kinds agree
          const why = (r.parse_error ?? '').split('\n')[0];
          const verdict = r.well_typed ? 'valid, well-typed' : r.valid ? `valid, not well-typed — ${why}` : `not valid — ${why}`;
          const timing = `${r.tokens.length} tokens, ${r.model_ms.toFixed(0)} ms model, ${r.mask_ms.toFixed(1)} ms masks`;
          out(`                  ${verdict} (${timing})`);
          if (r.well_typed && r.tree) {
            const answer = target === 'sql' ? await runSql(r.tree, {}) : evaluateLf(facts, r.tree);
            out(`                  answer: ${formatResult(answer)}`);
          }
        }
      }
    } finally {
      runner.close();
    }
    out('');
    out('A constrained output is always valid (a program of the grammar). A SQL one is also well-typed:');
    out('the masks resolve its table and column names. A logical form can still apply a measure or a');
    out('predicate to an entity of the wrong kind: kinds are checked after decoding, not yet masked.');
    out('Either can be a wrong answer: the guarantee is about form, not meaning.');
    out('');
    out(`The shipped evaluation (${EVAL_DIR}/{sql,lf}/metrics.json, written by \`treewright evaluate\`;`);
    out('greedy decoding; rates over all items of each split):');
    for (const line of evaluationTable(ROOT)) out(line);
    for (const line of evaluationSummary(ROOT)) out(line);
    out('(`npx treewright evaluate --help`: the same run on your own data.)');
  },
};
