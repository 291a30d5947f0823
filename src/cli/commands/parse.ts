/**
 * `treewright parse --grammar G [FILE|-] [--names FILE] [--db FILE]`: code → JSON tree (one line on
 * stdout). Exit 1 with a located error (`file:line:col: expected ...` and an excerpt) on stderr.
 * With names bound, unknown names are located errors too; unbound variables always are.
 *
 * Also home of the small helpers the tree commands share (grammar argument, input, names).
 */
import { existsSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import type { Command } from 'commander';
import { DescriptionError, loadGrammar } from '../../description/index.ts';
import type { Grammar, NameBindings } from '../../description/ir.ts';
import { checkNames, createParser, GrammarFeatureError, loadNames, namesFromDatabase, NamesError, ParseError } from '../../tree/index.ts';
import type { RegisterCommand } from './index.ts';

/** Thrown by the helpers below; the command prints `message` on stderr and exits 1. */
export class UsageError extends Error {}

/** `--grammar sql` names a shipped grammar (grammars/sql/sql.twg); anything else is a path. */
export function resolveGrammar(g: string): Grammar {
  let path = g;
  if (/^[a-z][a-z0-9_-]*$/.test(g) && !existsSync(g)) {
    path = fileURLToPath(new URL(`../../../grammars/${g}/${g}.twg`, import.meta.url));
  }
  return loadGrammar(path);
}

/** Reads FILE, or standard input for `-`; returns the text and the name messages use. */
export function readInput(file: string | undefined): { text: string; name: string } {
  const f = file ?? '-';
  try {
    return f === '-' ? { text: readFileSync(0, 'utf8'), name: '<stdin>' } : { text: readFileSync(f, 'utf8'), name: f };
  } catch (e) {
    throw new UsageError(`${f}: cannot read: ${(e as Error).message}`);
  }
}

/** Bindings from `--db` (SQLite: Table, Column) and `--names` (a JSON file; wins per set), checked against the grammar. */
export function namesOption(grammar: Grammar, opts: { names?: string; db?: string }): NameBindings | undefined {
  if (opts.names === undefined && opts.db === undefined) return undefined;
  let out: Record<string, readonly string[]> = {};
  if (opts.db !== undefined) {
    const fromDb = namesFromDatabase(opts.db);
    checkNames(grammar, fromDb, opts.db);
    out = { ...fromDb };
  }
  if (opts.names !== undefined) {
    const fromFile = loadNames(opts.names);
    checkNames(grammar, fromFile, opts.names);
    out = { ...out, ...fromFile };
  }
  return out;
}

/** Runs a command body; known errors become a message on stderr and exit code 1. */
export function runReporting(setExit: (code: number) => void, body: () => void): void {
  try {
    body();
    setExit(0);
  } catch (e) {
    if (e instanceof UsageError || e instanceof DescriptionError || e instanceof NamesError || e instanceof ParseError || e instanceof GrammarFeatureError || (e instanceof Error && e.name === 'TreeError') || (e instanceof Error && e.name === 'SampleError')) {
      process.stderr.write(e.message + '\n');
      setExit(1);
      return;
    }
    throw e;
  }
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('parse')
    .description('parse a program into its JSON tree')
    .requiredOption('--grammar <g>', 'grammar description (.twg path, or a shipped grammar: sql, lf, arith, json)')
    .argument('[file]', 'program file, or - for standard input', '-')
    .option('--names <file>', 'JSON file binding open name sets: {"Set": ["a", "b"]}')
    .option('--db <file>', 'SQLite database whose table and column names bind Table and Column')
    .action((file: string, opts: { grammar: string; names?: string; db?: string }) => {
      runReporting(setExit, () => {
        const grammar = resolveGrammar(opts.grammar);
        const names = namesOption(grammar, opts);
        const { text, name } = readInput(file);
        // a final line break ends the file, not the program
        const tree = createParser(grammar).parse(text.replace(/\r?\n$/, ''), { file: name, names });
        process.stdout.write(JSON.stringify(tree) + '\n');
      });
    });
};
