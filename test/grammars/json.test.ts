/**
 * Outside checks of the shipped JSON grammar (grammars/json/json.twg).
 *
 * References: RFC 8259 ("The JavaScript Object Notation (JSON) Data Interchange Format"),
 * section 13 "Examples", and the ECMAScript built-in `JSON.parse` (Node 20).
 */
import { beforeAll, describe, expect, it } from 'vitest';
import type { Grammar } from '../../src/description/ir.ts';
import { loadGrammar } from '../../src/description/index.ts';
import { createParser, printTree, sampleTree } from '../../src/tree/index.ts';
import { jsonValue, readInvalidCases, readSamples, type Node } from './support.ts';

const SAMPLES = 1000;
let grammar: Grammar;

beforeAll(() => {
  grammar = loadGrammar('grammars/json/json.twg');
});

function parse(text: string, file?: string): Node {
  return createParser(grammar).parse(text, file === undefined ? {} : { file }) as Node;
}

// Expected trees, built by hand (not by our parser).
const str = (value: string): Node => ({ kind: 'string', value });
// a number node holds its lexeme (the class is `as text`, so numbers of any size stay exact)
const num = (value: string): Node => ({ kind: 'number', value });
const arr = (...items: Node[]): Node => ({ kind: 'array', items });
const obj = (...members: [string, Node][]): Node => ({
  kind: 'object',
  members: members.map(([key, value]) => ({ kind: 'member', key, value })),
});
const FALSE: Node = { kind: 'false' };
const TRUE: Node = { kind: 'true' };

// The texts of RFC 8259 section 13, typed from memory of the RFC (it could not be opened here);
// layout and spacing as remembered, including the space before the colon of "Animated".
const RFC_IMAGE = `{
  "Image": {
      "Width":  800,
      "Height": 600,
      "Title":  "View from 15th Floor",
      "Thumbnail": {
          "Url":    "http://www.example.com/image/481989943",
          "Height": 125,
          "Width":  100
      },
      "Animated" : false,
      "IDs": [116, 943, 234, 38793]
    }
}`;

const RFC_ZIPS = `[
  {
     "precision": "zip",
     "Latitude":  37.7668,
     "Longitude": -122.3959,
     "Address":   "",
     "City":      "SAN FRANCISCO",
     "State":     "CA",
     "Zip":       "94107",
     "Country":   "US"
  },
  {
     "precision": "zip",
     "Latitude":  37.371991,
     "Longitude": -122.026020,
     "Address":   "",
     "City":      "SUNNYVALE",
     "State":     "CA",
     "Zip":       "94085",
     "Country":   "US"
  }
]`;

const zip = (lat: string, lon: string, city: string, code: string): Node =>
  obj(
    ['precision', str('zip')],
    ['Latitude', num(lat)],
    ['Longitude', num(lon)],
    ['Address', str('')],
    ['City', str(city)],
    ['State', str('CA')],
    ['Zip', str(code)],
    ['Country', str('US')],
  );

const RFC_CASES: { name: string; text: string; tree: Node }[] = [
  {
    name: 'the "Image" object',
    text: RFC_IMAGE,
    tree: obj([
      'Image',
      obj(
        ['Width', num('800')],
        ['Height', num('600')],
        ['Title', str('View from 15th Floor')],
        ['Thumbnail', obj(['Url', str('http://www.example.com/image/481989943')], ['Height', num('125')], ['Width', num('100')])],
        ['Animated', FALSE],
        ['IDs', arr(num('116'), num('943'), num('234'), num('38793'))],
      ),
    ]),
  },
  {
    name: 'the array of two "precision": "zip" objects',
    text: RFC_ZIPS,
    tree: arr(zip('37.7668', '-122.3959', 'SAN FRANCISCO', '94107'), zip('37.371991', '-122.026020', 'SUNNYVALE', '94085')),
  },
  { name: 'the string "Hello world!"', text: '"Hello world!"', tree: str('Hello world!') },
  { name: 'the number 42', text: '42', tree: num('42') },
  { name: 'the literal true', text: 'true', tree: TRUE },
];

describe('json: RFC 8259 section 13 examples', () => {
  it.each(RFC_CASES)('$name parses to the expected tree', ({ text, tree }) => {
    // reference: RFC 8259 section 13 (texts typed from memory)
    const parsed = parse(text);
    expect(parsed).toEqual(tree);
    // reference: JSON.parse agrees on the value
    expect(jsonValue(parsed)).toEqual(JSON.parse(text));
  });
});

describe('json: sampled trees against JSON.parse', () => {
  it(`${SAMPLES} sampled trees print to text JSON.parse reads as the tree's value`, { timeout: 300_000 }, () => {
    let nonTrivial = 0;
    for (let seed = 1; seed <= SAMPLES; seed++) {
      const tree = sampleTree(grammar, { seed, maxDepth: 6 }) as Node;
      const text = printTree(grammar, tree);
      // reference: ECMAScript JSON.parse
      expect(JSON.parse(text), `seed ${seed}: ${text}`).toEqual(jsonValue(tree));
      // our parser reads it back to the same tree
      expect(parse(text), `seed ${seed}: ${text}`).toEqual(tree);
      if (tree.kind === 'object' || tree.kind === 'array') nonTrivial++;
    }
    expect(nonTrivial).toBeGreaterThan(SAMPLES / 4);
  });
});

describe('json: hand-written samples', () => {
  const valid = readSamples('grammars/json/samples/valid.json');
  it.each(valid)('valid.json:$line parses and prints back identically', ({ text }) => {
    const tree = parse(text);
    expect(printTree(grammar, tree)).toBe(text);
    // reference: JSON.parse
    expect(jsonValue(tree)).toEqual(JSON.parse(text));
  });

  const invalid = readInvalidCases('json');
  it.each(invalid)('$path gives the expected located error', ({ path, text, expected }) => {
    let message: string | null = null;
    try {
      parse(text, path);
    } catch (e) {
      message = (e as Error).message;
    }
    expect(message).toBe(expected);
    // reference: JSON.parse rejects the same texts
    expect(() => JSON.parse(text)).toThrow(SyntaxError);
  });
});
