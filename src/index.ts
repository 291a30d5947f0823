/**
 * treewright's library entry: the public API of every pipeline stage, in pipeline order.
 *
 *   import { loadGrammar, loadVocabulary, compileMasks } from 'treewright';
 *   const grammar = loadGrammar('grammars/sql/sql.twg');
 *   const engine = compileMasks(grammar, loadVocabulary('my-model/tokenizer.json'));
 *   const constraint = engine.bind({ Table: ['orchards'], Column: ['name', 'hectares'] });
 *
 * Importing this entry loads none of the heavy packages: onnxruntime-node is loaded by `loadModel`
 * (with @huggingface/tokenizers, light, for the question's tokens), better-sqlite3 by the functions that read or
 * build SQLite files, each at its first call (src/util/optional.ts). Two more entries:
 * `treewright/transformers` (the logits processor for transformers.js' generate(); loads
 * @huggingface/transformers) and `treewright/server` (the HTTP server; loads fastify).
 * Each stage's own index.ts documents what it produces, its costs and its limits.
 */
export { fromSchema, SchemaError, formatSchemaDiagnostic, formatSchemaDiagnostics, type FromSchemaOptions, type FromSchemaResult, type SchemaDiagnostic } from './from-schema/index.ts';
export * from './description/index.ts';
export type * from './description/ir.ts';
export type { TokenConstraint } from './util/constraint.ts';
export * from './tree/index.ts';
export * from './vocab/index.ts';
export { compileMasks, MaskEngine, MaskConstraint, MaskError, loadOrCompile, defaultCacheDir, CacheError } from './masks/index.ts';
export { loadModel, Seq2SeqModel, ModelError } from './model/index.ts';
export * from './decode/index.ts';
export { SqlRunner, checkSelectTree, sqlExecutor, evaluateLf, lfExecutor, makeFactBase, factNames, buildCoop, factsFromDatabase, buildSqliteFile, buildSqliteFileFrom, loadExecutor } from './exec/index.ts';
export type { ExecContext, ExecResult, ExecuteFn, LfAnswer, FactBase } from './exec/index.ts';
export { formatAnswer, formatResult } from './exec/index.ts';
export { MissingPackageError } from './util/optional.ts';
export { evaluate, loadItems, computeMetrics, computeTaxonomy, mcnemarExact, wilsonInterval, pairedBootstrapDifferences, writeReport } from './eval/index.ts';
