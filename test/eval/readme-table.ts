/**
 * Prints the README's results table from metrics.json files, so its figures come from the
 * evaluation's output and are never typed by hand:
 *
 *   npx tsx test/eval/readme-table.ts lf=eval-lf/metrics.json sql=eval-sql/metrics.json
 *
 * Each argument is TARGET=PATH; the targets appear in the order given.
 */
import { readFileSync } from 'node:fs';
import { resultsTable, type TableInput } from '../../src/eval/table.ts';
import type { Metrics } from '../../src/eval/metrics.ts';

const args = process.argv.slice(2);
if (args.length === 0 || args.some((a) => !/^[^=]+=.+$/.test(a))) {
  process.stderr.write('usage: npx tsx test/eval/readme-table.ts TARGET=metrics.json [TARGET=metrics.json]...\n');
  process.exit(1);
}
const inputs: TableInput[] = args.map((a) => {
  const [target, path] = [a.slice(0, a.indexOf('=')), a.slice(a.indexOf('=') + 1)];
  return { target, metrics: JSON.parse(readFileSync(path, 'utf8')) as Metrics };
});
process.stdout.write(resultsTable(inputs) + '\n');
