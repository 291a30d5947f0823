#!/usr/bin/python3
"""Trains the shipped demo model (models/coop/): one small transformer encoder–decoder for both
targets of the cooperative dataset — the input prefix "to sql: " or "to lf: " chooses SQL or the
logical form — and exports it in the standard seq2seq ONNX folder layout.

Requires Debian's packages: python3-torch python3-onnx python3-sentencepiece libopenblas0-pthread
(without OpenBLAS PyTorch uses a reference BLAS and training is several times slower).
The model definition and the ONNX export are models/src/seq2seq.py.

Steps (see DEVELOPERS.md):
    npx tsx src/dataset/build.ts                      # models/coop/data/*.jsonl
    /usr/bin/python3 models/src/train_tokenizer.py    # models/coop/tokenizer.json, ...
    /usr/bin/python3 models/src/train.py              # this script: train, evaluate, export

Training: teacher forcing, cross-entropy (label smoothing 0.05) on the target ids followed by
`</s>`; AdamW with linear warm-up and inverse-square-root decay; length-bucketed batches. Every
--eval-every steps the model greedily decodes a fixed sample of the dev split; the checkpoint with the
best dev exact match is kept, and training stops after --patience evaluations without improvement or
when the --minutes budget is spent. At the end the best checkpoint is evaluated (greedy,
unconstrained, exact string match) on the whole dev, test and compositional splits and exported.
Writes models/coop/{config.json, generation_config.json, tokenizer_config.json, onnx/*.onnx,
training_log.json} and prints the figures that MODEL_CARD.md reports.
"""
import argparse
import json
import math
import os
import random
import shutil
import sys
import tempfile
import time

import torch
import torch.nn.functional as F

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from seq2seq import Seq2Seq, export_onnx  # noqa: E402

ROOT = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
PREFIXES = {'sql': 'to sql: ', 'lf': 'to lf: '}
PAD, EOS, UNK = 0, 1, 2
START = PAD  # decoder start token, as T5 does


def read_split(data_dir, split):
    with open(os.path.join(data_dir, f'{split}.jsonl'), encoding='utf-8') as f:
        return [json.loads(line) for line in f if line.strip()]


def pairs_of(rows, sp):
    """(source ids, target ids, target text, target kind, row id) for both targets of every row."""
    out = []
    for r in rows:
        for target in ('sql', 'lf'):
            src = sp.encode(PREFIXES[target] + r['question']) + [EOS]
            out.append((src, sp.encode(r[target]), r[target], target, r['id']))
    return out


def pad_batch(seqs, value=PAD):
    n = max(len(s) for s in seqs)
    t = torch.full((len(seqs), n), value, dtype=torch.long)
    for i, s in enumerate(seqs):
        t[i, : len(s)] = torch.tensor(s, dtype=torch.long)
    return t


def batches(pairs, max_tokens, rng):
    """Length-bucketed batches of at most ~max_tokens (source + target) tokens, shuffled."""
    order = sorted(range(len(pairs)), key=lambda i: (len(pairs[i][1]), len(pairs[i][0]), rng.random()))
    out, cur, cur_len = [], [], 0
    for i in order:
        size = len(pairs[i][0]) + len(pairs[i][1]) + 1
        longest = max(cur_len, size)
        if cur and longest * (len(cur) + 1) > max_tokens:
            out.append(cur)
            cur, longest = [], size
        cur.append(i)
        cur_len = longest
    if cur:
        out.append(cur)
    rng.shuffle(out)
    return out


@torch.no_grad()
def greedy_cached(model, src, max_len):
    """Greedy decoding with the self-attention cache: token-id lists (start and EOS excluded)."""
    mask = (src != PAD).long()
    enc = model.encode(src, mask)
    cross = model.cross_kv(enc)
    b = src.size(0)
    last = torch.full((b, 1), START, dtype=torch.long)
    past = None
    done = torch.zeros(b, dtype=torch.bool)
    outs = [[] for _ in range(b)]
    for _ in range(max_len):
        logits, past = model.decode(last, mask, cross, past)
        nxt = logits[:, -1].argmax(-1)
        for i in range(b):
            if not done[i]:
                if int(nxt[i]) == EOS:
                    done[i] = True
                else:
                    outs[i].append(int(nxt[i]))
        if bool(done.all()):
            break
        last = nxt[:, None]
    return outs


def evaluate(model, pairs, sp, batch_size=64, max_len=200):
    """Exact string match of greedy unconstrained decoding, overall and per target."""
    model.eval()
    hits = {'sql': [0, 0], 'lf': [0, 0]}
    predictions = []
    order = sorted(range(len(pairs)), key=lambda i: len(pairs[i][0]))
    for k in range(0, len(order), batch_size):
        idx = order[k: k + batch_size]
        src = pad_batch([pairs[i][0] for i in idx])
        for i, ids in zip(idx, greedy_cached(model, src, max_len)):
            text = sp.decode(ids)
            gold, target = pairs[i][2], pairs[i][3]
            hits[target][0] += int(text == gold)
            hits[target][1] += 1
            predictions.append({'id': pairs[i][4], 'target': target, 'prediction': text, 'gold': gold})
    model.train()
    total = sum(h[0] for h in hits.values()) / max(1, sum(h[1] for h in hits.values()))
    return {
        'exact_match': total,
        'sql': hits['sql'][0] / max(1, hits['sql'][1]),
        'lf': hits['lf'][0] / max(1, hits['lf'][1]),
        'n': sum(h[1] for h in hits.values()),
    }, predictions


def export(model, model_dir, plain_decoder):
    """Exports through seq2seq.export_onnx into a temporary folder and copies the shipped files
    (the tokenizer files stay as train_tokenizer.py wrote them)."""
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(model_dir, 'tokenizer_config.json'), encoding='utf-8') as f:
            tconf = json.load(f)
        export_onnx(model, tmp, os.path.join(model_dir, 'tokenizer.json'), tconf,
                    {'pad_id': PAD, 'eos_id': EOS, 'decoder_start_id': START, 'unk_id': UNK},
                    prefixes=PREFIXES)
        os.makedirs(os.path.join(model_dir, 'onnx'), exist_ok=True)
        for name in ('config.json', 'generation_config.json', 'tokenizer_config.json'):
            shutil.copyfile(os.path.join(tmp, name), os.path.join(model_dir, name))
        # the merged decoder serves every step; the cache-less one only on request (size budget)
        names = ['encoder_model.onnx', 'decoder_model_merged.onnx'] + (['decoder_model.onnx'] if plain_decoder else [])
        for name in names:
            shutil.copyfile(os.path.join(tmp, 'onnx', name), os.path.join(model_dir, 'onnx', name))
    print('exported to', model_dir, flush=True)


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument('--model-dir', default=os.path.join(ROOT, 'models', 'coop'))
    ap.add_argument('--d-model', type=int, default=192)
    ap.add_argument('--heads', type=int, default=4)
    ap.add_argument('--enc-layers', type=int, default=2)
    ap.add_argument('--dec-layers', type=int, default=2)
    ap.add_argument('--d-ff', type=int, default=768)
    ap.add_argument('--dropout', type=float, default=0.1)
    ap.add_argument('--lr', type=float, default=1.5e-3)
    ap.add_argument('--warmup', type=int, default=200)
    ap.add_argument('--max-tokens', type=int, default=2000, help='tokens per batch (source + target)')
    ap.add_argument('--minutes', type=float, default=75.0, help='wall-clock budget for training')
    ap.add_argument('--max-steps', type=int, default=100000)
    ap.add_argument('--eval-every', type=int, default=300)
    ap.add_argument('--eval-rows', type=int, default=150, help='dev rows decoded at each evaluation')
    ap.add_argument('--patience', type=int, default=8)
    ap.add_argument('--seed', type=int, default=20261201)
    ap.add_argument('--threads', type=int, default=1)
    ap.add_argument('--measure-only', action='store_true', help='time 20 steps and exit')
    ap.add_argument('--no-export', action='store_true')
    ap.add_argument('--export-from', metavar='CHECKPOINT',
                    help='only export a checkpoint saved by an earlier run (/tmp/coop-model.pt)')
    ap.add_argument('--plain-decoder', action='store_true',
                    help='also ship onnx/decoder_model.onnx (the cache-less decoder, +6.7 MB)')
    args = ap.parse_args()

    import sentencepiece as spm
    torch.set_num_threads(args.threads)
    if args.export_from:
        ckpt = torch.load(args.export_from)
        model = Seq2Seq.from_config_dict(ckpt['config'])
        model.load_state_dict(ckpt['state'])
        export(model.eval(), args.model_dir, args.plain_decoder)
        return
    torch.manual_seed(args.seed)
    rng = random.Random(args.seed)
    data_dir = os.path.join(args.model_dir, 'data')
    sp = spm.SentencePieceProcessor(model_file=os.path.join(args.model_dir, 'sentencepiece.model'))
    assert sp.pad_id() == PAD and sp.eos_id() == EOS and sp.unk_id() == UNK, 'unexpected special ids'
    splits = {s: read_split(data_dir, s) for s in ('train', 'dev', 'test', 'compositional')}
    train = pairs_of(splits['train'], sp)
    dev_sample_rows = random.Random(args.seed).sample(splits['dev'], min(args.eval_rows, len(splits['dev'])))
    dev_sample = pairs_of(dev_sample_rows, sp)
    longest = max(max(len(p[0]), len(p[1]) + 1) for p in train)

    model = Seq2Seq(sp.get_piece_size(), args.d_model, args.heads, args.enc_layers, args.dec_layers,
                    args.d_ff, args.dropout, PAD, max_positions=256, tie_embeddings=True)
    n_params = sum(p.numel() for p in model.parameters())
    print(f'train pairs {len(train)}, longest sequence {longest}, parameters {n_params}', flush=True)
    opt = torch.optim.AdamW(model.parameters(), lr=args.lr, betas=(0.9, 0.98), weight_decay=0.01)
    sched = torch.optim.lr_scheduler.LambdaLR(
        opt, lambda s: min((s + 1) / args.warmup, math.sqrt(args.warmup / (s + 1))))

    log = {'args': vars(args), 'parameters': n_params, 'evals': []}
    best = (-1.0, None, 0)
    step, t0, evals_since_best, epoch = 0, time.time(), 0, 0
    model.train()
    stop = False
    while not stop:
        epoch += 1
        for batch in batches(train, args.max_tokens, rng):
            src = pad_batch([train[i][0] for i in batch])
            tgt = [train[i][1] for i in batch]
            tgt_in = pad_batch([[START] + t for t in tgt])
            labels = pad_batch([t + [EOS] for t in tgt], value=-100)
            logits = model(src, (src != PAD).long(), tgt_in)
            loss = F.cross_entropy(logits.reshape(-1, logits.size(-1)), labels.reshape(-1),
                                   ignore_index=-100, label_smoothing=0.05)
            opt.zero_grad()
            loss.backward()
            torch.nn.utils.clip_grad_norm_(model.parameters(), 1.0)
            opt.step()
            sched.step()
            step += 1
            if args.measure_only and step == 10:
                print(f'{(time.time() - t0) / 10:.3f} s/step, {len(batches(train, args.max_tokens, rng))} steps/epoch')
                return
            if step % 50 == 0:
                print(f'step {step} epoch {epoch} loss {loss.item():.4f} lr {sched.get_last_lr()[0]:.2e} '
                      f'{time.time() - t0:.0f}s', flush=True)
            minutes = (time.time() - t0) / 60
            if step % args.eval_every == 0 or minutes > args.minutes or step >= args.max_steps:
                res, _ = evaluate(model, dev_sample, sp)
                res.update(step=step, epoch=epoch, minutes=round(minutes, 2), loss=loss.item())
                log['evals'].append(res)
                print(f'eval {json.dumps(res)}', flush=True)
                if res['exact_match'] > best[0]:
                    best = (res['exact_match'], {k: v.detach().clone() for k, v in model.state_dict().items()}, step)
                    evals_since_best = 0
                else:
                    evals_since_best += 1
                if evals_since_best >= args.patience or minutes > args.minutes or step >= args.max_steps:
                    stop = True
                    break
    train_minutes = (time.time() - t0) / 60
    print(f'training stopped at step {step} after {train_minutes:.1f} min; best dev-sample EM {best[0]:.4f} '
          f'at step {best[2]}', flush=True)
    model.load_state_dict(best[1])
    model.eval()
    log.update(best_step=best[2], steps=step, train_minutes=round(train_minutes, 2))

    results = {}
    preds = {}
    for split in ('dev', 'test', 'compositional'):
        t1 = time.time()
        res, p = evaluate(model, pairs_of(splits[split], sp), sp)
        res['seconds'] = round(time.time() - t1, 1)
        results[split] = res
        preds[split] = p
        print(f'final {split}: {json.dumps(res)}', flush=True)
    log['final'] = results
    torch.save({'config': model.config_dict(), 'state': model.state_dict()},
               os.path.join(tempfile.gettempdir(), 'coop-model.pt'))

    if not args.no_export:
        export(model, args.model_dir, args.plain_decoder)
    with open(os.path.join(args.model_dir, 'training_log.json'), 'w', encoding='utf-8') as f:
        json.dump(log, f, indent=1)
    with open(os.path.join(tempfile.gettempdir(), 'coop-predictions.json'), 'w', encoding='utf-8') as f:
        json.dump(preds, f, indent=0)


if __name__ == '__main__':
    main()
