/**
 * What `evaluate` needs to make rows, built from its flags: the grammar, the name bindings, the
 * executor (--db, --executor), the model, and a RowMaker per set of decoding options. Shared by
 * `evaluate` (in this process), its local worker processes (eval-child.ts) and `treewright worker`
 * (queue workers), so that every one of them makes the same rows from the same flags.
 */
import type { NameBindings, Grammar } from '../../description/ir.ts';
import type { ExecuteFn } from '../../exec/types.ts';
import type { Seq2SeqModel } from '../../model/index.ts';
import type { DecodeFn, Mode, RowMaker } from '../../eval/run.ts';
import type { Decoding } from '../../queue/fingerprint.ts';
import { bindNames, dbBindsNames, loadGrammarFile, openDatabase } from '../options.ts';

/** The flags that decide how rows are made (the decoding options travel separately, see Decoding). */
export interface SetupFlags {
  readonly model: string;
  /** a resolved --grammar value (a description file) */
  readonly grammar: string;
  readonly db?: string;
  readonly names?: string;
  readonly executor?: string;
}

export interface EvalSetup {
  readonly grammar: Grammar;
  readonly names: NameBindings;
  readonly model: Seq2SeqModel;
  /** the prefix a Decoding with prefix null stands for (the model's own) */
  readonly defaultPrefix: string;
  /** a RowMaker for these decoding options (one per distinct options, made on first use) */
  maker(decoding: Decoding): RowMaker;
  /** compiles the masks (or loads them from the cache) and decodes once in each mode, untimed */
  warmUp(question: string, decoding: Decoding): Promise<void>;
  dispose(): Promise<void>;
}

/** The grammar, names and executor of the flags, before any model is loaded (cheap checks first). */
export async function openExecution(f: SetupFlags): Promise<{ grammar: Grammar; names: NameBindings; execute: ExecuteFn; dbPath: string | undefined; dispose(): void }> {
  const { SqlRunner, sqlExecutor, lfExecutor, factsFromDatabase, loadExecutor } = await import('../../exec/index.ts');
  const grammar = loadGrammarFile(f.grammar);
  const gPath = f.grammar;
  const db = f.db === undefined ? null : openDatabase(f.db);
  let closeRunner: (() => void) | null = null;
  try {
    let execute: ExecuteFn;
    if (f.executor !== undefined) execute = await loadExecutor(f.executor);
    else if (grammar.name === 'sql') {
      if (db === null) throw new Error(`--db: missing; expected the SQLite database (or .sql script) the ${gPath} programs run on`);
      const runner = new SqlRunner(db.path);
      closeRunner = () => runner.close();
      execute = sqlExecutor(runner, grammar);
    } else if (grammar.name === 'lf') {
      if (db === null) throw new Error(`--db: missing; expected the SQLite database (or .sql script) the ${gPath} fact base is read from`);
      execute = lfExecutor(factsFromDatabase(db.path));
    } else {
      throw new Error(`--executor: missing; expected an executor module for grammar ${grammar.name} (${gPath}); the shipped executors cover sql and lf`);
    }
    // with your own executor, --db may serve the executor alone: names come from it only when the
    // grammar declares sets it can bind
    const names = (await bindNames(grammar, f, db !== null && dbBindsNames(grammar) ? db : null)) ?? {};
    return {
      grammar,
      names,
      execute,
      dbPath: db?.path,
      dispose: () => {
        closeRunner?.();
        db?.dispose();
      },
    };
  } catch (e) {
    closeRunner?.();
    db?.dispose();
    throw e;
  }
}

/** Opens everything the flags name; `threads` caps onnxruntime's threads (for several processes on one machine). */
export async function openEvalSetup(f: SetupFlags, threads?: number): Promise<EvalSetup> {
  // loaded here so that other commands start without onnxruntime and the mask engine
  const { generate, maskEngine } = await import('../../decode/index.ts');
  const { loadModel } = await import('../../model/index.ts');
  const { RowMaker } = await import('../../eval/run.ts');
  const { createScorer } = await import('../../eval/target.ts');
  const { decodingKey } = await import('../../queue/fingerprint.ts');

  const ex = await openExecution(f);
  let model: Seq2SeqModel;
  try {
    model = await loadModel(f.model, threads === undefined ? {} : { threads });
  } catch (e) {
    ex.dispose();
    throw e;
  }
  const { grammar, names } = ex;
  const scorer = createScorer({ grammar, names, execute: ex.execute, context: { grammar, db: ex.dbPath } });
  const defaultPrefix = model.prefixFor(grammar.name);
  const makers = new Map<string, RowMaker>();
  const decodeWith = (d: Decoding): DecodeFn => {
    const prefix = d.prefix ?? defaultPrefix;
    return async (item, mode: Mode) => {
      const r = await generate(model, model.input(item.question, grammar.name, prefix).ids, {
        grammar,
        names,
        unconstrained: mode === 'unconstrained',
        strategy: d.beam !== null ? 'beam' : 'greedy',
        beamWidth: d.beam ?? undefined,
        maxTokens: d.maxTokens ?? undefined,
      });
      return { text: r.text, tokens: r.tokens.length, model_ms: r.model_ms, mask_ms: r.mask_ms, truncated: r.finished === 'length', token_texts: r.tokenTexts };
    };
  };
  return {
    grammar,
    names,
    model,
    defaultPrefix,
    maker(d) {
      const key = decodingKey(d);
      let m = makers.get(key);
      if (m === undefined) {
        m = new RowMaker(decodeWith(d), scorer);
        makers.set(key, m);
      }
      return m;
    },
    async warmUp(question, d) {
      // outside the timed loop: compile the grammar's masks for this vocabulary (or load them from
      // the cache) and run both modes once, so the first item's latency is not the set-up
      maskEngine(model, grammar);
      const prefix = d.prefix ?? defaultPrefix;
      for (const unconstrained of [true, false]) await generate(model, model.input(question, grammar.name, prefix).ids, { grammar, names, unconstrained, maxTokens: 4 });
    },
    async dispose() {
      try {
        await model.dispose();
      } finally {
        ex.dispose();
      }
    },
  };
}
