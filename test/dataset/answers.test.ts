// Worked examples: gold SQL answers for a few generated questions, checked against values read by
// hand from the rows of grammars/sql/coop.sql (the data file is the outside reference here).
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { openDemoDatabase, SPLITS, type Row } from '../../src/dataset/index.ts';

const rows: Row[] = SPLITS.flatMap((s) =>
  readFileSync(`models/coop/data/${s}.jsonl`, 'utf8').split('\n').filter((l) => l !== '').map((l) => JSON.parse(l) as Row));

describe('gold SQL answers agree with the data file', () => {
  const db = openDemoDatabase();
  const answer = (sql: string) => (db.prepare(sql).raw().all() as unknown[][]).map((r) => r[0]);

  it('orchards owned by Idris Vane: Beacon Heights, Ash Hollow, Fox Run (growers row 12; orchards rows 12, 13, 18)', () => {
    const hit = rows.filter((r) => r.sql === "SELECT name FROM orchards WHERE grower_id IN (SELECT id FROM growers WHERE name = 'Idris Vane')");
    expect(hit.length).toBeGreaterThan(0);
    expect(hit[0].lf).toBe('lambda $x. orchard($x) & owns(idris_vane, $x)');
    expect(answer(hit[0].sql).sort()).toEqual(['Ash Hollow', 'Beacon Heights', 'Fox Run']);
  });

  it('measure questions read the row: Hilltop Rows is 5.9 ha at 400 m, planted 2004', () => {
    const hit = rows.filter((r) => r.lf.startsWith('value: ') && r.lf.endsWith('(hilltop_rows)'));
    expect(hit.length).toBeGreaterThan(0);
    const expected: Record<string, number> = { hectares: 5.9, altitude: 400, planted: 2004 };
    for (const r of hit) {
      const m = /^value: ([a-z_]+)\(hilltop_rows\)$/.exec(r.lf)![1];
      expect(answer(r.sql), r.question).toEqual([expected[m]]);
    }
  });

  it('comparisons of two named rows pick the right one (sheds: North Cold Store 320 t, 1.5 °C; River Barn 360 t, 3.5 °C)', () => {
    const pair = rows.filter((r) => r.template.startsWith('compare2:shed:') && r.sql.includes("'North Cold Store'") && r.sql.includes("'River Barn'"));
    expect(pair.length).toBeGreaterThan(0);
    for (const r of pair) {
      // River Barn is both larger and warmer: it wins every DESC (larger / warmer) question
      expect(answer(r.sql), r.question).toEqual([r.sql.includes('DESC') ? 'River Barn' : 'North Cold Store']);
    }
  });
});
