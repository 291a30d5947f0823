/**
 * `treewright bench --decode --model DIR --grammar G [--db F|--names F] --questions FILE.jsonl
 * --limit N [--decode-beam K] [--json]`: what the masks cost inside the decoder loop, measured in one
 * process and one run — unconstrained and constrained decoding interleaved question by question
 * (the order alternates), so the machine's load hits both alike.
 *
 * `--json` prints one line:
 *   model_ms_per_step        decoder call time per call, unconstrained greedy
 *   mask_us_per_step         mask time (masks computed, applied to the logits, states advanced)
 *                            per decoding position, constrained greedy
 *   mask_us_per_step_beam    the same for constrained beam search (per search step, all hypotheses)
 *   mask_share_greedy/_beam  mask time / wall-clock decoding time, constrained runs
 *   throughput_ratio_greedy/_beam  output tokens per second (EOS included), constrained /
 *                            unconstrained
 *   forced_share, forced_share_beam  share of constrained positions whose text the grammar forced
 *                            (fed to the decoder as runs, see src/decode/search.ts)
 *   calls_per_position, calls_per_position_beam  decoder calls / positions, constrained
 *   mask_us_per_step_first   mask time per position of the first question (a fresh process: cold
 *                            tables, no JIT) and mask_us_per_step_later (median over the others)
 *   questions, load_average, rss_mb, well_typed_* and a few more.
 * The first question is excluded from every aggregate except the `_first` figure.
 */
import { readFileSync } from 'node:fs';
import { loadavg } from 'node:os';
import type { Grammar, NameBindings } from '../../description/ir.ts';
import { UsageError } from '../command.ts';

export interface DecodeBenchOptions {
  model: string;
  questions: string;
  limit: number;
  beam: number;
  maxTokens?: number;
  prefix?: string;
  threads?: number;
  /** onnxruntime workers spin between calls (the default before the decode-loop change) */
  spinning?: boolean;
  /** one decoder call per token (no forced runs) */
  oneCallPerToken?: boolean;
}

export interface DecodeBenchResult {
  model: string;
  grammar: string;
  spinning: boolean;
  forced_runs: boolean;
  vocab_size: number;
  questions: number;
  model_ms_per_step: number;
  mask_us_per_step: number;
  mask_us_per_step_beam: number;
  mask_share_greedy: number;
  mask_share_beam: number;
  throughput_ratio_greedy: number;
  throughput_ratio_beam: number;
  forced_share: number;
  forced_share_beam: number;
  calls_per_position: number;
  calls_per_position_beam: number;
  mask_us_per_step_first: number;
  mask_us_per_step_later: number;
  tokens_per_s: { greedy_unconstrained: number; greedy_constrained: number; beam_unconstrained: number; beam_constrained: number };
  well_typed: { greedy_unconstrained: number; greedy_constrained: number; beam_unconstrained: number; beam_constrained: number };
  mask_compile_ms: number;
  rss_mb: number;
  load_average: number;
}

/** Questions of a JSON-lines file: the `question` (or `input`, `source`) field of each line. */
export function readQuestions(file: string, limit: number): string[] {
  const out: string[] = [];
  const lines = readFileSync(file, 'utf8').split('\n');
  for (let i = 0; i < lines.length && out.length < limit; i++) {
    if (lines[i].trim() === '') continue;
    let row: unknown;
    try {
      row = JSON.parse(lines[i]);
    } catch (e) {
      throw new UsageError(`${file}:${i + 1}:1: not JSON (${(e as Error).message}); expected one object per line with a "question" field`);
    }
    const o = row as Record<string, unknown>;
    const q = o?.question ?? o?.input ?? o?.source;
    if (typeof q !== 'string') throw new UsageError(`${file}:${i + 1}:1: no "question" string; expected one object per line with a "question" field`);
    out.push(q);
  }
  if (out.length < 2) throw new UsageError(`${file}: ${out.length} question(s); expected at least 2 (the first one is measured apart)`);
  return out;
}

interface Tally {
  tokens: number;
  totalMs: number;
  modelMs: number;
  maskMs: number;
  calls: number;
  positions: number;
  forced: number;
  wellTyped: number;
  runs: number;
}

const tally = (): Tally => ({ tokens: 0, totalMs: 0, modelMs: 0, maskMs: 0, calls: 0, positions: 0, forced: 0, wellTyped: 0, runs: 0 });
const r3 = (x: number) => Math.round(x * 1000) / 1000;
const r1 = (x: number) => Math.round(x * 10) / 10;

export async function runDecodeBench(grammar: Grammar, names: NameBindings, o: DecodeBenchOptions): Promise<DecodeBenchResult> {
  const { loadModel } = await import('../../model/index.ts');
  const { generate, maskEngine, boundConstraint } = await import('../../decode/index.ts');
  const questions = readQuestions(o.questions, o.limit);
  const model = await loadModel(o.model, { threads: o.threads, spinning: o.spinning === true });
  try {
    const maxTokens = Math.min(o.maxTokens ?? 128, model.outputLimit());
    const t0 = performance.now();
    boundConstraint(maskEngine(model, grammar), names); // what generate() uses: compiled, prepared and warmed up once, kept
    const compileMs = performance.now() - t0;
    const modes = {
      greedy_unconstrained: { strategy: 'greedy', unconstrained: true },
      greedy_constrained: { strategy: 'greedy' },
      beam_unconstrained: { strategy: 'beam', beamWidth: o.beam, unconstrained: true },
      beam_constrained: { strategy: 'beam', beamWidth: o.beam },
    } as const;
    type Mode = keyof typeof modes;
    const t: Record<Mode, Tally> = { greedy_unconstrained: tally(), greedy_constrained: tally(), beam_unconstrained: tally(), beam_constrained: tally() };
    const perQuestionMask: number[] = [];
    let first = NaN;
    for (let qi = 0; qi < questions.length; qi++) {
      const input = model.input(questions[qi], grammar.name, o.prefix);
      // interleaved, alternating which mode goes first; constrained greedy first on question 0, so
      // that it meets the masks cold
      const order: Mode[][] = qi % 2 === 0 ? [['greedy_constrained', 'greedy_unconstrained'], ['beam_constrained', 'beam_unconstrained']] : [['greedy_unconstrained', 'greedy_constrained'], ['beam_unconstrained', 'beam_constrained']];
      for (const pair of order) {
        for (const mode of pair) {
          const r = await generate(model, input.ids, { ...modes[mode], grammar, names, maxTokens, forcedRuns: o.oneCallPerToken !== true });
          if (mode === 'greedy_constrained') {
            const us = (r.mask_ms * 1000) / Math.max(1, r.positions);
            if (qi === 0) first = us;
            else perQuestionMask.push(us);
          }
          if (qi === 0) continue; // warm-up of the model and the JIT: measured apart
          const x = t[mode];
          x.tokens += r.tokens.length + (r.finished === 'eos' ? 1 : 0);
          x.totalMs += r.total_ms;
          x.modelMs += r.model_ms;
          x.maskMs += r.mask_ms;
          x.calls += r.steps;
          x.positions += r.positions;
          x.forced += r.forced;
          x.wellTyped += r.well_typed ? 1 : 0;
          x.runs++;
        }
      }
    }
    const tps = (x: Tally) => (x.tokens / x.totalMs) * 1000;
    const later = [...perQuestionMask].sort((a, b) => a - b);
    const gc = t.greedy_constrained;
    const bc = t.beam_constrained;
    return {
      model: o.model,
      grammar: grammar.name,
      spinning: o.spinning === true,
      forced_runs: o.oneCallPerToken !== true,
      vocab_size: model.vocabSize,
      questions: questions.length,
      model_ms_per_step: r3(t.greedy_unconstrained.modelMs / t.greedy_unconstrained.calls),
      mask_us_per_step: r1((gc.maskMs * 1000) / gc.positions),
      mask_us_per_step_beam: r1((bc.maskMs * 1000) / bc.positions),
      mask_share_greedy: r3(gc.maskMs / gc.totalMs),
      mask_share_beam: r3(bc.maskMs / bc.totalMs),
      throughput_ratio_greedy: r3(tps(gc) / tps(t.greedy_unconstrained)),
      throughput_ratio_beam: r3(tps(bc) / tps(t.beam_unconstrained)),
      forced_share: r3(gc.forced / gc.positions),
      forced_share_beam: r3(bc.forced / bc.positions),
      calls_per_position: r3(gc.calls / gc.positions),
      calls_per_position_beam: r3(bc.calls / bc.positions),
      mask_us_per_step_first: r1(first),
      mask_us_per_step_later: r1(later[later.length >> 1]),
      tokens_per_s: {
        greedy_unconstrained: r1(tps(t.greedy_unconstrained)),
        greedy_constrained: r1(tps(gc)),
        beam_unconstrained: r1(tps(t.beam_unconstrained)),
        beam_constrained: r1(tps(bc)),
      },
      well_typed: {
        greedy_unconstrained: r3(t.greedy_unconstrained.wellTyped / t.greedy_unconstrained.runs),
        greedy_constrained: r3(gc.wellTyped / gc.runs),
        beam_unconstrained: r3(t.beam_unconstrained.wellTyped / t.beam_unconstrained.runs),
        beam_constrained: r3(bc.wellTyped / bc.runs),
      },
      mask_compile_ms: Math.round(compileMs),
      rss_mb: Math.round(process.memoryUsage().rss / 2 ** 20),
      load_average: r1(loadavg()[0]),
    };
  } finally {
    await model.dispose();
  }
}

/** The figures file's table for one decode bench result. */
export function decodeBenchTable(r: DecodeBenchResult): string {
  const pct = (x: number) => `${r1(x * 100)} %`;
  return [
    '| measure | greedy | beam |',
    '|---|---|---|',
    `| mask time per step (µs) | ${r.mask_us_per_step} | ${r.mask_us_per_step_beam} |`,
    `| mask share of decoding time | ${pct(r.mask_share_greedy)} | ${pct(r.mask_share_beam)} |`,
    `| throughput constrained / unconstrained | ${r.throughput_ratio_greedy}× | ${r.throughput_ratio_beam}× |`,
    `| output tokens/s unconstrained → constrained | ${r.tokens_per_s.greedy_unconstrained} → ${r.tokens_per_s.greedy_constrained} | ${r.tokens_per_s.beam_unconstrained} → ${r.tokens_per_s.beam_constrained} |`,
    `| forced steps (share of constrained steps) | ${pct(r.forced_share)} | ${pct(r.forced_share_beam)} |`,
    `| decoder calls per step, constrained | ${r.calls_per_position} | ${r.calls_per_position_beam} |`,
    `| well-typed unconstrained → constrained | ${pct(r.well_typed.greedy_unconstrained)} → ${pct(r.well_typed.greedy_constrained)} | ${pct(r.well_typed.beam_unconstrained)} → ${pct(r.well_typed.beam_constrained)} |`,
    '',
    `Model: ${r.model} (vocabulary ${r.vocab_size}), grammar ${r.grammar}, ${r.questions} questions (the first measured apart). Onnxruntime workers ${r.spinning ? 'spinning' : 'sleeping'} between calls; ${r.forced_runs ? 'forced runs fed as one call' : 'one decoder call per token'}. ` +
      `Decoder call ${r.model_ms_per_step} ms (unconstrained greedy). Mask time per step of the first question of the process ` +
      `${r.mask_us_per_step_first} µs, median of the others ${r.mask_us_per_step_later} µs. Masks compiled, prepared and warmed up (src/decode/warm.ts) in ${r.mask_compile_ms} ms, before the first question; RSS ${r.rss_mb} MB; ` +
      `load average at the end ${r.load_average}.`,
  ].join('\n');
}
