// `treewright generate` end to end on the fixture model (the CLI contract: --json fields).
import { afterEach, describe, expect, it, vi } from 'vitest';
import { main } from '../../src/cli/main.ts';

// model runs share two cores with other work in CI: generous limits, no timing assertions
vi.setConfig({ testTimeout: 120_000, hookTimeout: 120_000 });

async function run(args: string[]): Promise<{ code: number; out: string; err: string }> {
  let out = '';
  let err = '';
  const o = vi.spyOn(process.stdout, 'write').mockImplementation((s) => ((out += String(s)), true));
  const e = vi.spyOn(process.stderr, 'write').mockImplementation((s) => ((err += String(s)), true));
  try {
    const code = await main(args);
    return { code, out, err };
  } finally {
    o.mockRestore();
    e.mockRestore();
  }
}

afterEach(() => vi.restoreAllMocks());

const BASE = ['generate', '--model', 'test/fixtures/tiny-seq2seq', '--grammar', 'lf', '--names', 'grammars/lf/samples/names.json'];

describe('treewright generate', () => {
  it('--json prints one object with the promised fields; constrained output is well-typed', async () => {
    const r = await run([...BASE, '--max-tokens', '40', '--json', 'lf: which orchards does chen li own?']);
    expect(r.code).toBe(0);
    const o = JSON.parse(r.out);
    for (const k of ['text', 'tree', 'valid', 'well_typed', 'tokens', 'model_ms', 'mask_ms']) expect(o).toHaveProperty(k);
    expect(o).not.toHaveProperty('parses'); // the measure's one name is metrics.json's `valid`
    expect(o).toMatchObject({ valid: true, well_typed: true, constrained: true, strategy: 'greedy', finished: 'eos' });
    expect(o.tree.kind).toMatch(/^(lambda|argmax|argmin|value|truth)$/);
    // the fixture's config.json names no prefixes: the default "to <grammar>: " is put before the question
    expect(o.input).toBe('to lf: lf: which orchards does chen li own?');
  });

  it('--prefix replaces the default and is not repeated', async () => {
    const a = JSON.parse((await run([...BASE, '--prefix', '', '--max-tokens', '20', '--json', 'which orchards?'])).out);
    expect(a.input).toBe('which orchards?');
    const b = JSON.parse((await run([...BASE, '--max-tokens', '20', '--json', 'to lf: which orchards?'])).out);
    expect(b.input).toBe('to lf: which orchards?');
  });

  it('beam and sampling flags select the strategy; --unconstrained exits 2 when the output is not a program', async () => {
    const b = JSON.parse((await run([...BASE, '--beam', '3', '--max-tokens', '40', '--json', 'lf: which growers grow elstar?'])).out);
    expect(b).toMatchObject({ strategy: 'beam', well_typed: true });
    const s = JSON.parse((await run([...BASE, '--sample', '--temperature', '0.8', '--seed', '7', '--max-tokens', '40', '--json', 'lf: which growers grow elstar?'])).out);
    // the masks enforce LF kinds: a sampled output is a well-kinded program
    expect(s).toMatchObject({ strategy: 'sample', valid: true, well_typed: true });
    const u = await run([...BASE, '--unconstrained', '--max-tokens', '10', 'lf: which growers grow elstar?']);
    expect(u.code).toBe(2);
    expect(u.err).toMatch(/^valid: no · well_typed: no · \d+ tokens \((eos|length)\) · model [\d.]+ ms · mask 0\.0 ms · total [\d.]+ ms\n<output>:1:\d+: /);
  });

  it('reports a missing model folder on stderr with exit 1', async () => {
    const r = await run(['generate', '--model', 'no/such/model', '--grammar', 'lf', '--names', 'grammars/lf/samples/names.json', 'q']);
    expect(r.code).toBe(1);
    expect(r.err).toBe(
      'no/such/model: not a folder; expected a model folder (a seq2seq model folder holds config.json, tokenizer.json, tokenizer_config.json, onnx/encoder_model.onnx and onnx/decoder_model_merged.onnx (or onnx/decoder_model.onnx))\n',
    );
  });
});
