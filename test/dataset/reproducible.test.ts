// The shipped dataset files are exactly what the generator writes for the default seed.
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { describe, expect, it, vi } from 'vitest';
import { buildDataset, DEFAULT_SEED, SPLITS, toJsonl } from '../../src/dataset/index.ts';

vi.setConfig({ testTimeout: 180_000 });

const sha = (s: string | Buffer) => createHash('sha256').update(s).digest('hex');

describe('dataset build', () => {
  const built = buildDataset({ seed: DEFAULT_SEED });

  it('reproduces the shipped files byte for byte (sha256)', () => {
    for (const split of SPLITS) {
      expect(sha(toJsonl(built[split])), split).toBe(sha(readFileSync(`models/coop/data/${split}.jsonl`)));
    }
  });

  it('gives other data for another seed', () => {
    const other = buildDataset({ seed: DEFAULT_SEED + 1, devSize: 50, testSize: 50 });
    expect(sha(toJsonl(other.compositional))).not.toBe(sha(toJsonl(built.compositional)));
  });

  it('has the planned sizes and disjoint questions across splits', () => {
    expect(built.train.length).toBeGreaterThanOrEqual(4000);
    expect(built.train.length).toBeLessThanOrEqual(6000);
    expect(built.dev.length).toBe(400);
    expect(built.test.length).toBe(400);
    expect(built.compositional.length).toBeGreaterThanOrEqual(350);
    const all = SPLITS.flatMap((s) => built[s].map((r) => r.question));
    expect(new Set(all).size).toBe(all.length);
    const ids = SPLITS.flatMap((s) => built[s].map((r) => r.id));
    expect(new Set(ids).size).toBe(ids.length);
  });
});
