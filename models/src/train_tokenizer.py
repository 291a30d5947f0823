#!/usr/bin/python3
"""Trains the demo model's subword tokenizer (sentencepiece Unigram) on the training split of the
cooperative dataset and writes it in the Hugging Face format that transformers.js loads.

Requires Debian's packages: python3-sentencepiece python3-torch (models/src/seq2seq.py, whose
sentencepiece → tokenizer.json conversion this script reuses, imports torch).

Inputs:  models/coop/data/train.jsonl (built by `npx tsx src/dataset/build.ts`)
Outputs (in --out, default models/coop/):
    tokenizer.json                     Unigram pieces and scores (pieces may span spaces), Metaspace
                                       pre-tokenizer, byte fallback, `</s>` appended
    tokenizer_config.json              tokenizer_class T5Tokenizer, eos/pad/unk tokens
    data/tokenizer_reference.jsonl.gz  sentencepiece's own encoding of every text of every split
                                       ({"text", "ids"}; ids without the appended `</s>`), the
                                       outside reference for test/dataset/tokenizer.test.ts
    sentencepiece.model                kept beside the JSON for retraining and inspection

The model sees every question twice, with the prefixes "to sql: " and "to lf: " (they choose the
target), and every gold program as a target; all of these are tokenizer training text.

Usage: /usr/bin/python3 models/src/train_tokenizer.py [--vocab 1100] [--out models/coop]
"""
import argparse
import gzip
import json
import os
import shutil
import sys
import tempfile

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from seq2seq import sentencepiece_tokenizer_json  # noqa: E402

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
PREFIXES = {'sql': 'to sql: ', 'lf': 'to lf: '}
SPLITS = ['train', 'dev', 'test', 'compositional']


def read_split(data_dir, split):
    with open(os.path.join(data_dir, f'{split}.jsonl'), encoding='utf-8') as f:
        return [json.loads(line) for line in f if line.strip()]


def texts_of(rows):
    """Every string the model reads or writes for these rows, in a fixed order."""
    out = []
    for r in rows:
        for target in ('sql', 'lf'):
            out.append(PREFIXES[target] + r['question'])
            out.append(r[target])
    return out


def adapt(tok, sp):
    """Whole-text pieces and byte fallback. sentencepiece encodes characters outside its pieces as UTF-8 byte pieces <0xNN>; the JSON
    says so (`byte_fallback`), and the decoder turns byte pieces back into characters."""
    tok['model']['byte_fallback'] = True
    # trained with split_by_whitespace=False: pieces may span spaces ("▁WHERE▁orchard"), so the
    # pre-tokenizer must not split the text at spaces either
    tok['pre_tokenizer']['split'] = False
    normal = [float(sp.get_score(i)) for i in range(sp.get_piece_size())
              if not (sp.is_control(i) or sp.is_unknown(i) or sp.is_byte(i))]
    lowest = min(normal)
    for i in range(sp.get_piece_size()):
        if sp.is_byte(i):
            # sentencepiece never matches byte pieces against text; give them the lowest normal
            # score so a lattice-based reader prefers real pieces (the minimum stays the same).
            tok['model']['vocab'][i][1] = lowest
    tok['decoder'] = {
        'type': 'Sequence',
        'decoders': [
            {'type': 'Replace', 'pattern': {'String': '\u2581'}, 'content': ' '},
            {'type': 'ByteFallback'},
            {'type': 'Fuse'},
            {'type': 'Strip', 'content': ' ', 'start': 1, 'stop': 0},
        ],
    }
    return tok


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument('--vocab', type=int, default=1100, help='vocabulary size (with 256 byte pieces; this corpus allows at most ~1128)')
    ap.add_argument('--out', default=os.path.join(ROOT, 'models', 'coop'))
    ap.add_argument('--data', default=os.path.join(ROOT, 'models', 'coop', 'data'))
    args = ap.parse_args()
    import sentencepiece as spm

    train_texts = texts_of(read_split(args.data, 'train'))
    os.makedirs(os.path.join(args.out, 'data'), exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        corpus = os.path.join(tmp, 'corpus.txt')
        with open(corpus, 'w', encoding='utf-8') as f:
            f.write('\n'.join(train_texts) + '\n')
        prefix = os.path.join(tmp, 'sp')
        spm.SentencePieceTrainer.train(
            input=corpus, model_prefix=prefix, model_type='unigram', vocab_size=args.vocab,
            character_coverage=1.0, byte_fallback=True, normalization_rule_name='identity',
            remove_extra_whitespaces=False, split_by_whitespace=False,
            pad_id=0, eos_id=1, unk_id=2, bos_id=-1,
            num_threads=1, shuffle_input_sentence=False, seed_sentencepiece_size=1000000,
            input_sentence_size=0, max_sentence_length=4096, minloglevel=2)
        sp = spm.SentencePieceProcessor(model_file=prefix + '.model')
        tok = adapt(sentencepiece_tokenizer_json(prefix + '.model'), sp)
        with open(os.path.join(args.out, 'tokenizer.json'), 'w', encoding='utf-8') as f:
            json.dump(tok, f, ensure_ascii=False, indent=1)
        config = {
            'tokenizer_class': 'T5Tokenizer', 'eos_token': sp.id_to_piece(sp.eos_id()),
            'pad_token': sp.id_to_piece(sp.pad_id()), 'unk_token': sp.id_to_piece(sp.unk_id()),
            'model_max_length': 256, 'extra_ids': 0, 'additional_special_tokens': [],
        }
        with open(os.path.join(args.out, 'tokenizer_config.json'), 'w', encoding='utf-8') as f:
            json.dump(config, f, indent=1)
        shutil.copy(prefix + '.model', os.path.join(args.out, 'sentencepiece.model'))

        # the reference encodings of every text of every split
        n_texts = n_ids = 0
        ref_path = os.path.join(args.out, 'data', 'tokenizer_reference.jsonl.gz')
        with gzip.GzipFile(ref_path, 'wb', mtime=0) as gz:
            for split in SPLITS:
                for text in texts_of(read_split(args.data, split)):
                    ids = sp.encode(text)
                    n_texts += 1
                    n_ids += len(ids)
                    gz.write((json.dumps({'text': text, 'ids': ids}, ensure_ascii=False) + '\n').encode('utf-8'))
        print(f'vocab {sp.get_piece_size()} pieces; reference: {n_texts} texts, {n_ids / n_texts:.1f} ids per text')


if __name__ == '__main__':
    main()
