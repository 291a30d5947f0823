/**
 * `treewright bench --startup [--runs N] [--json] [--write-figures]`: what the package costs before
 * any work is done — the npm tarball's size (`npm pack --dry-run`) and wall-clock start-up of fresh
 * processes, each against the same run's bare `node -e 0`:
 * - `treewright --help` from the compiled package (dist/cli/bin.js) and from the TypeScript sources
 *   through tsx (src/cli/treewright.mjs, the development entry: the figure before the build existed);
 * - a cold `treewright generate` (a new process: load the demo model, compile or load the masks,
 *   answer one question) from both, the mask cache (the default one) written by an untimed run first.
 * Commands run interleaved, `--runs` times each (default 5); the median is reported. The machine's
 * load average is printed with them: on a shared machine every figure is slower than on an idle one,
 * the ratios less so.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { UsageError } from '../command.ts';
import { machine, writeFiguresSection } from '../figures.ts';

export interface StartupResult {
  runs: number;
  tarball_bytes: number | null;
  unpacked_bytes: number | null;
  tarball_files: number | null;
  node_ms: number;
  help_ms: number;
  help_tsx_ms: number | null;
  generate_ms: number | null;
  generate_tsx_ms: number | null;
  help_ratio: number;
  generate_ratio: number | null;
  load_average: number;
}

const round = (x: number, digits = 0) => Math.round(x * 10 ** digits) / 10 ** digits;
const median = (xs: number[]) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
};

function timed(args: readonly string[], cwd: string): number {
  const t0 = performance.now();
  const r = spawnSync(process.execPath, args, { cwd, stdio: ['ignore', 'ignore', 'pipe'], encoding: 'utf8' });
  const ms = performance.now() - t0;
  if (r.status !== 0 && r.status !== 2) throw new Error(`bench --startup: \`node ${args.join(' ')}\` failed (${r.status}): ${r.stderr.trim().split('\n')[0]}`);
  return ms;
}

function packSize(root: string): { bytes: number; unpacked: number; files: number } | null {
  try {
    // --ignore-scripts: the size of what dist/ holds now (build first: npm run build)
    const out = execFileSync(process.platform === 'win32' ? 'npm.cmd' : 'npm', ['pack', '--dry-run', '--json', '--ignore-scripts'], { cwd: root, encoding: 'utf8', stdio: ['ignore', 'pipe', 'ignore'] });
    const [p] = JSON.parse(out) as { size: number; unpackedSize: number; entryCount: number }[];
    return { bytes: p.size, unpacked: p.unpackedSize, files: p.entryCount };
  } catch {
    return null;
  }
}

export function benchStartup(root: string, runs: number): StartupResult {
  const bin = join(root, 'dist', 'cli', 'bin.js');
  if (!existsSync(bin)) throw new UsageError(`bench --startup: ${bin} does not exist; build the package first (npm run build)`);
  const tsxEntry = join(root, 'src', 'cli', 'treewright.mjs');
  const withTsx = existsSync(tsxEntry) && existsSync(join(root, 'node_modules', 'tsx'));
  const model = join(root, 'models', 'coop');
  const withModel = existsSync(join(model, 'config.json'));
  // the default mask cache (os.tmpdir()/treewright-cache), as a user's second run finds it
  const generate = (entry: string) => [entry, 'generate', '--model', model, '--grammar', 'sql', '--db', join(root, 'grammars', 'sql', 'coop.sql'), 'Which orchards cover more than 5 hectares?'];
  const samples: Record<string, number[]> = { node: [], help: [], helpTsx: [], gen: [], genTsx: [] };
  if (withModel) timed(generate(bin), root); // writes the mask cache when it is not there yet
  for (let i = 0; i < runs; i++) {
    samples.node.push(timed(['-e', '0'], root));
    samples.help.push(timed([bin, '--help'], root));
    if (withTsx) samples.helpTsx.push(timed([tsxEntry, '--help'], root));
    if (withModel) samples.gen.push(timed(generate(bin), root));
    if (withModel && withTsx) samples.genTsx.push(timed(generate(tsxEntry), root));
  }
  const m = (k: string) => (samples[k].length ? round(median(samples[k])) : null);
  const nodeMs = median(samples.node);
  const pack = packSize(root);
  return {
    runs,
    tarball_bytes: pack?.bytes ?? null,
    unpacked_bytes: pack?.unpacked ?? null,
    tarball_files: pack?.files ?? null,
    node_ms: round(nodeMs),
    help_ms: m('help')!,
    help_tsx_ms: m('helpTsx'),
    generate_ms: m('gen'),
    generate_tsx_ms: m('genTsx'),
    help_ratio: round(median(samples.help) / nodeMs, 1),
    generate_ratio: samples.gen.length ? round(median(samples.gen) / nodeMs, 1) : null,
    load_average: machine().load_average[0],
  };
}

const kb = (b: number | null) => (b === null ? '–' : `${round(b / 1024)} KB`);
const ms = (x: number | null) => (x === null ? '–' : `${x} ms`);

export function startupTable(r: StartupResult): string {
  return [
    '| | compiled package (dist/) | TypeScript sources through tsx (before the build) |',
    '|---|---|---|',
    `| \`node -e 0\` | ${ms(r.node_ms)} | |`,
    `| \`treewright --help\` | ${ms(r.help_ms)} (${r.help_ratio}× node) | ${ms(r.help_tsx_ms)} |`,
    `| cold \`treewright generate\` (demo model, SQL, one question) | ${ms(r.generate_ms)}${r.generate_ratio === null ? '' : ` (${r.generate_ratio}× node)`} | ${ms(r.generate_tsx_ms)} |`,
    '',
    `npm tarball: ${kb(r.tarball_bytes)} (${kb(r.unpacked_bytes)} unpacked, ${r.tarball_files ?? '–'} files). Median of ${r.runs} runs per command, run interleaved; load average ${r.load_average}.`,
  ].join('\n');
}

export function writeStartupFigures(r: StartupResult, command: string, file: string): void {
  writeFiguresSection({ id: 'startup', title: 'Package: tarball size and start-up time', command, body: `${startupTable(r)}\n\nWall clock from process start to exit; "cold" = a new process (model loaded, masks read from the cache written by an untimed first run).`, data: r, machine: machine() }, file);
}
