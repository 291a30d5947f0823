// vitest global setup: one line when the browser tests are skipped (see test/browser.ts), printed
// when the run includes them (a whole-suite run, or file filters naming a browser test).
import { BROWSER_TESTS, CHROMIUM } from '../browser.ts';

export default function setup(): void {
  if (BROWSER_TESTS) return;
  const filters = process.argv.slice(2).filter((a) => !a.startsWith('-') && a !== 'run');
  if (filters.length > 0 && !filters.some((f) => /browser/.test(f))) return;
  process.stdout.write(`browser tests skipped: no Chromium at ${CHROMIUM} (install it, e.g. \`apt-get install chromium\` on Debian, or set TREEWRIGHT_CHROMIUM; CI=true makes them mandatory)\n`);
}
