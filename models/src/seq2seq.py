#!/usr/bin/python3
"""A small pre-LN transformer encoder–decoder and its ONNX export in the folder layout that
@huggingface/transformers (v4) and treewright's runtime load for seq2seq models.

Requires Debian's packages: python3-torch python3-onnx (and libopenblas0-pthread for speed; without
it PyTorch falls back to a reference BLAS that is several times slower). The `--check` option also
needs Node 20 and `npm install` in the repository (it runs the exported graphs with onnxruntime-node).

API
---
    model = Seq2Seq(vocab_size, d_model, heads, layers_enc, layers_dec, d_ff, dropout, pad_id,
                    max_positions=256, tie_embeddings=True)
    logits = model(src, src_mask, tgt_in)          # [B, T, V]; src, tgt_in int64, src_mask 0/1
    ids = model.greedy(src, src_mask, start_id, eos_id, max_len)   # reference decoding (no cache)
    model.config_dict() / Seq2Seq.from_config_dict(d)              # checkpoint round trip
    export_onnx(model, out_dir, tokenizer_json_path, tokenizer_config, special_ids)

`special_ids` is a dict with `pad_id`, `eos_id` and optionally `decoder_start_id` (default: pad_id,
as T5 does) and `unk_id`. `tokenizer_config` is a dict merged over the defaults written to
tokenizer_config.json (`tokenizer_class: "T5Tokenizer"`; eos/pad/unk token strings are read from the
tokenizer.json vocabulary at those ids unless given).

Folder written by export_onnx:
    config.json  generation_config.json  tokenizer.json  tokenizer_config.json
    onnx/encoder_model.onnx          input_ids, attention_mask [B,S] int64 -> last_hidden_state [B,S,D]
    onnx/decoder_model_merged.onnx   input_ids [B,T], encoder_attention_mask [B,S],
                                     encoder_hidden_states [B,S,D], use_cache_branch bool[1],
                                     past_key_values.{i}.decoder.key|value [B,H,P,K],
                                     past_key_values.{i}.encoder.key|value [B,H,S',K]
                                  -> logits [B,T,V], present.{i}.decoder.key|value [B,H,P+T,K],
                                     present.{i}.encoder.key|value [B,H,S,K]
    onnx/decoder_model.onnx          input_ids, encoder_attention_mask, encoder_hidden_states -> logits
Heads (H) and d_kv (K) are fixed numbers in the signatures; batch and lengths are symbolic, with the
batch dimension named `batch_size` (transformers.js builds the empty first-step cache from the
input metadata: `batch_size` becomes the batch, every other symbolic dimension 0).
With `use_cache_branch` false the encoder K/V are projected from encoder_hidden_states (the encoder
past inputs may be empty); with true they are passed through from the encoder past inputs. The
decoder's position offset is the length of the decoder past, so one graph serves every step.

Usage: ./seq2seq.py --check        export a random model to a temporary folder and compare
                                   onnxruntime's outputs with PyTorch's (max abs diff)
"""
import argparse
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

import torch
import torch.nn as nn
import torch.nn.functional as F

NEG = -1e9  # additive attention bias for masked positions (finite: a fully masked row stays NaN-free)


def sinusoids(n, d):
    """Fixed sinusoidal position table [n, d] (common practice, no source)."""
    pos = torch.arange(n, dtype=torch.float32)[:, None]
    i = torch.arange(0, d, 2, dtype=torch.float32)
    angle = pos / torch.pow(10000.0, i / d)
    table = torch.zeros(n, d)
    table[:, 0::2] = torch.sin(angle)
    table[:, 1::2] = torch.cos(angle)[:, : d // 2]
    return table


class Attention(nn.Module):
    def __init__(self, d_model, heads, dropout):
        super().__init__()
        assert d_model % heads == 0, 'd_model must be a multiple of heads'
        self.heads = heads
        self.d_kv = d_model // heads
        self.q = nn.Linear(d_model, d_model)
        self.k = nn.Linear(d_model, d_model)
        self.v = nn.Linear(d_model, d_model)
        self.o = nn.Linear(d_model, d_model)
        self.drop = nn.Dropout(dropout)

    def split(self, x):
        """[B, T, D] -> [B, H, T, K]"""
        return x.reshape(x.size(0), -1, self.heads, self.d_kv).transpose(1, 2)

    def attend(self, q, k, v, bias):
        """q [B,H,T,K], k/v [B,H,P,K], bias broadcastable to [B,H,T,P] -> [B, T, D]"""
        scores = torch.matmul(q, k.transpose(-1, -2)) / math.sqrt(self.d_kv) + bias
        weights = self.drop(F.softmax(scores, dim=-1))
        out = torch.matmul(weights, v).transpose(1, 2)
        return self.o(out.reshape(out.size(0), -1, self.heads * self.d_kv))


class FeedForward(nn.Module):
    def __init__(self, d_model, d_ff, dropout):
        super().__init__()
        self.up = nn.Linear(d_model, d_ff)
        self.down = nn.Linear(d_ff, d_model)
        self.drop = nn.Dropout(dropout)

    def forward(self, x):
        return self.down(self.drop(F.gelu(self.up(x))))


class EncoderLayer(nn.Module):
    def __init__(self, d_model, heads, d_ff, dropout):
        super().__init__()
        self.ln1 = nn.LayerNorm(d_model)
        self.attn = Attention(d_model, heads, dropout)
        self.ln2 = nn.LayerNorm(d_model)
        self.ff = FeedForward(d_model, d_ff, dropout)
        self.drop = nn.Dropout(dropout)

    def forward(self, x, bias):
        h = self.ln1(x)
        a = self.attn
        x = x + self.drop(a.attend(a.split(a.q(h)), a.split(a.k(h)), a.split(a.v(h)), bias))
        return x + self.drop(self.ff(self.ln2(x)))


class DecoderLayer(nn.Module):
    def __init__(self, d_model, heads, d_ff, dropout):
        super().__init__()
        self.ln1 = nn.LayerNorm(d_model)
        self.self_attn = Attention(d_model, heads, dropout)
        self.ln2 = nn.LayerNorm(d_model)
        self.cross = Attention(d_model, heads, dropout)
        self.ln3 = nn.LayerNorm(d_model)
        self.ff = FeedForward(d_model, d_ff, dropout)
        self.drop = nn.Dropout(dropout)

    def cross_kv(self, enc_h):
        """Cross-attention keys and values of the encoder output: two [B, H, S, K]."""
        return self.cross.split(self.cross.k(enc_h)), self.cross.split(self.cross.v(enc_h))

    def forward(self, x, self_bias, past_k, past_v, ck, cv, enc_bias):
        """Returns the new hidden state and this layer's full self-attention keys/values
        (past followed by the new positions)."""
        a = self.self_attn
        h = self.ln1(x)
        k = a.split(a.k(h))
        v = a.split(a.v(h))
        if past_k is not None:
            k = torch.cat([past_k, k], dim=2)
            v = torch.cat([past_v, v], dim=2)
        x = x + self.drop(a.attend(a.split(a.q(h)), k, v, self_bias))
        c = self.cross
        x = x + self.drop(c.attend(c.split(c.q(self.ln2(x))), ck, cv, enc_bias))
        return x + self.drop(self.ff(self.ln3(x))), k, v


class Seq2Seq(nn.Module):
    """Pre-LN transformer encoder–decoder with sinusoidal positions and (by default) the token
    embedding shared by encoder, decoder and output projection."""

    def __init__(self, vocab_size, d_model, heads, layers_enc, layers_dec, d_ff, dropout, pad_id,
                 max_positions=256, tie_embeddings=True):
        super().__init__()
        self.vocab_size = vocab_size
        self.d_model = d_model
        self.heads = heads
        self.d_kv = d_model // heads
        self.layers_enc = layers_enc
        self.layers_dec = layers_dec
        self.d_ff = d_ff
        self.dropout = dropout
        self.pad_id = pad_id
        self.max_positions = max_positions
        self.tie_embeddings = tie_embeddings
        self.embed = nn.Embedding(vocab_size, d_model)
        nn.init.normal_(self.embed.weight, std=d_model ** -0.5)
        self.register_buffer('positions', sinusoids(max_positions, d_model), persistent=False)
        self.enc_layers = nn.ModuleList(EncoderLayer(d_model, heads, d_ff, dropout) for _ in range(layers_enc))
        self.enc_ln = nn.LayerNorm(d_model)
        self.dec_layers = nn.ModuleList(DecoderLayer(d_model, heads, d_ff, dropout) for _ in range(layers_dec))
        self.dec_ln = nn.LayerNorm(d_model)
        self.out = None if tie_embeddings else nn.Linear(d_model, vocab_size, bias=False)
        self.drop = nn.Dropout(dropout)

    # -- configuration -----------------------------------------------------------------------
    def config_dict(self):
        return dict(vocab_size=self.vocab_size, d_model=self.d_model, heads=self.heads,
                    layers_enc=self.layers_enc, layers_dec=self.layers_dec, d_ff=self.d_ff,
                    dropout=self.dropout, pad_id=self.pad_id, max_positions=self.max_positions,
                    tie_embeddings=self.tie_embeddings)

    @staticmethod
    def from_config_dict(d):
        return Seq2Seq(**d)

    # -- pieces shared by training, reference decoding and export ----------------------------
    def embed_tokens(self, ids, offset):
        """Token embedding (scaled by sqrt(d_model)) plus the positions offset .. offset+T-1."""
        pos = torch.arange(ids.size(1), device=ids.device) + offset
        return self.drop(self.embed(ids) * math.sqrt(self.d_model) + self.positions[pos])

    @staticmethod
    def padding_bias(mask):
        """[B, S] 0/1 mask -> additive bias [B, 1, 1, S]."""
        return ((1 - mask.to(torch.float32)) * NEG)[:, None, None, :]

    def encode(self, src, src_mask):
        bias = self.padding_bias(src_mask)
        x = self.embed_tokens(src, 0)
        for layer in self.enc_layers:
            x = layer(x, bias)
        return self.enc_ln(x)

    def cross_kv(self, enc_h):
        return [layer.cross_kv(enc_h) for layer in self.dec_layers]

    def decode(self, tgt, enc_mask, cross, past=None):
        """One decoder pass over `tgt` [B, T] given the cross K/V per layer and (optionally) the
        self-attention past per layer [(k, v)], each [B, H, P, K]. Returns the logits [B, T, V] and
        the new self-attention K/V per layer (past followed by T new positions)."""
        t = tgt.size(1)
        past_len = past[0][0].size(2) if past is not None else 0
        x = self.embed_tokens(tgt, past_len)
        q_pos = torch.arange(t, device=tgt.device)[:, None] + past_len
        k_pos = torch.arange(t + past_len, device=tgt.device)[None, :]
        self_bias = (k_pos > q_pos).to(torch.float32) * NEG  # causal: key j visible iff j <= i + P
        enc_bias = self.padding_bias(enc_mask)
        presents = []
        for i, layer in enumerate(self.dec_layers):
            pk, pv = past[i] if past is not None else (None, None)
            ck, cv = cross[i]
            x, k, v = layer(x, self_bias, pk, pv, ck, cv, enc_bias)
            presents.append((k, v))
        x = self.dec_ln(x)
        w = self.embed.weight if self.out is None else self.out.weight
        return torch.matmul(x, w.t()), presents

    def forward(self, src, src_mask, tgt_in):
        """Training forward pass (teacher forcing): logits [B, T, V] for every position of tgt_in."""
        enc = self.encode(src, src_mask)
        logits, _ = self.decode(tgt_in, src_mask, self.cross_kv(enc))
        return logits

    @torch.no_grad()
    def greedy(self, src, src_mask, start_id, eos_id, max_len):
        """Reference greedy decoding without a cache: a list of token-id lists (start and EOS excluded)."""
        enc = self.encode(src, src_mask)
        cross = self.cross_kv(enc)
        b = src.size(0)
        tgt = torch.full((b, 1), start_id, dtype=torch.long, device=src.device)
        done = torch.zeros(b, dtype=torch.bool, device=src.device)
        for _ in range(max_len):
            logits, _ = self.decode(tgt, src_mask, cross)
            nxt = logits[:, -1].argmax(-1)
            nxt = torch.where(done, torch.full_like(nxt, eos_id), nxt)
            tgt = torch.cat([tgt, nxt[:, None]], dim=1)
            done |= nxt == eos_id
            if bool(done.all()):
                break
        out = []
        for row in tgt[:, 1:].tolist():
            out.append(row[: row.index(eos_id)] if eos_id in row else row)
        return out


# -- export wrappers (module boundaries chosen so each graph has the named inputs we want) ----
class _Encoder(nn.Module):
    def __init__(self, m):
        super().__init__()
        self.m = m

    def forward(self, input_ids, attention_mask):
        return self.m.encode(input_ids, attention_mask)


class _CrossProjection(nn.Module):
    def __init__(self, m):
        super().__init__()
        self.m = m

    def forward(self, encoder_hidden_states):
        return tuple(t for kv in self.m.cross_kv(encoder_hidden_states) for t in kv)


class _DecoderStep(nn.Module):
    """Decoder with a self-attention past and given cross K/V (flat: pk0, pv0, ck0, cv0, pk1, ...)."""

    def __init__(self, m):
        super().__init__()
        self.m = m

    def forward(self, input_ids, encoder_attention_mask, *flat):
        n = self.m.layers_dec
        past = [(flat[4 * i], flat[4 * i + 1]) for i in range(n)]
        cross = [(flat[4 * i + 2], flat[4 * i + 3]) for i in range(n)]
        logits, presents = self.m.decode(input_ids, encoder_attention_mask, cross, past)
        return (logits,) + tuple(t for kv in presents for t in kv)


class _DecoderNoCache(nn.Module):
    def __init__(self, m):
        super().__init__()
        self.m = m

    def forward(self, input_ids, encoder_attention_mask, encoder_hidden_states):
        logits, _ = self.m.decode(input_ids, encoder_attention_mask, self.m.cross_kv(encoder_hidden_states))
        return logits


OPSET = 14


def _export(module, args, path, input_names, output_names, dynamic_axes):
    torch.onnx.export(module, args, path, input_names=input_names, output_names=output_names,
                      dynamic_axes=dynamic_axes, opset_version=OPSET, do_constant_folding=True)


def _merge_decoder(step_path, proj_path, out_path, n_layers):
    """Builds decoder_model_merged.onnx: the step graph whose cross K/V come from one If node on
    `use_cache_branch` (true: the encoder past inputs passed through; false: projected from
    encoder_hidden_states by the projection graph, inlined as the else branch)."""
    import onnx
    from onnx import TensorProto, helper

    step = onnx.load(step_path)
    proj = onnx.load(proj_path)
    g = step.graph
    cross_names = [f'cross.{i}.{kv}' for i in range(n_layers) for kv in ('key', 'value')]
    present_enc = [f'present.{i}.encoder.{kv}' for i in range(n_layers) for kv in ('key', 'value')]
    past_enc = [f'past_key_values.{i}.encoder.{kv}' for i in range(n_layers) for kv in ('key', 'value')]
    rename = dict(zip(cross_names, present_enc))

    # the step graph's cross inputs become values produced by the If node
    for node in g.node:
        for j, name in enumerate(node.input):
            if name in rename:
                node.input[j] = rename[name]
    cross_inputs = {vi.name: vi for vi in g.input if vi.name in rename}
    kept_inputs = [vi for vi in g.input if vi.name not in rename]

    def enc_past_info(name):
        src = cross_inputs[cross_names[past_enc.index(name)]]
        vi = onnx.ValueInfoProto()
        vi.CopyFrom(src)
        vi.name = name
        dims = vi.type.tensor_type.shape.dim
        dims[0].dim_param = 'batch_size'
        dims[2].ClearField('dim_value')
        dims[2].dim_param = 'encoder_sequence_length_out'
        return vi

    def out_info(name):
        vi = enc_past_info(past_enc[present_enc.index(name)])
        vi.name = name
        vi.type.tensor_type.shape.dim[2].dim_param = 'encoder_sequence_length'
        return vi

    # then branch: pass the encoder past through
    then_nodes = [helper.make_node('Identity', [p], [f'then/{p}']) for p in past_enc]
    then_graph = helper.make_graph(then_nodes, 'use_cache', [], [
        helper.make_tensor_value_info(f'then/{p}', TensorProto.FLOAT, None) for p in past_enc])

    # else branch: the projection graph, every internal name prefixed; its weights move to the
    # outer graph (subgraphs may read outer-scope initializers)
    pg = proj.graph

    def pre(name):
        return name if name in ('', 'encoder_hidden_states') else f'xproj/{name}'

    for node in pg.node:
        node.name = pre(node.name) if node.name else ''
        for j, name in enumerate(node.input):
            node.input[j] = pre(name)
        for j, name in enumerate(node.output):
            node.output[j] = pre(name)
        for attr in node.attribute:
            if attr.g is not None and len(attr.g.node) > 0:
                raise RuntimeError('unexpected subgraph in the cross projection export')
    for init in pg.initializer:
        init.name = pre(init.name)
        g.initializer.append(init)
    proj_outputs = [pre(o.name) for o in pg.output]
    else_graph = helper.make_graph(list(pg.node), 'project', [], [
        helper.make_tensor_value_info(name, TensorProto.FLOAT, None) for name in proj_outputs])

    if_node = helper.make_node('If', ['use_cache_branch'], present_enc, name='encoder_kv_select',
                               then_branch=then_graph, else_branch=else_graph)
    nodes = [if_node] + list(g.node)
    ehs = helper.make_tensor_value_info('encoder_hidden_states', TensorProto.FLOAT,
                                        ['batch_size', 'encoder_sequence_length', proj_hidden_size(pg)])
    ucb = helper.make_tensor_value_info('use_cache_branch', TensorProto.BOOL, [1])
    # input order: input_ids, encoder_attention_mask, encoder_hidden_states, then per layer the
    # decoder past and encoder past, then use_cache_branch
    by_name = {vi.name: vi for vi in kept_inputs}
    inputs = [by_name['input_ids'], by_name['encoder_attention_mask'], ehs]
    for i in range(n_layers):
        for kv in ('key', 'value'):
            inputs.append(by_name[f'past_key_values.{i}.decoder.{kv}'])
        for kv in ('key', 'value'):
            inputs.append(enc_past_info(f'past_key_values.{i}.encoder.{kv}'))
    inputs.append(ucb)
    outputs = list(g.output) + [out_info(n) for n in present_enc]
    order = ['logits'] + [f'present.{i}.{part}.{kv}' for i in range(n_layers)
                          for part in ('decoder', 'encoder') for kv in ('key', 'value')]
    out_by_name = {o.name: o for o in outputs}
    merged_graph = helper.make_graph(nodes, 'decoder_model_merged', inputs,
                                     [out_by_name[n] for n in order], list(g.initializer))
    merged = helper.make_model(merged_graph, opset_imports=list(step.opset_import),
                               producer_name='treewright-seq2seq')
    merged.ir_version = step.ir_version
    onnx.checker.check_model(merged)
    onnx.save(merged, out_path)


def proj_hidden_size(pg):
    return pg.input[0].type.tensor_type.shape.dim[2].dim_value


def _token_at(tokenizer_json, idx):
    model = tokenizer_json.get('model', {})
    if model.get('type') == 'Unigram':
        vocab = model['vocab']
        if 0 <= idx < len(vocab):
            return vocab[idx][0]
    elif isinstance(model.get('vocab'), dict):
        for tok, i in model['vocab'].items():
            if i == idx:
                return tok
    for added in tokenizer_json.get('added_tokens', []):
        if added['id'] == idx:
            return added['content']
    return None


def sentencepiece_tokenizer_json(model_file):
    """A Hugging Face tokenizer.json (dict) equivalent to a sentencepiece Unigram model trained with
    `normalization_rule_name='identity'`, `remove_extra_whitespaces=False` and the default
    `split_by_whitespace=True` (no normalizer is needed then): Unigram pieces with their scores,
    Metaspace pre-tokenizer and decoder, and `</s>` appended after every encoded text. Control
    pieces (pad, eos, unk, ...) become special added tokens."""
    import sentencepiece as spm
    sp = spm.SentencePieceProcessor(model_file=model_file)
    n = sp.get_piece_size()
    vocab = [[sp.id_to_piece(i), float(sp.get_score(i))] for i in range(n)]
    added = []
    for i in range(n):
        if sp.is_control(i) or sp.is_unknown(i):
            vocab[i][1] = 0.0
            added.append({'id': i, 'content': sp.id_to_piece(i), 'single_word': False, 'lstrip': False,
                          'rstrip': False, 'normalized': False, 'special': True})
    eos = sp.eos_id()
    eos_piece = sp.id_to_piece(eos)
    meta = {'type': 'Metaspace', 'replacement': '\u2581', 'prepend_scheme': 'always', 'split': True}
    return {
        'version': '1.0', 'truncation': None, 'padding': None, 'added_tokens': added,
        'normalizer': None, 'pre_tokenizer': meta,
        'post_processor': {
            'type': 'TemplateProcessing',
            'single': [{'Sequence': {'id': 'A', 'type_id': 0}}, {'SpecialToken': {'id': eos_piece, 'type_id': 0}}],
            'pair': [{'Sequence': {'id': 'A', 'type_id': 0}}, {'SpecialToken': {'id': eos_piece, 'type_id': 0}},
                     {'Sequence': {'id': 'B', 'type_id': 0}}, {'SpecialToken': {'id': eos_piece, 'type_id': 0}}],
            'special_tokens': {eos_piece: {'id': eos_piece, 'ids': [eos], 'tokens': [eos_piece]}}},
        'decoder': dict(meta),
        'model': {'type': 'Unigram', 'unk_id': sp.unk_id(), 'vocab': vocab, 'byte_fallback': False},
    }


def export_onnx(model, out_dir, tokenizer_json_path, tokenizer_config, special_ids, prefixes=None):
    """Writes the model folder (see the module comment). `prefixes` (optional) maps a target grammar
    name to the text put before a question (config.json `treewright.prefixes`, read by the
    treewright CLI). Returns out_dir."""
    pad_id = special_ids['pad_id']
    eos_id = special_ids['eos_id']
    start_id = special_ids.get('decoder_start_id', pad_id)
    model = model.eval().to('cpu')
    os.makedirs(os.path.join(out_dir, 'onnx'), exist_ok=True)
    n, h, k, d = model.layers_dec, model.heads, model.d_kv, model.d_model

    with torch.no_grad():
        b, s, t, p = 2, 5, 3, 4
        src = torch.randint(0, model.vocab_size, (b, s))
        mask = torch.ones(b, s, dtype=torch.long)
        enc = model.encode(src, mask)
        ids = torch.randint(0, model.vocab_size, (b, t))
        _export(_Encoder(model), (src, mask), os.path.join(out_dir, 'onnx', 'encoder_model.onnx'),
                ['input_ids', 'attention_mask'], ['last_hidden_state'],
                {'input_ids': {0: 'batch_size', 1: 'encoder_sequence_length'},
                 'attention_mask': {0: 'batch_size', 1: 'encoder_sequence_length'},
                 'last_hidden_state': {0: 'batch_size', 1: 'encoder_sequence_length'}})
        _export(_DecoderNoCache(model), (ids, mask, enc), os.path.join(out_dir, 'onnx', 'decoder_model.onnx'),
                ['input_ids', 'encoder_attention_mask', 'encoder_hidden_states'], ['logits'],
                {'input_ids': {0: 'batch_size', 1: 'decoder_sequence_length'},
                 'encoder_attention_mask': {0: 'batch_size', 1: 'encoder_sequence_length'},
                 'encoder_hidden_states': {0: 'batch_size', 1: 'encoder_sequence_length'},
                 'logits': {0: 'batch_size', 1: 'decoder_sequence_length'}})
        with tempfile.TemporaryDirectory() as tmp:
            proj_path = os.path.join(tmp, 'proj.onnx')
            step_path = os.path.join(tmp, 'step.onnx')
            cross_names = [f'cross.{i}.{kv}' for i in range(n) for kv in ('key', 'value')]
            _export(_CrossProjection(model), (enc,), proj_path, ['encoder_hidden_states'], cross_names,
                    {'encoder_hidden_states': {0: 'batch_size', 1: 'encoder_sequence_length'},
                     **{c: {0: 'batch_size', 2: 'encoder_sequence_length'} for c in cross_names}})
            flat, names, axes = [], [], {}
            for i in range(n):
                for kv in ('key', 'value'):
                    nm = f'past_key_values.{i}.decoder.{kv}'
                    flat.append(torch.randn(b, h, p, k))
                    names.append(nm)
                    axes[nm] = {0: 'batch_size', 2: 'past_decoder_sequence_length'}
                for kv in ('key', 'value'):
                    nm = f'cross.{i}.{kv}'
                    flat.append(torch.randn(b, h, s, k))
                    names.append(nm)
                    axes[nm] = {0: 'batch_size', 2: 'encoder_sequence_length'}
            out_names = ['logits'] + [f'present.{i}.decoder.{kv}' for i in range(n) for kv in ('key', 'value')]
            axes.update({'input_ids': {0: 'batch_size', 1: 'decoder_sequence_length'},
                         'encoder_attention_mask': {0: 'batch_size', 1: 'encoder_sequence_length'},
                         'logits': {0: 'batch_size', 1: 'decoder_sequence_length'}})
            for nm in out_names[1:]:
                axes[nm] = {0: 'batch_size', 2: 'past_decoder_sequence_length + 1'}
            _export(_DecoderStep(model), (ids, mask, *flat), step_path,
                    ['input_ids', 'encoder_attention_mask'] + names, out_names, axes)
            _merge_decoder(step_path, proj_path, os.path.join(out_dir, 'onnx', 'decoder_model_merged.onnx'), n)

    with open(tokenizer_json_path, encoding='utf-8') as f:
        tok = json.load(f)
    shutil.copyfile(tokenizer_json_path, os.path.join(out_dir, 'tokenizer.json'))
    eos_tok = _token_at(tok, eos_id)
    pad_tok = _token_at(tok, pad_id)
    unk_id = special_ids.get('unk_id')
    tconf = {'tokenizer_class': 'T5Tokenizer', 'eos_token': eos_tok, 'pad_token': pad_tok,
             'model_max_length': model.max_positions, 'extra_ids': 0, 'additional_special_tokens': []}
    if unk_id is not None:
        tconf['unk_token'] = _token_at(tok, unk_id)
    tconf.update(tokenizer_config or {})
    config = {
        'model_type': 't5',
        'architectures': ['T5ForConditionalGeneration'],
        'is_encoder_decoder': True,
        'num_layers': model.layers_enc,
        'num_decoder_layers': model.layers_dec,
        'num_heads': model.heads,
        'd_kv': model.d_kv,
        'd_model': model.d_model,
        'd_ff': model.d_ff,
        'vocab_size': model.vocab_size,
        'pad_token_id': pad_id,
        'eos_token_id': eos_id,
        'decoder_start_token_id': start_id,
        'max_position_embeddings': model.max_positions,
        'tie_word_embeddings': model.tie_embeddings,
        'use_cache': True,
        'treewright': {'architecture': 'pre-LN transformer, sinusoidal positions',
                       'exported_by': 'models/src/seq2seq.py'},
    }
    if prefixes:
        config['treewright']['prefixes'] = dict(prefixes)
    gen = {'decoder_start_token_id': start_id, 'eos_token_id': eos_id, 'pad_token_id': pad_id,
           'max_length': model.max_positions}
    for name, obj in (('config.json', config), ('generation_config.json', gen), ('tokenizer_config.json', tconf)):
        with open(os.path.join(out_dir, name), 'w', encoding='utf-8') as f:
            json.dump(obj, f, indent=2, ensure_ascii=False)
            f.write('\n')
    return out_dir


# -- --check: compare onnxruntime (Node) with PyTorch --------------------------------------------
_ORT_SCRIPT = r"""
import * as ort from 'onnxruntime-node';
import { readFileSync, writeFileSync } from 'node:fs';
const [dir, inPath, outPath] = process.argv.slice(1);
const job = JSON.parse(readFileSync(inPath, 'utf8'));
const i64 = (a, dims) => new ort.Tensor('int64', BigInt64Array.from(a.flat(Infinity).map(BigInt)), dims);
const enc = await ort.InferenceSession.create(dir + '/onnx/encoder_model.onnx');
const dec = await ort.InferenceSession.create(dir + '/onnx/decoder_model_merged.onnx');
const plain = await ort.InferenceSession.create(dir + '/onnx/decoder_model.onnx');
const B = job.src.length, S = job.src[0].length;
const ids = i64(job.src, [B, S]), mask = i64(job.mask, [B, S]);
const { last_hidden_state: hs } = await enc.run({ input_ids: ids, attention_mask: mask });
const result = { encoder: Array.from(hs.data), steps: [] };
const feeds = { encoder_attention_mask: mask, encoder_hidden_states: hs };
for (const m of dec.inputMetadata) {
  if (m.name.startsWith('past_key_values')) {
    const shape = m.shape.map((d) => (typeof d === 'number' ? d : d === 'batch_size' ? B : 0));
    feeds[m.name] = new ort.Tensor('float32', new Float32Array(0), shape);
  }
}
for (let t = 0; t < job.tgt[0].length; t++) {
  feeds.input_ids = i64(job.tgt.map((r) => [r[t]]), [B, 1]);
  feeds.use_cache_branch = new ort.Tensor('bool', [t > 0], [1]);
  const out = await dec.run(feeds);
  result.steps.push(Array.from(out.logits.data));
  for (const name of Object.keys(out)) {
    if (name.startsWith('present.')) feeds[name.replace('present.', 'past_key_values.')] = out[name];
  }
}
const full = await plain.run({ input_ids: i64(job.tgt, [B, job.tgt[0].length]), encoder_attention_mask: mask, encoder_hidden_states: hs });
result.plain = Array.from(full.logits.data);
writeFileSync(outPath, JSON.stringify(result));
"""


def check(repo_root):
    torch.manual_seed(7)
    vocab, pad, eos, start = 61, 0, 1, 0
    model = Seq2Seq(vocab, 32, 4, 2, 3, 64, 0.1, pad, max_positions=64).eval()
    src = torch.randint(3, vocab, (3, 7))
    mask = torch.ones(3, 7, dtype=torch.long)
    mask[1, 5:] = 0  # a padded row
    src[1, 5:] = pad
    mask[2, 3:] = 0
    src[2, 3:] = pad
    tgt = torch.cat([torch.full((3, 1), start), torch.randint(2, vocab, (3, 6))], dim=1)
    with torch.no_grad():
        enc = model.encode(src, mask)
        logits = model(src, mask, tgt)
    with tempfile.TemporaryDirectory() as tmp:
        tok = {'version': '1.0', 'added_tokens': [], 'model': {
            'type': 'Unigram', 'unk_id': 2,
            'vocab': [['<pad>', 0.0], ['</s>', 0.0], ['<unk>', 0.0]] + [[f'w{i}', -1.0] for i in range(3, vocab)]}}
        tok_path = os.path.join(tmp, 'tokenizer.json')
        with open(tok_path, 'w') as f:
            json.dump(tok, f)
        out_dir = os.path.join(tmp, 'model')
        export_onnx(model, out_dir, tok_path, {}, {'pad_id': pad, 'eos_id': eos, 'unk_id': 2})
        job = {'src': src.tolist(), 'mask': mask.tolist(), 'tgt': tgt.tolist()}
        in_path, out_path = (os.path.join(tmp, n) for n in ('in.json', 'out.json'))
        with open(in_path, 'w') as f:
            json.dump(job, f)
        # evaluated from the repository root so that onnxruntime-node resolves from node_modules
        subprocess.run(['node', '--input-type=module', '-e', _ORT_SCRIPT, out_dir, in_path, out_path],
                       check=True, cwd=repo_root)
        with open(out_path) as f:
            res = json.load(f)
    b, s, t = src.size(0), src.size(1), tgt.size(1)
    # padded encoder positions are never attended to; compare the real ones only
    e_ort = torch.tensor(res['encoder']).reshape(b, s, -1)
    d_enc = max(float((e_ort[r, : int(mask[r].sum())] - enc[r, : int(mask[r].sum())]).abs().max()) for r in range(b))
    d_step = 0.0
    for i, step in enumerate(res['steps']):
        d_step = max(d_step, float((torch.tensor(step).reshape(b, vocab) - logits[:, i]).abs().max()))
    d_plain = float((torch.tensor(res['plain']).reshape(b, t, vocab) - logits).abs().max())
    print(f'encoder max abs diff {d_enc:.2e}; merged decoder, {t} cached steps: {d_step:.2e}; '
          f'decoder without cache: {d_plain:.2e}')
    ok = max(d_enc, d_step, d_plain) < 1e-4
    print('check passed' if ok else 'check FAILED (tolerance 1e-4)')
    return ok


if __name__ == '__main__':
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument('--check', action='store_true', help='export a random model and compare onnxruntime with PyTorch')
    args = ap.parse_args()
    if args.check:
        root = os.path.abspath(os.path.join(os.path.dirname(__file__), '..', '..'))
        sys.exit(0 if check(root) else 1)
    ap.print_help()
