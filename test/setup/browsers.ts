// vitest global setup: one line when the browser tests are skipped (see test/browser.ts), printed
// when the run includes them (a whole-suite run, or file filters naming a browser test).
import { BROWSER_TESTS, CHROMIUM } from '../browser.ts';

// vitest options that take a value as the next argument (`--config test/vitest.config.ts`): their
// values are not file filters
const VALUED = new Set(['--config', '-c', '--root', '-r', '--dir', '--project', '--testNamePattern', '-t', '--reporter', '--outputFile', '--shard', '--environment', '--pool', '--mode', '--maxWorkers', '--exclude', '--testTimeout', '--hookTimeout', '--bail', '--retry', '--changed']);

/** The file filters of a vitest command line (arguments after `vitest`), without options and their values. */
export function fileFilters(args: readonly string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < args.length; i++) {
    const a = args[i]!;
    if (a.startsWith('-')) {
      if (VALUED.has(a)) i++;
      continue;
    }
    if (a === 'run' || a === 'related' || a === 'watch') continue;
    out.push(a);
  }
  return out;
}

/** Whether a run with these file filters includes the browser tests. */
export function includesBrowserTests(filters: readonly string[]): boolean {
  return filters.length === 0 || filters.some((f) => /browser/.test(f));
}

export default function setup(): void {
  if (BROWSER_TESTS) return;
  if (!includesBrowserTests(fileFilters(process.argv.slice(2)))) return;
  process.stdout.write(`browser tests skipped: no Chromium at ${CHROMIUM} (install it, e.g. \`apt-get install chromium\` on Debian, or set TREEWRIGHT_CHROMIUM; CI=true makes them mandatory)\n`);
}
