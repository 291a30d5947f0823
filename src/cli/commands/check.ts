/**
 * `treewright check GRAMMAR`: compiles a description and prints a one-screen summary (exit 0), or
 * the formatted errors on stderr (exit 1). Warnings go to stderr in both cases. `--json` prints
 * `{ok, grammar, sorts, constructors, tokens, name_sets, warnings, errors}` on stdout instead.
 */
import { readFileSync } from 'node:fs';
import type { Command } from 'commander';
import { compileDescription, formatDiagnostic, type Diagnostic } from '../../description/index.ts';
import { grammarFile } from '../../util/package.ts';
import { lineColumn } from '../../util/source.ts';
import type { RegisterCommand } from '../command.ts';
import { opt } from '../options.ts';

const WIDTH = 100;

/** `label  n: a b c`, wrapped under the list at WIDTH columns. */
function listLine(label: string, names: readonly string[]): string {
  const head = `${label.padEnd(13)}${names.length}`;
  if (names.length === 0) return head;
  const indent = ' '.repeat(head.length + 2);
  const lines: string[] = [];
  let cur = `${head}: `;
  for (const n of names) {
    if (cur.length + n.length + 1 > WIDTH && cur.trim().length > 0 && cur !== `${head}: `) {
      lines.push(cur.trimEnd());
      cur = indent;
    }
    cur += n + ' ';
  }
  lines.push(cur.trimEnd());
  return lines.join('\n');
}

function jsonDiagnostic(d: Diagnostic, text: string | null) {
  const pos = text === null ? null : lineColumn(text, d.span.start);
  return {
    code: d.code,
    message: d.message,
    file: d.file,
    line: pos?.line ?? null,
    column: pos?.column ?? null,
    hint: d.hint ?? null,
    text: text === null ? `${d.file}: ${d.severity}: ${d.message}` : formatDiagnostic(d, text),
  };
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('check')
    .description('compile a grammar description (.twg) and report errors, warnings and a summary')
    .argument('<grammar>', 'grammar description: a .twg file, or a shipped grammar by name (found in the package, from any folder)')
    .addOption(opt.json('print {ok, grammar, sorts, constructors, tokens, name_sets, warnings, errors} on stdout'))
    .action((value: string, opts: { json?: boolean }) => {
      // an unreadable path is reported as a diagnostic of its own (below), so no argument parser here
      const path = grammarFile(value) ?? value;
      let text: string | null = null;
      let diagnostics: Diagnostic[];
      let grammar = null;
      try {
        text = readFileSync(path, 'utf8');
      } catch (e) {
        diagnostics = [
          {
            severity: 'error',
            code: 'unreadable-file',
            message: `cannot read the description: ${(e as Error).message}`,
            file: path,
            span: { start: 0, end: 0 },
          },
        ];
      }
      if (text !== null) ({ grammar, diagnostics } = compileDescription(text, path));
      const errors = diagnostics!.filter((d) => d.severity === 'error');
      const warnings = diagnostics!.filter((d) => d.severity === 'warning');
      const show = (d: Diagnostic) => (text === null ? `${d.file}: ${d.severity}: ${d.message}` : formatDiagnostic(d, text));

      if (opts.json) {
        const out = {
          ok: grammar !== null,
          grammar: grammar?.name ?? null,
          sorts: grammar ? grammar.sorts.map((s) => s.name) : [],
          constructors: grammar ? grammar.constructors.map((c) => c.name) : [],
          tokens: grammar ? grammar.tokens.map((t) => t.name) : [],
          name_sets: grammar ? grammar.nameSets.map((n) => n.name) : [],
          warnings: warnings.map((d) => jsonDiagnostic(d, text)),
          errors: errors.map((d) => jsonDiagnostic(d, text)),
        };
        process.stdout.write(JSON.stringify(out, null, 2) + '\n');
        setExit(grammar ? 0 : 1);
        return;
      }
      if (warnings.length + errors.length > 0) process.stderr.write(diagnostics!.map(show).join('\n\n') + '\n');
      if (!grammar) {
        process.stderr.write(`${path}: ${errors.length} error${errors.length === 1 ? '' : 's'}\n`);
        setExit(1);
        return;
      }
      const lines = [
        `grammar      ${grammar.name} (${path})`,
        `start        ${grammar.start}`,
        listLine('sorts', grammar.sorts.map((s) => s.name)),
        listLine('constructors', grammar.constructors.map((c) => c.name)),
        listLine('tokens', grammar.tokens.map((t) => t.name)),
        listLine('name sets', grammar.nameSets.map((n) => n.name)),
        `keywords     ${grammar.keywords.length}`,
        `warnings     ${warnings.length}`,
      ];
      process.stdout.write(lines.join('\n') + '\n');
      setExit(0);
    });
};
