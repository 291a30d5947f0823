import { describe, expect, it } from 'vitest';
import { markText, pct, pp, pval, tokenSpan } from '../../src/eval/report.ts';
import { formatAnswer } from '../../src/exec/answer.ts';

describe('report helpers', () => {
  it('finds the token that holds an offset, with the leading space the decoder dropped', () => {
    // tokens as a subword tokenizer spells "lambda $x. grow(" with a leading space on the first
    const tokens = [' lam', 'bda', ' $', 'x', '.', ' gr', 'ow', '('];
    const text = 'lambda $x. grow(';
    expect(tokenSpan(text, tokens, 0)).toEqual([0, 3]);
    expect(tokenSpan(text, tokens, 12)).toEqual([10, 13]);
    expect(tokenSpan(text, tokens, 15)).toEqual([15, 16]);
    expect(tokenSpan('something else', tokens, 2)).toBeNull();
  });

  it('marks the bad token, or the end of an unfinished output, and escapes HTML', () => {
    expect(markText('a <b> c', 2, ['a', ' <b', '>', ' c'])).toBe('a<mark title="the token holding the first character the grammar does not allow here"> &lt;b</mark>&gt; c');
    expect(markText('holds: x &', 10)).toBe('holds: x &amp;<mark class="end" title="the output stopped here">⟨end⟩</mark>');
    expect(markText('SELECT nme FROM t', 7)).toContain('<mark title="the token holding the first character the grammar does not allow here">nme</mark>');
    expect(markText('<ok>', null)).toBe('&lt;ok&gt;');
  });

  it('formats numbers and answers as the page shows them', () => {
    expect(pct(0.8345)).toBe('83.5%');
    expect(pct(null)).toBe('–');
    expect([pp(0.193), pp(-0.005), pp(-0.2), pp(0), pp(0.0004), pp(null)]).toEqual(['+19.3', '\u22120.5', '\u221220.0', '0.0', '0.0', '–']);
    expect(pval(0.0078125)).toBe('0.00781');
    expect(formatAnswer({ type: 'set', members: ['a', 'b'] })).toBe('{a, b}');
    expect(formatAnswer({ type: 'truth', value: false })).toBe('no');
    expect(formatAnswer({ columns: ['n'], rows: [[3]] })).toBe('3');
    expect(formatAnswer({ columns: ['n', 'm'], rows: [[3, 4]] })).toBe('1 row: 3 | 4');
    expect(formatAnswer({ columns: ['n'], rows: [] })).toBe('0 rows');
  });
});
