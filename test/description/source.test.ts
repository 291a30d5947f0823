import { describe, expect, it } from 'vitest';
import { excerpt, lineColumn } from '../../src/util/source.ts';

describe('source positions', () => {
  it('lineColumn is 1-based and counts UTF-16 units', () => {
    const text = 'ab\ncd\n\nxyz';
    expect(lineColumn(text, 0)).toEqual({ line: 1, column: 1 });
    expect(lineColumn(text, 2)).toEqual({ line: 1, column: 3 });
    expect(lineColumn(text, 3)).toEqual({ line: 2, column: 1 });
    expect(lineColumn(text, 6)).toEqual({ line: 3, column: 1 });
    expect(lineColumn(text, 9)).toEqual({ line: 4, column: 3 });
    expect(lineColumn(text, 99)).toEqual({ line: 4, column: 4 });
    // U+1F34E (red apple) is two UTF-16 code units (ECMA-262 §6.1.4 string type)
    expect(lineColumn('\u{1F34E}x', 2)).toEqual({ line: 1, column: 3 });
  });

  it('excerpt marks the span with ^ and ~, clipped to the line', () => {
    const text = 'first\nsort Orchard {\n  x\n';
    expect(excerpt(text, { start: 11, end: 18 })).toBe('2 | sort Orchard {\n  |      ^~~~~~~');
    expect(excerpt(text, { start: 11, end: 40 })).toBe('2 | sort Orchard {\n  |      ^~~~~~~~~');
    expect(excerpt(text, { start: 11, end: 11 })).toBe('2 | sort Orchard {\n  |      ^');
  });

  it('excerpt keeps tabs in the marker padding, drops a CR and widens the gutter', () => {
    expect(excerpt('\tpear\r\n', { start: 1, end: 5 })).toBe('1 | \tpear\n  | \t^~~~');
    const many = 'x\n'.repeat(11) + 'plum';
    expect(excerpt(many, { start: 22, end: 26 })).toBe('12 | plum\n   | ^~~~');
  });

  it('excerpt at the end of the text points past the last character', () => {
    expect(excerpt('abc', { start: 3, end: 3 })).toBe('1 | abc\n  |    ^');
  });
});
