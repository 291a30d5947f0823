#!/usr/bin/python3
"""Builds test/fixtures/tiny-seq2seq/: a tiny random-weight encoder–decoder (fixed seed) in the
standard seq2seq folder layout, with a small sentencepiece Unigram tokenizer trained on an invented
fruit-cooperative corpus (questions, logical forms and SQL in the shapes of the shipped grammars).
Also builds test/fixtures/tiny-decoder-only/: a tiny random-weight decoder-only transformer with the
same tokenizer in the layout transformers.js loads for GPT-2-type models (config.json model_type
"gpt2", onnx/model.onnx: input_ids, attention_mask, past_key_values.{i}.key|value → logits,
present.{i}.key|value), for testing the logits-processor hook on a decoder-only model.
The weights are untrained: the fixtures exist to test loading, decoding, masking and the
transformers.js hook, not answers.

Requires Debian's python3-torch python3-onnx python3-sentencepiece.
Usage: /usr/bin/python3 models/src/make_fixture.py [--out DIR]
"""
import argparse
import os
import random
import sys
import tempfile

import json
import torch

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from seq2seq import NEG, Attention, FeedForward, Seq2Seq, export_onnx, sentencepiece_tokenizer_json, sinusoids  # noqa: E402

SEED = 20261201
ORCHARDS = ['hillcrest', 'millbrook', 'south_meadow', 'old_quarry', 'river_bend', 'stonegate']
GROWERS = ['amara_okafor', 'bram_visser', 'chen_li', 'dalia_haddad', 'emil_novak', 'fenna_dekker']
VARIETIES = ['cox_orange', 'elstar', 'conference', 'morello', 'jonagold', 'santana']
SHEDS = ['shed_a', 'shed_b', 'north_store', 'cold_room_3']
CLASSES = ['orchard', 'grower', 'variety', 'shed', 'lot', 'pear_variety', 'apple_variety']
RELS = ['grows', 'owns', 'stored_in', 'planted_with', 'harvested_from', 'manages']
MEASURES = ['hectares', 'tonnes', 'temperature', 'planting_year', 'yield_per_hectare']
TABLES = ['orchard', 'grower', 'variety', 'harvest_lot', 'shed']
COLUMNS = ['name', 'hectares', 'tonnes', 'temperature', 'year', 'grower_id', 'orchard_id', 'shed_id']


def corpus(rng):
    lines = []
    for _ in range(400):
        o, g, v, s = rng.choice(ORCHARDS), rng.choice(GROWERS), rng.choice(VARIETIES), rng.choice(SHEDS)
        c, r, m = rng.choice(CLASSES), rng.choice(RELS), rng.choice(MEASURES)
        t, col, col2 = rng.choice(TABLES), rng.choice(COLUMNS), rng.choice(COLUMNS)
        n = rng.choice([1, 2, 3, 5, 7, 12, 40, 2019, 2021, 3.5, 12.25])
        x, y = rng.choice(['$x', '$y', '$z', '$x1']), rng.choice(['$y', '$z', '$w'])
        lines += [
            f'lf: which orchards does {g.replace("_", " ")} own?',
            f'sql: how many tonnes of {v.replace("_", " ")} were stored in {s.replace("_", " ")}?',
            f'lf: what is the largest orchard by {m.replace("_", " ")}?',
            f'lambda {x}. {c}({x}) & {r}({x}, {o})',
            f'argmax {x}. ({c}({x}) & ~{r}({x}, {g})) by {m}',
            f'value: count {x}. ({c}({x}) | exists {y}. ({r}({x}, {y}) -> {c}({y})))',
            f'holds: {m}({o}) >= {n} & {m}({v}) < {m}({s}) + {n} - 1',
            f'value: sum {x}. (forall {y}. ({r}({y}, {x}) & {x} == {y})) of {m}',
            f'SELECT {col}, COUNT(*) FROM {t} WHERE {col2} >= {n} GROUP BY {col} ORDER BY {col} DESC LIMIT 3',
            f"SELECT {t}.{col} FROM {t} JOIN {rng.choice(TABLES)} ON {t}.{col} = {col2} "
            f"WHERE name = '{g}' AND {col} <> {n} OR {col} IN (SELECT {col} FROM {t})",
            f'SELECT AVG({col}) , MAX({col2}) , MIN({col}) , SUM({col}) FROM {t} WHERE {col} != {n};',
        ]
    return lines


class _Block(torch.nn.Module):
    def __init__(self, d, heads, d_ff):
        super().__init__()
        self.ln1 = torch.nn.LayerNorm(d)
        self.attn = Attention(d, heads, 0.0)
        self.ln2 = torch.nn.LayerNorm(d)
        self.ff = FeedForward(d, d_ff, 0.0)

    def forward(self, x, bias, pk, pv):
        a = self.attn
        h = self.ln1(x)
        k = torch.cat([pk, a.split(a.k(h))], dim=2)
        v = torch.cat([pv, a.split(a.v(h))], dim=2)
        x = x + a.attend(a.split(a.q(h)), k, v, bias)
        return x + self.ff(self.ln2(x)), k, v


class DecoderOnly(torch.nn.Module):
    """Pre-LN decoder-only transformer with a KV cache (fixture only). forward(input_ids [B,T],
    attention_mask [B,P+T], pk0, pv0, pk1, ...) -> logits [B,T,V], present k/v per layer."""

    def __init__(self, vocab, d, heads, layers, d_ff, max_positions):
        super().__init__()
        self.heads, self.d_kv, self.layers, self.d, self.vocab = heads, d // heads, layers, d, vocab
        self.max_positions = max_positions
        self.embed = torch.nn.Embedding(vocab, d)
        self.register_buffer('positions', sinusoids(max_positions, d), persistent=False)
        self.blocks = torch.nn.ModuleList(_Block(d, heads, d_ff) for _ in range(layers))
        self.ln = torch.nn.LayerNorm(d)
        self.head = torch.nn.Linear(d, vocab, bias=False)

    def forward(self, input_ids, attention_mask, *past):
        t = input_ids.size(1)
        p = past[0].size(2)
        pos = torch.arange(t) + p
        x = self.embed(input_ids) * (self.d ** 0.5) + self.positions[pos]
        q_pos = pos[:, None]
        k_pos = torch.arange(t + p)[None, :]
        causal = (k_pos > q_pos).to(torch.float32) * NEG
        padding = ((1 - attention_mask.to(torch.float32)) * NEG)[:, None, None, :]
        bias = causal + padding
        presents = []
        for i, block in enumerate(self.blocks):
            x, k, v = block(x, bias, past[2 * i], past[2 * i + 1])
            presents += [k, v]
        return (self.head(self.ln(x)),) + tuple(presents)


def export_decoder_only(model, out_dir, tok):
    model = model.eval()
    os.makedirs(os.path.join(out_dir, 'onnx'), exist_ok=True)
    b, t, p = 1, 3, 2
    ids = torch.randint(3, model.vocab, (b, t))
    mask = torch.ones(b, p + t, dtype=torch.long)
    past, names, axes = [], [], {}
    for i in range(model.layers):
        for kv in ('key', 'value'):
            past.append(torch.randn(b, model.heads, p, model.d_kv))
            names.append(f'past_key_values.{i}.{kv}')
            axes[names[-1]] = {0: 'batch_size', 2: 'past_sequence_length'}
    outs = ['logits'] + [f'present.{i}.{kv}' for i in range(model.layers) for kv in ('key', 'value')]
    for o in outs[1:]:
        axes[o] = {0: 'batch_size', 2: 'total_sequence_length'}
    axes.update({'input_ids': {0: 'batch_size', 1: 'sequence_length'},
                 'attention_mask': {0: 'batch_size', 1: 'total_sequence_length'},
                 'logits': {0: 'batch_size', 1: 'sequence_length'}})
    with torch.no_grad():
        torch.onnx.export(model, (ids, mask, *past), os.path.join(out_dir, 'onnx', 'model.onnx'),
                          input_names=['input_ids', 'attention_mask'] + names, output_names=outs,
                          dynamic_axes=axes, opset_version=14, do_constant_folding=True)
    tok = dict(tok)
    tok['post_processor'] = None  # a prompt is continued, not closed with </s>
    with open(os.path.join(out_dir, 'tokenizer.json'), 'w', encoding='utf-8') as f:
        json.dump(tok, f, ensure_ascii=False, indent=1)
    files = {
        'config.json': {'model_type': 'gpt2', 'architectures': ['GPT2LMHeadModel'], 'n_layer': model.layers,
                        'n_head': model.heads, 'n_embd': model.d, 'n_positions': model.max_positions,
                        'vocab_size': model.vocab, 'bos_token_id': 1, 'eos_token_id': 1, 'pad_token_id': 0,
                        'use_cache': True},
        'generation_config.json': {'bos_token_id': 1, 'eos_token_id': 1, 'pad_token_id': 0},
        'tokenizer_config.json': {'tokenizer_class': 'T5Tokenizer', 'eos_token': '</s>', 'pad_token': '<pad>',
                                  'unk_token': '<unk>', 'model_max_length': model.max_positions},
    }
    for name, obj in files.items():
        with open(os.path.join(out_dir, name), 'w', encoding='utf-8') as f:
            json.dump(obj, f, indent=2)
            f.write('\n')


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    root = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
    ap.add_argument('--out', default=os.path.join(root, 'test', 'fixtures', 'tiny-seq2seq'))
    ap.add_argument('--out-decoder-only', default=os.path.join(root, 'test', 'fixtures', 'tiny-decoder-only'))
    args = ap.parse_args()
    import sentencepiece as spm
    rng = random.Random(SEED)
    torch.manual_seed(SEED)
    with tempfile.TemporaryDirectory() as tmp:
        text = os.path.join(tmp, 'corpus.txt')
        with open(text, 'w', encoding='utf-8') as f:
            # one line with every printable ASCII character, so each is a single-character piece
            # (the mask engine needs a single-byte token for every byte a grammar can use)
            f.write('\n'.join(corpus(rng)) + '\n' + ''.join(chr(c) for c in range(33, 127)) + '\n')
        prefix = os.path.join(tmp, 'sp')
        spm.SentencePieceTrainer.train(
            input=text, model_prefix=prefix, model_type='unigram', vocab_size=320, hard_vocab_limit=False,
            character_coverage=1.0, normalization_rule_name='identity', remove_extra_whitespaces=False,
            pad_id=0, eos_id=1, unk_id=2, bos_id=-1, num_threads=1, seed_sentencepiece_size=100000,
            shuffle_input_sentence=False, minloglevel=2)
        tok_json = os.path.join(tmp, 'tokenizer.json')
        tok = sentencepiece_tokenizer_json(prefix + '.model')
        with open(tok_json, 'w', encoding='utf-8') as f:
            json.dump(tok, f, ensure_ascii=False, indent=1)
        vocab = len(tok['model']['vocab'])
        model = Seq2Seq(vocab, 32, 4, 2, 2, 64, 0.0, 0, max_positions=128, tie_embeddings=False).eval()
        os.makedirs(args.out, exist_ok=True)
        export_onnx(model, args.out, tok_json, {}, {'pad_id': 0, 'eos_id': 1, 'decoder_start_id': 0, 'unk_id': 2})
        torch.manual_seed(SEED + 1)
        export_decoder_only(DecoderOnly(vocab, 32, 4, 2, 64, 128), args.out_decoder_only, tok)
    total = sum(os.path.getsize(os.path.join(d, f)) for d, _, fs in os.walk(args.out) for f in fs)
    print(f'wrote {args.out_decoder_only}')
    print(f'wrote {args.out}: vocabulary {vocab}, {sum(p.numel() for p in model.parameters())} parameters, '
          f'{total} bytes')


if __name__ == '__main__':
    main()
