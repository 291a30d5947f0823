/**
 * `treewright demo` (`npm run demo`): a tour of treewright on the shipped grammars, printed as plain
 * text. Each part of the tour is one entry of SECTIONS; a section gets a shared context (the
 * loaded grammars, the demo database, names) and writes through `out`. Later parts of the pipeline
 * add their own section at the end of SECTIONS.
 *
 * The grammar side: check summaries, sampled programs (SQL with names from the demo database),
 * one invented program parsed to a tree, printed back and run, and a located error for a broken one.
 */
import { sqlite } from '../../util/optional.ts';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Command } from 'commander';
import { compileDescription } from '../../description/index.ts';
import type { Grammar, NameBindings } from '../../description/ir.ts';
import { openDatabaseFile } from '../../exec/database.ts';
import { createParser, createSampler, loadNames, namesFromDatabase, printTree, sampleTree } from '../../tree/index.ts';
import { PACKAGE_ROOT } from '../../util/package.ts';
import type { RegisterCommand } from '../command.ts';
import type { DemoContext, DemoSection } from './demo-context.ts';
import { modelSection } from './demo-model.ts';

export type { DemoContext, DemoSection } from './demo-context.ts';

const GRAMMAR_NAMES = ['sql', 'lf', 'json', 'arith'] as const;

/** A path inside the package, absolute (for reading) — messages show the relative form. The demo
 * reads the shipped grammars from there, wherever it is started. */
const inRepo = (relative: string) => join(PACKAGE_ROOT, relative);

/** `key  text`, with continuation lines of `text` indented under it. */
function labelled(label: string, text: string, width = 8): string {
  const pad = ' '.repeat(width);
  return text
    .split('\n')
    .map((line, i) => (i === 0 ? label.padEnd(width) : pad) + line)
    .join('\n');
}

/**
 * JSON with every object or array that fits on its line (within `width` columns) kept on one line,
 * and the rest broken one member per line with two-space indentation.
 */
export function compactJson(value: unknown, width = 96, indent = '', used = 0): string {
  const flat = JSON.stringify(value);
  if (used + indent.length + flat.length <= width || value === null || typeof value !== 'object') return flat;
  const inner = indent + '  ';
  if (Array.isArray(value)) {
    return `[\n${value.map((v) => inner + compactJson(v, width, inner)).join(',\n')}\n${indent}]`;
  }
  const entries = Object.entries(value as Record<string, unknown>).map(([k, v]) => {
    const key = `${JSON.stringify(k)}: `;
    return inner + key + compactJson(v, width, inner, key.length);
  });
  return `{\n${entries.join(',\n')}\n${indent}}`;
}

const checkSection: DemoSection = {
  title: '1. Check: the shipped grammar descriptions compile',
  run(ctx, out) {
    for (const name of GRAMMAR_NAMES) {
      const path = `grammars/${name}/${name}.twg`;
      const { grammar, diagnostics } = compileDescription(readFileSync(inRepo(path), 'utf8'), path);
      if (!grammar) throw new Error(`${path} does not compile (run \`npx treewright check ${path}\`)`);
      const warnings = diagnostics.filter((d) => d.severity === 'warning').length;
      const count = (n: number, what: string) => `${n} ${what}${n === 1 ? '' : what.endsWith('s') ? 'es' : 's'}`;
      out(
        `${path.padEnd(26)} ${count(grammar.sorts.length, 'sort')}, ${count(grammar.constructors.length, 'constructor')}, ` +
          `${count(grammar.tokens.length, 'token class')}, ${count(grammar.nameSets.length, 'name set')}, ${count(warnings, 'warning')}`,
      );
    }
    out('');
    out('(`npx treewright check FILE` prints the full summary, or located errors.)');
  },
};

/** 'accepted', or SQLite's reason for rejecting the statement. */
function sqliteVerdict(database: string, text: string): string {
  const db = new (sqlite())(database, { readonly: true, fileMustExist: true });
  try {
    db.prepare(text);
    return 'accepted';
  } catch (e) {
    return 'rejected: ' + (e as Error).message;
  } finally {
    db.close();
  }
}

const sampleSection: DemoSection = {
  title: '2. Sample: random well-typed programs, reproducible from a seed',
  run(ctx, out) {
    const sql = ctx.grammars.get('sql')!;
    out('SQL, names bound from the demo database: every column resolves to a table of its query by');
    out("the grammar's scope rules (joins left out to keep the lines short), each checked by SQLite's");
    out('own prepare. Well-formed and resolved, not meaningful:');
    for (let seed = 1; seed <= 4; seed++) {
      const tree = sampleTree(sql, { seed, maxDepth: 4, names: ctx.sqlNames, weights: { join: 0 }, plausible: true });
      const text = printTree(sql, tree);
      out('  ' + text);
      out('    SQLite: ' + sqliteVerdict(ctx.database, text));
    }
    for (const name of ['lf', 'arith', 'json'] as const) {
      const g = ctx.grammars.get(name)!;
      out('');
      out(`${name} (the first trees of the stream for seed 1):`);
      const stream = createSampler(g, { seed: 1, maxDepth: 4, names: ctx.names.get(name) ?? {}, plausible: true });
      for (let i = 0; i < 4; i++) out('  ' + printTree(g, stream.next()));
    }
  },
};

/** An invented question over the demo database, typed with untidy spacing and extra parentheses. */
const UNTIDY_SQL = 'SELECT  name,hectares FROM orchards\n  WHERE (altitude_m>300) AND NOT(planted_year<1990)\n  ORDER BY hectares DESC LIMIT 3';

const parseSection: DemoSection = {
  title: '3. Parse and print: code → JSON tree → canonical code',
  run(ctx, out) {
    const sql = ctx.grammars.get('sql')!;
    out(labelled('input', UNTIDY_SQL));
    const tree = createParser(sql).parse(UNTIDY_SQL, { file: 'question.sql', names: ctx.sqlNames });
    out('');
    out(labelled('tree', compactJson(tree, 92)));
    const printed = printTree(sql, tree);
    out('');
    out(labelled('printed', printed));
    const db = new (sqlite())(ctx.database, { readonly: true, fileMustExist: true });
    try {
      const rows = db.prepare(printed).all() as Record<string, unknown>[];
      out('');
      out(labelled('rows', rows.map((r) => JSON.stringify(r)).join('\n')));
    } finally {
      db.close();
    }
  },
};

const BROKEN = [
  { grammar: 'sql', file: 'broken.sql', text: 'SELECT name, FROM orchards WHERE hectares > 5' },
  { grammar: 'lf', file: 'broken.lf', text: 'lambda $x. orchard($x) & owns($y, $x)' },
  { grammar: 'json', file: 'broken.json', text: '{"shed": "River Barn", "capacity": 360,}' },
] as const;

const errorSection: DemoSection = {
  title: '4. Errors: broken programs are reported with file, line, column and what was expected',
  run(ctx, out) {
    BROKEN.forEach((b, i) => {
      if (i > 0) out('');
      const g = ctx.grammars.get(b.grammar)!;
      try {
        createParser(g).parse(b.text, { file: b.file, names: b.grammar === 'sql' ? ctx.sqlNames : ctx.names.get(b.grammar) });
        throw new Error(`the broken ${b.grammar} program parsed`);
      } catch (e) {
        if ((e as Error).message.startsWith('the broken')) throw e;
        out((e as Error).message);
      }
    });
  },
};

/** The tour, in order. Later stages append their sections here. */
export const SECTIONS: DemoSection[] = [modelSection, checkSection, sampleSection, parseSection, errorSection];

/** Runs every section; returns the exit code (1 when a section fails, after reporting it). */
export async function runDemo(out: (line: string) => void): Promise<number> {
  const grammars = new Map<string, Grammar>();
  for (const name of GRAMMAR_NAMES) {
    const path = `grammars/${name}/${name}.twg`;
    const { grammar } = compileDescription(readFileSync(inRepo(path), 'utf8'), path);
    if (grammar) grammars.set(name, grammar);
  }
  const built = openDatabaseFile(inRepo('grammars/sql/coop.sql'));
  try {
    const database = built.path;
    const schema = new Map<string, string[]>();
    const db = new (sqlite())(database, { readonly: true });
    for (const t of db.prepare("SELECT name FROM sqlite_schema WHERE type = 'table' ORDER BY rowid").pluck().all() as string[]) {
      schema.set(t, db.prepare('SELECT name FROM pragma_table_info(?) ORDER BY cid').pluck().all(t) as string[]);
    }
    db.close();
    const names = new Map<string, NameBindings>([
      ['lf', loadNames(inRepo('grammars/lf/samples/names.json'), grammars.get('lf'))],
      ['arith', loadNames(inRepo('grammars/arith/samples/names.json'))],
    ]);
    const ctx: DemoContext = { grammars, database, sqlNames: namesFromDatabase(database), schema, names };
    out('treewright demo: the shipped model and grammars');
    for (const section of SECTIONS) {
      out('');
      out(section.title);
      out('-'.repeat(section.title.length));
      try {
        await section.run(ctx, out);
      } catch (e) {
        out(`demo failed in "${section.title}": ${(e as Error).message}`);
        return 1;
      }
    }
    return 0;
  } finally {
    built.dispose();
  }
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('demo')
    .description('a tour of treewright on the shipped grammars')
    .action(async () => {
      setExit(await runDemo((line) => process.stdout.write(line + '\n')));
    });
};
