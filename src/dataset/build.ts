/**
 * Builds the demo dataset and writes models/coop/data/{train,dev,test,compositional}.jsonl.
 * Run: `npx tsx src/dataset/build.ts`  (same seed → same bytes)
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildDataset, DEFAULT_SEED, toJsonl } from './index.ts';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const outDir = join(root, 'models', 'coop', 'data');

const t0 = Date.now();
const ds = buildDataset({ seed: DEFAULT_SEED, verifyParse: true });
mkdirSync(outDir, { recursive: true });
for (const split of ['train', 'dev', 'test', 'compositional'] as const) {
  writeFileSync(join(outDir, `${split}.jsonl`), toJsonl(ds[split]));
  console.log(`${split}: ${ds[split].length} rows`);
}
console.log(`written to ${outDir} in ${Date.now() - t0} ms`);
