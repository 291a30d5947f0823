/**
 * The token regexes from-schema writes, against outside references:
 * - number ranges: for random bounds, every candidate lexeme near and inside them is in the class
 *   exactly when it has the policy's shape (no exponent, ≤ 15 digits, ≤ 6 after the point) and ajv
 *   (draft 2020-12, minimum/maximum/exclusive*) accepts JSON.parse of it;
 * - string lengths: a lexeme is in the class exactly when JSON.parse reads it and ajv's
 *   minLength/maxLength (code points) accept it — lone surrogates excepted (policy);
 * - formats: the date class equals ajv-formats' "full" date check on every day of chosen years
 *   (leap years of RFC 3339 Appendix C); the email class equals ajv-formats' email check on random
 *   strings; every date-time the class accepts, ajv-formats accepts;
 * and each regex as the PEG parser reads it (a one-token description) accepts the same lexemes as
 * the ECMAScript RegExp (the parser keeps the first alternative that matches).
 */
import { describe, expect, it } from 'vitest';
import { compileDescription } from '../../src/description/index.ts';
import { DATE_RAW, DATE_TIME_RAW, EMAIL_RAW, numberRegex } from '../../src/from-schema/index.ts';
import { decimalOf, lowerGrid, stringRegex, upperGrid } from '../../src/from-schema/lexemes.ts';
import { createParser } from '../../src/tree/index.ts';
import { rng } from '../masks/helpers.ts';
import { referenceValidator } from './support.ts';

/** A parser that reads exactly one lexeme of the class. */
function pegOf(regex: string, flags: string, kind: string): (text: string) => boolean {
  const { grammar, diagnostics } = compileDescription(`grammar t\nstart S\nspace " "\ntoken T = /${regex}/${flags} as ${kind}\nsort S { s(v: T) = v; }\n`, 't.twg');
  expect(diagnostics).toEqual([]);
  const p = createParser(grammar!);
  return (text) => {
    try {
      p.parse(text);
      return true;
    } catch {
      return false;
    }
  };
}

const POLICY = /^-?(?:0|[1-9]\d*)(?:\.\d+)?$/;
const shapeOk = (l: string, integer: boolean) => POLICY.test(l) && (!integer || !l.includes('.')) && l.replace(/\D/g, '').length <= 15 && (l.split('.')[1] ?? '').length <= 6;

describe('number ranges', () => {
  const rand = rng(2024);
  const bounds: [number | null, number | null, boolean, boolean, boolean][] = [
    [-2, 12, false, false, false],
    [0, 100, false, false, true],
    [-30.5, -0.25, false, false, false],
    [0.1, 0.3, true, false, false],
    [1, 72, false, false, true],
    [-0.125, 0.125, false, true, false],
    [null, 1e3, false, false, false],
    [-999.999, null, false, false, true],
    [5e-7, 0.00002, false, false, false],
    [123456789.5, 123456790.25, false, false, false],
  ];
  for (let i = 0; i < 10; i++) {
    const a = Math.round((rand() - 0.5) * 10 ** Math.floor(rand() * 6) * 1000) / 1000;
    const b = a + Math.round(rand() * 10 ** Math.floor(rand() * 5) * 100) / 100;
    bounds.push([a, b, rand() < 0.3, rand() < 0.3, rand() < 0.5]);
  }
  it.each(bounds)('[%s, %s] exclusive %s/%s integer %s', (lo, hi, exLo, exHi, integer) => {
    const scale = integer ? 0 : 6;
    const L = lo === null ? -(10n ** 21n) : lowerGrid(decimalOf(lo), scale, exLo);
    const H = hi === null ? 10n ** 21n : upperGrid(decimalOf(hi), scale, exHi);
    const re = numberRegex(L, H, scale)!;
    const whole = new RegExp(`^(?:${re})$`);
    const peg = pegOf(re, '', integer ? 'int' : 'number');
    const schema: Record<string, unknown> = { type: integer ? 'integer' : 'number' };
    if (lo !== null) schema[exLo ? 'exclusiveMinimum' : 'minimum'] = lo;
    if (hi !== null) schema[exHi ? 'exclusiveMaximum' : 'maximum'] = hi;
    const validate = referenceValidator().compile(schema);
    const r = rng(Math.round(Math.abs((lo ?? 7) * 1000)) + 3);
    const candidates = new Set<string>();
    for (const x of [lo, hi]) {
      if (x === null) continue;
      for (const d of [-1, -1e-6, -5e-7, 0, 5e-7, 1e-6, 1]) {
        const v = x + d;
        for (const p of [0, 1, 2, 6, 7]) candidates.add(v.toFixed(p));
        candidates.add(String(v));
      }
      candidates.add(x.toFixed(6) + '0');
      candidates.add(x.toFixed(6).replace(/0+$/, '') + '1');
    }
    const span = (hi ?? 1000) - (lo ?? -1000);
    for (let k = 0; k < 600; k++) {
      const v = (lo ?? -1000) - span * 0.1 + r() * span * 1.2;
      const p = Math.floor(r() * 9);
      candidates.add(v.toFixed(p));
      candidates.add(v.toFixed(p).replace(/^(-?)/, '$10'));
    }
    candidates.add('-0');
    candidates.add('-0.0');
    candidates.add('1e2');
    let inClass = 0;
    for (const l of candidates) {
      // reference: ajv on the value JSON.parse reads from the lexeme
      let ok = false;
      try {
        ok = shapeOk(l, integer) && validate(JSON.parse(l));
      } catch {
        ok = false;
      }
      expect(whole.test(l), `${l} in /${re}/`).toBe(ok);
      expect(peg(l), `${l} by the parser`).toBe(ok);
      if (ok) inClass++;
    }
    expect(inClass).toBeGreaterThan(0);
  });
});

describe('string lengths (code points)', () => {
  it.each([
    [0, 0],
    [1, 1],
    [3, 12],
    [0, 80],
    [70, 90],
    [2, Infinity],
  ])('%s..%s', (min, max) => {
    const re = stringRegex(min, max);
    const whole = new RegExp(`^(?:${re})$`, 'u');
    const peg = pegOf(re, 'u', 'json-string');
    const schema: Record<string, unknown> = { type: 'string', minLength: min };
    if (max !== Infinity) schema.maxLength = max;
    const validate = referenceValidator().compile(schema);
    const r = rng(min * 31 + 7);
    const pieces = ['a', 'é', '中', '🍎', '\\n', '\\"', '\\\\', '\\u00e9', '\\uD83C\\uDF4E', '\\ud83c\\udf4e', '\\/', ' ', '\\u0000', '\\uD800', '\\uDC00x', '\t', '"'];
    for (let k = 0; k < 400; k++) {
      const n = Math.floor(r() * (Math.min(max, 100) + 3));
      let body = '';
      for (let i = 0; i < n; i++) body += pieces[Math.floor(r() * pieces.length)];
      const l = `"${body}"`;
      let ok = false;
      try {
        const v = JSON.parse(l) as string;
        ok = validate(v) && !/\p{Cs}/u.test(v); // policy: no lone surrogates
      } catch {
        ok = false;
      }
      expect(whole.test(l), l).toBe(ok);
      expect(peg(l), `${l} by the parser`).toBe(ok);
    }
  });
});

describe('formats', () => {
  const ajv = referenceValidator();
  it('date: every day of 0000, 1900, 2000, 2023, 2024, 2100, 2400, 9999 (months 00–13, days 00–32)', () => {
    const validate = ajv.compile({ type: 'string', format: 'date' });
    const re = new RegExp(`^(?:${DATE_RAW})$`);
    const peg = pegOf(`"${DATE_RAW}"`, '', 'json-string');
    let valid = 0;
    for (const y of ['0000', '1900', '2000', '2023', '2024', '2100', '2400', '9999']) {
      for (let m = 0; m <= 13; m++) {
        for (let d = 0; d <= 32; d++) {
          const s = `${y}-${String(m).padStart(2, '0')}-${String(d).padStart(2, '0')}`;
          expect(re.test(s), s).toBe(validate(s));
          if (m === 2 || d === 1) expect(peg(JSON.stringify(s)), s).toBe(validate(s));
          if (validate(s)) valid++;
        }
      }
    }
    expect(valid).toBe(365 * 8 + 4); // leap years among them: 0000, 2000, 2024, 2400
  });

  it('email: the same strings as ajv-formats on random addresses', () => {
    const validate = ajv.compile({ type: 'string', format: 'email' });
    const re = new RegExp(`^(?:${EMAIL_RAW})$`);
    const peg = pegOf(`"${EMAIL_RAW}"`, '', 'json-string');
    const r = rng(99);
    const alphabet = ['a', 'Z', '0', '.', '-', '@', '+', '_', "'", '!', 'é', ' ', '..', 'co', 'orchard'];
    let valid = 0;
    for (let k = 0; k < 3000; k++) {
      let s = '';
      const n = 1 + Math.floor(r() * 10);
      for (let i = 0; i < n; i++) s += alphabet[Math.floor(r() * alphabet.length)];
      if (r() < 0.7) s = `${s.replace(/@/g, '')}@${['orchard.coop', 'a.b', 'x-y.example', '-a.b', 'a-.b', 'a..b', 'ab'][Math.floor(r() * 7)]}`;
      expect(re.test(s), s).toBe(validate(s));
      if (k % 10 === 0) expect(peg(JSON.stringify(s)), s).toBe(validate(s));
      if (validate(s)) valid++;
    }
    expect(valid).toBeGreaterThan(150);
  });

  it('date-time: what the class accepts, ajv-formats accepts (RFC 3339 date-time; ajv also takes more)', () => {
    const validate = ajv.compile({ type: 'string', format: 'date-time' });
    const re = new RegExp(`^(?:${DATE_TIME_RAW})$`);
    const r = rng(5);
    const pick = <T,>(xs: T[]) => xs[Math.floor(r() * xs.length)]!;
    let accepted = 0;
    for (let k = 0; k < 3000; k++) {
      const s = `${pick(['2024-02-29', '2023-02-29', '2024-12-31', '1999-04-31'])}${pick(['T', 't', ' '])}${pick(['00', '23', '24', '9'])}:${pick(['00', '59', '60'])}:${pick(['00', '59', '60'])}${pick(['', '.5', '.123456789', '.'])}${pick(['Z', 'z', '+01:00', '-23:59', '+24:00', '+0100', ''])}`;
      if (re.test(s)) {
        expect(validate(s), s).toBe(true);
        accepted++;
      }
    }
    expect(accepted).toBeGreaterThan(50);
  });
});
