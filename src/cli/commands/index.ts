/**
 * The command registry. Each command file exports `register: RegisterCommand` (../command.ts); add
 * an entry here to make it part of the CLI. Shared options come from ../options.ts.
 *
 * Command files are loaded on demand: `treewright generate …` imports generate.ts alone (and what it
 * imports), so a command pays only for its own stages; `treewright --help` imports none of them
 * and lists the commands from the `term` and `summary` below. Both must equal what the command's
 * own registration gives (its help term and description); test/cli/registry.test.ts checks it.
 */
import type { RegisterCommand } from '../command.ts';

export interface CommandEntry {
  /** the command's name (its first argument) */
  readonly name: string;
  /** its line in the command list of `treewright --help`: name, `[options]`, arguments */
  readonly term: string;
  /** its description */
  readonly summary: string;
  /** imports the command file */
  readonly load: () => Promise<{ register: RegisterCommand }>;
}

export const COMMANDS: readonly CommandEntry[] = [
  { name: 'bench', term: 'bench [options]', summary: 'measure token-mask speed along realistic decoding paths, against a naive baseline', load: () => import('./bench.ts') },
  { name: 'check', term: 'check [options] <grammar>', summary: 'compile a grammar description (.twg) and report errors, warnings and a summary', load: () => import('./check.ts') },
  { name: 'evaluate', term: 'evaluate [options]', summary: 'measure a model on a data file, unconstrained and constrained: validity, accuracy, latency, and an HTML report', load: () => import('./evaluate.ts') },
  { name: 'demo', term: 'demo', summary: 'a tour of treewright on the shipped grammars', load: () => import('./demo.ts') },
  { name: 'from-schema', term: 'from-schema [options] <schema>', summary: 'write a description whose programs are the JSON texts a JSON Schema (draft 2020-12) accepts', load: () => import('./from-schema.ts') },
  { name: 'generate', term: 'generate [options] <question>', summary: 'answer a question with a seq2seq model, constrained to programs of a grammar', load: () => import('./generate.ts') },
  { name: 'mask', term: 'mask [options]', summary: 'print the tokens a model may emit after a text prefix (the token mask)', load: () => import('./mask.ts') },
  { name: 'parse', term: 'parse [options] [file]', summary: 'parse a program into its JSON tree', load: () => import('./parse.ts') },
  { name: 'print', term: 'print [options] [tree]', summary: 'print a JSON tree (or JSON Lines of trees) as canonical code', load: () => import('./print.ts') },
  { name: 'sample', term: 'sample [options]', summary: 'print random well-typed programs of a grammar', load: () => import('./sample.ts') },
  { name: 'schema', term: 'schema [options]', summary: "print the JSON Schema (draft 2020-12) of the grammar's JSON trees; bound name sets become enums", load: () => import('./schema.ts') },
  { name: 'serve', term: 'serve [options]', summary: 'serve the JSON API and the decoding playground page over HTTP', load: () => import('./serve.ts') },
  { name: 'worker', term: 'worker [options]', summary: 'make evaluation rows for `treewright evaluate --queue`: pull jobs from Redis, decode, execute, post the rows', load: () => import('./worker.ts') },
];
