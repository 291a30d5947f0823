/**
 * The one file of measured figures, `docs/figures.md`, written by `treewright bench … --write-figures`.
 *
 * README, DEVELOPERS.md and comments link to this file instead of copying numbers, so a figure
 * exists in exactly one place and always comes with how, when and where it was measured. The file
 * is a list of sections, one per bench kind (`masks` for `bench --all`, `masks-GRAMMAR-TOKENIZER`
 * for one pair, `decode-GRAMMAR` for `bench --decode`); writing a section replaces that section
 * as a whole and leaves the others alone. Each section carries the command, the date (UTC), the
 * machine (CPU model, logical cores, Node version, platform), the load average at the end of the
 * run, a table for reading and the bench's JSON output for tools.
 *
 * Section boundaries are HTML comments (`<!-- figures:ID -->` … `<!-- /figures:ID -->`), invisible
 * when the Markdown is rendered.
 */
import { existsSync, mkdirSync, readFileSync, renameSync, writeFileSync } from 'node:fs';
import { availableParallelism, cpus, loadavg, platform, release } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));

/** Default location: docs/figures.md of the package. */
export const FIGURES_FILE = join(ROOT, 'docs', 'figures.md');

export interface Machine {
  date: string;
  cpu: string;
  cores: number;
  node: string;
  platform: string;
  load_average: [number, number, number];
}

/** Where and when a measurement ran (the load average is read now: call it at the end of a run). */
export function machine(): Machine {
  const r = (x: number) => Math.round(x * 100) / 100;
  const [l1, l5, l15] = loadavg();
  return {
    date: new Date().toISOString().replace(/\.\d+Z$/, 'Z'),
    cpu: cpus()[0]?.model.trim() ?? 'unknown',
    cores: availableParallelism(),
    node: process.version,
    platform: `${platform()} ${release()}`,
    load_average: [r(l1), r(l5), r(l15)],
  };
}

export interface FiguresSection {
  /** Stable id: `masks`, `masks-lf-llama3`, `decode-sql`, … (letters, digits, `-`, `_`, `.`). */
  id: string;
  title: string;
  /** The command line that produced it, as a user would type it. */
  command: string;
  /** Markdown: the table (and notes) for readers. */
  body: string;
  /** The bench's own output (JSON-serialisable). */
  data: unknown;
  machine: Machine;
}

const HEADER = `# Measured figures

Written by \`treewright bench … --write-figures\`; do not edit by hand. Each section is one bench run:
the command, when and where it ran, and the load average of the machine at the end of the run
(figures from a machine shared with other jobs are slower than on an idle one). README and the
design notes link here instead of copying numbers.
`;

function render(s: FiguresSection): string {
  const m = s.machine;
  return [
    `<!-- figures:${s.id} -->`,
    `## ${s.title}`,
    '',
    `\`${s.command}\``,
    '',
    `${m.date} · ${m.cpu} · ${m.cores} logical cores · Node ${m.node} · ${m.platform} · load average ${m.load_average.join(' / ')} (1 / 5 / 15 min)`,
    '',
    s.body.trim(),
    '',
    '<details><summary>bench output (JSON)</summary>',
    '',
    '```json',
    JSON.stringify({ machine: m, command: s.command, results: s.data }, null, 1),
    '```',
    '',
    '</details>',
    `<!-- /figures:${s.id} -->`,
  ].join('\n');
}

/** Replaces (or appends) one section of the figures file; writes atomically (temp file + rename). */
export function writeFiguresSection(section: FiguresSection, file = FIGURES_FILE): void {
  if (!/^[A-Za-z0-9_.-]+$/.test(section.id)) throw new Error(`figures section id "${section.id}": expected letters, digits, "-", "_" or "."`);
  const old = existsSync(file) ? readFileSync(file, 'utf8') : HEADER;
  const open = `<!-- figures:${section.id} -->`;
  const close = `<!-- /figures:${section.id} -->`;
  const a = old.indexOf(open);
  const b = old.indexOf(close);
  const text = render(section);
  const next = a >= 0 && b > a ? old.slice(0, a) + text + old.slice(b + close.length) : `${old.trimEnd()}\n\n${text}\n`;
  mkdirSync(dirname(file), { recursive: true });
  const tmp = `${file}.${process.pid}.tmp`;
  writeFileSync(tmp, next);
  renameSync(tmp, file);
}

/** Reads one section's JSON back (tests, README checks); null when the file or section is missing. */
export function readFiguresSection(id: string, file = FIGURES_FILE): { machine: Machine; command: string; results: unknown } | null {
  if (!existsSync(file)) return null;
  const text = readFileSync(file, 'utf8');
  const a = text.indexOf(`<!-- figures:${id} -->`);
  const b = text.indexOf(`<!-- /figures:${id} -->`);
  if (a < 0 || b < a) return null;
  const m = /```json\n([\s\S]*?)\n```/.exec(text.slice(a, b));
  return m ? JSON.parse(m[1]) : null;
}
