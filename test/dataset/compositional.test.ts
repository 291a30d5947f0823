// The compositional split holds combinations and depths that train (and dev/test) never show.
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { HELD_OUT, heldOutRule, parseTemplate, type Row } from '../../src/dataset/index.ts';

const read = (split: string): Row[] =>
  readFileSync(`models/coop/data/${split}.jsonl`, 'utf8').split('\n').filter((l) => l !== '').map((l) => JSON.parse(l) as Row);

describe('compositional split', () => {
  const train = read('train');
  const same = [...train, ...read('dev'), ...read('test')];
  const comp = read('compositional');

  it('every compositional row matches a held-out rule, no train/dev/test row does', () => {
    expect(comp.filter((r) => heldOutRule(r) === null)).toEqual([]);
    expect(same.filter((r) => heldOutRule(r) !== null)).toEqual([]);
  });

  it('each held-out rule has examples, and their parts occur in train on their own', () => {
    const byRule = new Map<string, number>();
    for (const r of comp) byRule.set(heldOutRule(r)!, (byRule.get(heldOutRule(r)!) ?? 0) + 1);
    for (const h of HELD_OUT) expect(byRule.get(h.id) ?? 0, h.id).toBeGreaterThanOrEqual(40);
    const t = train.map((r) => ({ ...parseTemplate(r.template), depth: r.depth }));
    expect(Math.max(...t.map((x) => x.depth))).toBe(2);
    expect(t.some((x) => x.form === 'superlative')).toBe(true);
    expect(t.some((x) => x.tags.includes('not'))).toBe(true);
    expect(t.some((x) => x.form === 'count')).toBe(true);
    expect(t.some((x) => x.tags.includes('or'))).toBe(true);
    expect(t.some((x) => x.form === 'total' && x.depth === 1)).toBe(true);
    expect(t.some((x) => x.tags.includes('set') && x.depth === 2)).toBe(true);
    // the exact combinations are absent from train
    expect(t.some((x) => x.form === 'superlative' && x.tags.includes('not'))).toBe(false);
    expect(t.some((x) => x.form === 'count' && x.tags.includes('or'))).toBe(false);
    expect(t.some((x) => x.form === 'total' && x.depth >= 2)).toBe(false);
  });
});
