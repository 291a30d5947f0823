#!/usr/bin/python3
"""Builds test/fixtures/tiny-seq2seq/: a tiny random-weight encoder–decoder (fixed seed) in the
standard seq2seq folder layout, with a small sentencepiece Unigram tokenizer trained on an invented
fruit-cooperative corpus (questions, logical forms and SQL in the shapes of the shipped grammars).
The weights are untrained: the fixture exists to test loading, decoding, masking and the
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
from seq2seq import Seq2Seq, export_onnx, sentencepiece_tokenizer_json  # noqa: E402

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


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    root = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
    ap.add_argument('--out', default=os.path.join(root, 'test', 'fixtures', 'tiny-seq2seq'))
    args = ap.parse_args()
    import sentencepiece as spm
    rng = random.Random(SEED)
    torch.manual_seed(SEED)
    with tempfile.TemporaryDirectory() as tmp:
        text = os.path.join(tmp, 'corpus.txt')
        with open(text, 'w', encoding='utf-8') as f:
            f.write('\n'.join(corpus(rng)) + '\n')
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
    total = sum(os.path.getsize(os.path.join(d, f)) for d, _, fs in os.walk(args.out) for f in fs)
    print(f'wrote {args.out}: vocabulary {vocab}, {sum(p.numel() for p in model.parameters())} parameters, '
          f'{total} bytes')


if __name__ == '__main__':
    main()
