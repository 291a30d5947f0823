/**
 * Token regexes for JSON lexemes that a schema's keywords allow: strings by length (in code points
 * of the decoded string) or by format, numbers by range with bounded digits, and fixed lexemes
 * (enum members).
 *
 * Every regex here is written so that reading it greedily from left to right, taking the first
 * alternative that matches (what the PEG parser does), gives the same lexemes as ECMAScript's
 * whole-match semantics: alternatives either begin with different characters or are ordered
 * longest first, and no repetition is followed by something it could also match. Repetition counts
 * stay at or below 64 (the parser's limit); larger counts are split into nested counts.
 *
 * Number policy (README, "From a JSON Schema"): no exponent; at most 15 digits in all and at most 6
 * after the point, so every lexeme is a decimal that a double holds exactly enough to compare and
 * to print back (`as number` prints with JSON.stringify; 0.000001 is the smallest step it prints
 * without an exponent). A lexeme is in the class iff its exact decimal value is within the bounds.
 */

/** One decoded code point of a JSON string, as its lexeme spells it (RFC 8259 §7). */
const RAW_CHAR = '[^"\\\\\\u0000-\\u001f\\ud800-\\udfff]';
const HEX = '[0-9A-Fa-f]';
/** `\uXXXX` escapes of a non-surrogate, or a high + low surrogate pair: one code point each. */
const ESCAPE = `\\\\(?:["\\\\/bfnrt]|u(?:[0-9A-Ca-c]${HEX}{3}|[Dd][0-7]${HEX}{2}|[EFef]${HEX}{3}|[Dd][89ABab]${HEX}{2}\\\\u[Dd][C-Fc-f]${HEX}{2}))`;
/** One code point of a string lexeme (needs the `u` flag: a raw astral character is one unit). */
export const STRING_UNIT = `(?:${RAW_CHAR}|${ESCAPE})`;

/**
 * RFC 3339 §5.6 `full-date`, with the day bounded by the month and 29 February only in Gregorian
 * leap years (RFC 3339 Appendix C: divisible by 4, and not by 100 unless by 400).
 */
const LEAP_YEAR = '(?:[0-9]{2}(?:0[48]|[2468][048]|[13579][26])|(?:[02468][048]|[13579][26])00)';
export const DATE_RAW =
  '(?:[0-9]{4}-(?:(?:0[13578]|1[02])-(?:0[1-9]|[12][0-9]|3[01])|(?:0[469]|11)-(?:0[1-9]|[12][0-9]|30)|02-(?:0[1-9]|1[0-9]|2[0-8]))|' + LEAP_YEAR + '-02-29)';
/**
 * RFC 3339 §5.6 `date-time`: full-date "T" partial-time time-offset, "T" and "Z" in either case
 * (the note under §5.6), seconds 00–59 (no leap second), any number of fraction digits, offset
 * "Z" or ±hh:mm.
 */
export const DATE_TIME_RAW = `${DATE_RAW}[Tt](?:[01][0-9]|2[0-3]):[0-5][0-9]:[0-5][0-9](?:\\.[0-9]+)?(?:[Zz]|[+-](?:[01][0-9]|2[0-3]):[0-5][0-9])`;
/**
 * The email subset: an RFC 5322 §3.2.3 `dot-atom` local part, "@", and a domain of two or more
 * host-name labels (RFC 1123 §2.1: letters, digits and inner hyphens), ASCII letters in either
 * case. No quoted local parts, address literals, comments or length limits. (The same language as
 * ajv-formats' "full" email check.)
 */
const ATEXT = "[A-Za-z0-9!#$%&'*+\\/=?^_`{|}~-]";
const LABEL = '[A-Za-z0-9](?:-*[A-Za-z0-9])*';
export const EMAIL_RAW = `${ATEXT}+(?:\\.${ATEXT}+)*@${LABEL}(?:\\.${LABEL})+`;

/** Shortest and longest lengths (code points) of each format's strings (Infinity: unbounded). */
export const FORMAT_LENGTHS: Record<'date' | 'date-time' | 'email', readonly [number, number]> = {
  date: [10, 10],
  'date-time': [20, Infinity],
  email: [5, Infinity],
};

/** `body` repeated min..max times (max may be Infinity), counts split so none exceeds 64. */
export function repeat(body: string, min: number, max: number): string {
  const group = /^\(\?:.*\)$|^\[[^\]]*\]$|^\\.$|^.$/su.test(body) && balanced(body) ? body : `(?:${body})`;
  const fixed = (n: number): string => {
    if (n === 0) return '';
    if (n === 1) return group;
    if (n <= 64) return `${group}{${n}}`;
    const q = Math.floor(n / 64);
    return (q === 1 ? `${group}{64}` : `(?:${group}{64}){${q}}`) + fixed(n - 64 * q);
  };
  const upTo = (n: number): string => {
    if (n === 0) return '';
    if (n === 1) return `${group}?`;
    if (n <= 64) return `${group}{0,${n}}`;
    const q = Math.floor(n / 64);
    return (q === 1 ? `${group}{0,64}` : `(?:${group}{0,64}){${q}}`) + upTo(n - 64 * q);
  };
  if (max === Infinity) return min === 0 ? `${group}*` : min === 1 ? `${group}+` : fixed(min - 1) + `${group}+`;
  if (min === max) return fixed(min);
  if (max <= 64) return min === 0 && max === 1 ? `${group}?` : `${group}{${min},${max}}`;
  return fixed(min) + upTo(max - min);
}

/** Is the whole text one group (its first "(" closes at the end)? */
function balanced(body: string): boolean {
  if (!body.startsWith('(')) return true;
  let depth = 0;
  for (let i = 0; i < body.length; i++) {
    const c = body[i];
    if (c === '\\') {
      i++;
      continue;
    }
    if (c === '[') {
      i = body.indexOf(']', i + 1);
      continue;
    }
    if (c === '(') depth++;
    else if (c === ')' && --depth === 0 && i !== body.length - 1) return false;
  }
  return true;
}

/** A JSON string lexeme whose decoded value has min..max code points (any escaping but lone surrogates). */
export function stringRegex(min: number, max: number): string {
  return `"${repeat(STRING_UNIT, min, max)}"`;
}

/** A JSON string lexeme of a format: the characters written as they are (none of them needs an escape). */
export function formatRegex(format: 'date' | 'date-time' | 'email'): string {
  return `"${format === 'date' ? DATE_RAW : format === 'date-time' ? DATE_TIME_RAW : EMAIL_RAW}"`;
}

/** Escapes a fixed text for a regex (and for the `/…/` literal of a description). */
export function regexEscape(text: string): string {
  let out = '';
  for (const ch of text) {
    const c = ch.codePointAt(0)!;
    if ('\\^$.*+?()[]{}|/'.includes(ch)) out += '\\' + ch;
    else if (c < 0x20 || c === 0x7f || /\s/u.test(ch) && ch !== ' ') out += '\\u' + c.toString(16).padStart(4, '0');
    else out += ch;
  }
  return out;
}

/** Fixed lexemes as alternatives, longest first (so no alternative is a prefix of a later one). */
export function alternativesRegex(lexemes: readonly string[]): string {
  const sorted = [...lexemes].sort((a, b) => b.length - a.length || (a < b ? -1 : a > b ? 1 : 0));
  return sorted.map(regexEscape).join('|');
}

// ---- numbers --------------------------------------------------------------------------------

/** Digits in all (README policy) and after the point. */
export const MAX_DIGITS = 15;
export const MAX_FRACTION = 6;
const SCALE = 10n ** BigInt(MAX_FRACTION);
/** Largest magnitude of an integer lexeme (15 digits). */
export const MAX_INT = 10n ** BigInt(MAX_DIGITS) - 1n;

/** An exact decimal: value = n / 10^d. */
export interface Decimal {
  readonly n: bigint;
  readonly d: number;
}

/** The exact decimal of the shortest spelling of a double (String(x), which may use an exponent). */
export function decimalOf(x: number): Decimal {
  const m = /^(-?)(\d+)(?:\.(\d+))?(?:e([+-]\d+))?$/.exec(String(x));
  if (!m) throw new Error(`not a finite number: ${x}`);
  const frac = m[3] ?? '';
  let n = BigInt(m[2]! + frac);
  let d = frac.length - Number(m[4] ?? 0);
  if (d < 0) {
    n *= 10n ** BigInt(-d);
    d = 0;
  }
  return { n: m[1] === '-' ? -n : n, d };
}

const floorDiv = (a: bigint, b: bigint) => (a >= 0n ? a / b : -((-a + b - 1n) / b));
const ceilDiv = (a: bigint, b: bigint) => -floorDiv(-a, b);

/** The grid points (multiples of 10^-scale, as integers) ≥ x (or > x when exclusive). */
export function lowerGrid(x: Decimal, scale: number, exclusive: boolean): bigint {
  const num = x.n * 10n ** BigInt(scale);
  const den = 10n ** BigInt(x.d);
  return exclusive ? floorDiv(num, den) + 1n : ceilDiv(num, den);
}

/** The grid points ≤ x (or < x when exclusive). */
export function upperGrid(x: Decimal, scale: number, exclusive: boolean): bigint {
  const num = x.n * 10n ** BigInt(scale);
  const den = 10n ** BigInt(x.d);
  return exclusive ? ceilDiv(num, den) - 1n : floorDiv(num, den);
}

/**
 * Lexemes of the numbers n·10^-scale for integers n in [lo, hi] (scale 0: integers, written without
 * point; scale 6: decimals with at most 6 digits after an optional point), at most 15 digits in
 * all, no exponent, no leading zeros; `-0` forms are allowed when 0 is in range (they read as 0).
 * Null when no lexeme qualifies.
 */
export function numberRegex(lo: bigint, hi: bigint, scale: 0 | 6): string | null {
  const unit = scale === 0 ? 1n : SCALE;
  const limit = (MAX_INT + 1n) * unit - 1n; // below 10^15 in value; 15-digit integers have no fraction
  lo = lo < -limit ? -limit : lo;
  hi = hi > limit ? limit : hi;
  if (lo > hi) return null;
  const parts: string[] = [];
  if (lo <= 0n) {
    // magnitudes of the negative side, zero included when 0 is in range (-0 reads as 0)
    const neg = magnitude(hi >= 0n ? 0n : -hi, -lo, scale);
    if (neg !== null) parts.push(`-${group(neg)}`);
  }
  if (hi >= 0n) {
    const pos = magnitude(lo > 0n ? lo : 0n, hi, scale);
    if (pos !== null) parts.push(pos);
  }
  return parts.length === 0 ? null : parts.join('|');
}

/** Wraps an alternation in a group when it has a top-level `|`. */
function group(re: string): string {
  return topLevelAlternation(re) ? `(?:${re})` : re;
}

function topLevelAlternation(re: string): boolean {
  let depth = 0;
  for (let i = 0; i < re.length; i++) {
    const c = re[i];
    if (c === '\\') i++;
    else if (c === '[') i = re.indexOf(']', i + 1);
    else if (c === '(') depth++;
    else if (c === ')') depth--;
    else if (c === '|' && depth === 0) return true;
  }
  return false;
}

/** Unsigned lexemes whose value·10^scale is in [a, b] (0 ≤ a ≤ b). */
function magnitude(a: bigint, b: bigint, scale: 0 | 6): string | null {
  if (a > b) return null;
  if (scale === 0) return intRange(a, b);
  const ia = a / SCALE;
  const fa = a % SCALE;
  const ib = b / SCALE;
  const fb = b % SCALE;
  const alts: { min: number; max: number; re: string }[] = [];
  const fracDigits = (k: number) => Math.min(MAX_FRACTION, MAX_DIGITS - k);
  const withFraction = (i: bigint, lo: bigint, hi: bigint) => {
    const k = i.toString().length;
    const f = fractionPart(lo, hi, fracDigits(k));
    if (f !== null) alts.push({ min: k, max: k, re: i.toString() + f });
  };
  if (ia === ib) withFraction(ia, fa, fb);
  else {
    // whole integer parts with any fraction: from ia (if its fraction range is full) to ib (likewise)
    const first = fa === 0n ? ia : ia + 1n;
    const last = fb === SCALE - 1n ? ib : ib - 1n;
    if (fa !== 0n) withFraction(ia, fa, SCALE - 1n);
    if (first <= last) {
      // bands of integer parts that take the same number of fraction digits
      let start = first;
      while (start <= last) {
        const k = start.toString().length;
        const bandEnd = k <= MAX_DIGITS - MAX_FRACTION ? 10n ** BigInt(MAX_DIGITS - MAX_FRACTION) - 1n : 10n ** BigInt(k) - 1n;
        const end = bandEnd < last ? bandEnd : last;
        const ints = intRange(start, end)!;
        const m = fracDigits(end.toString().length);
        const tail = m === 0 ? '' : `(?:\\.${digitRun(1, m)})?`;
        alts.push({ min: start.toString().length, max: end.toString().length, re: tail === '' ? ints : `${group(ints)}${tail}` });
        start = end + 1n;
      }
    }
    if (fb !== SCALE - 1n) withFraction(ib, 0n, fb);
  }
  if (alts.length === 0) return null;
  // longest integer parts first (by the shortest each may take): a shorter integer part may be the
  // prefix of a longer one, and the parser keeps the first alternative that matches
  alts.sort((x, y) => y.min - x.min || y.max - x.max);
  return alts.map((x) => x.re).join('|');
}

/**
 * The fraction after integer part i: `.` and 1..maxLen digits whose value (padded with zeros to 6
 * digits) is in [lo, hi]; optional when lo is 0 (the integer alone is the value i).
 */
function fractionPart(lo: bigint, hi: bigint, maxLen: number): string | null {
  const L = lo.toString().padStart(MAX_FRACTION, '0');
  const H = hi.toString().padStart(MAX_FRACTION, '0');
  const body = fraction(L, H, maxLen);
  const bare = lo === 0n;
  if (body === null) return bare ? '' : null;
  return bare ? `(?:\\.${group(body)})?` : `\\.${group(body)}`;
}

/**
 * Digit strings s with 1 ≤ |s| ≤ maxLen such that s padded with zeros to the length of lo/hi lies
 * in [lo, hi] (equal-length digit strings). Null when there is none. Alternatives begin with
 * different digits.
 */
function fraction(lo: string, hi: string, maxLen: number): string | null {
  if (maxLen === 0) return null;
  const zeros = (t: string) => /^0*$/.test(t);
  const nines = (t: string) => /^9*$/.test(t);
  if (zeros(lo) && nines(hi)) return digitRun(1, maxLen);
  if (zeros(lo) && zeros(hi)) return zeroRun(1, maxLen);
  const l0 = lo.charCodeAt(0) - 48;
  const h0 = hi.charCodeAt(0) - 48;
  const restLo = lo.slice(1);
  const restHi = hi.slice(1);
  // what may follow a first digit: rest r (possibly empty when pad(r) = 0…0 is allowed)
  const tail = (l: string, h: string): string | null => {
    const more = fraction(l, h, maxLen - 1);
    if (!zeros(l)) return more === null ? null : group(more);
    if (more === null) return '';
    if (/^(?:\\d|0)(?:\{1,\d+\}|\+)?$/.test(more)) return more.replace(/\{1,(\d+)\}$/, '{0,$1}').replace(/^(\\d|0)$/, '$1?');
    return `(?:${more})?`;
  };
  const alts: string[] = [];
  if (l0 === h0) {
    const t = tail(restLo, restHi);
    if (t !== null) alts.push(`${l0}${t}`);
  } else {
    const loWhole = zeros(restLo);
    const hiWhole = nines(restHi);
    if (!loWhole) {
      const t = tail(restLo, '9'.repeat(restLo.length));
      if (t !== null) alts.push(`${l0}${t}`);
    }
    const from = loWhole ? l0 : l0 + 1;
    const to = hiWhole ? h0 : h0 - 1;
    if (from <= to) alts.push(`${digitClass(from, to)}${digitRun(0, maxLen - 1)}`);
    if (!hiWhole) {
      const t = tail('0'.repeat(restHi.length), restHi);
      if (t !== null) alts.push(`${h0}${t}`);
    }
  }
  return alts.length === 0 ? null : alts.join('|');
}

/** `\d{min,max}` spelled shortly. */
function digitRun(min: number, max: number): string {
  return run('\\d', min, max);
}

function zeroRun(min: number, max: number): string {
  return run('0', min, max);
}

function run(atom: string, min: number, max: number): string {
  if (max === 0) return '';
  if (min === max) return min === 1 ? atom : `${atom}{${min}}`;
  if (min === 0 && max === 1) return `${atom}?`;
  return `${atom}{${min},${max}}`;
}

function digitClass(from: number, to: number): string {
  if (from === 0 && to === 9) return '\\d';
  if (from === to) return String(from);
  if (to === from + 1) return `[${from}${to}]`;
  return `[${from}-${to}]`;
}

/** Integers a..b (0 ≤ a ≤ b) written without leading zeros, longest first. */
export function intRange(a: bigint, b: bigint): string | null {
  if (a > b) return null;
  const alts: string[] = [];
  let run: [number, number] | null = null; // digit counts of consecutive complete bands (≥ 2 digits)
  const flush = () => {
    if (run !== null) alts.push(`[1-9]${run[0] === run[1] ? run[0] === 2 ? '\\d' : `\\d{${run[0] - 1}}` : `\\d{${run[1] - 1},${run[0] - 1}}`}`);
    run = null;
  };
  for (let k = b.toString().length; k >= a.toString().length; k--) {
    const lo = k === 1 ? 0n : 10n ** BigInt(k - 1);
    const hi = 10n ** BigInt(k) - 1n;
    const from = a > lo ? a : lo;
    const to = b < hi ? b : hi;
    if (from > to) continue;
    if (k >= 2 && from === lo && to === hi) {
      run = run === null ? [k, k] : [run[0], k];
      continue;
    }
    flush();
    alts.push(sameLength(from.toString(), to.toString()));
  }
  flush();
  return alts.join('|');
}

/** Digit strings of one length between lo and hi (as strings of that length). */
function sameLength(lo: string, hi: string): string {
  if (lo === hi) return lo;
  if (lo[0] === hi[0]) {
    const rest = sameLength(lo.slice(1), hi.slice(1));
    return lo[0] + group(rest);
  }
  const n = lo.length - 1;
  const l0 = lo.charCodeAt(0) - 48;
  const h0 = hi.charCodeAt(0) - 48;
  const loWhole = /^0*$/.test(lo.slice(1));
  const hiWhole = /^9*$/.test(hi.slice(1));
  const from = loWhole ? l0 : l0 + 1;
  const to = hiWhole ? h0 : h0 - 1;
  const alts: string[] = [];
  if (!loWhole) alts.push(l0 + group(sameLength(lo.slice(1), '9'.repeat(n))));
  if (from <= to) alts.push(digitClass(from, to) + run('\\d', n, n));
  if (!hiWhole) alts.push(h0 + group(sameLength('0'.repeat(n), hi.slice(1))));
  return alts.join('|');
}
