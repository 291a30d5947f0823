// The playground page: plain DOM, no framework, no network beyond this server's /api/ routes.
'use strict';

const $ = (sel) => document.querySelector(sel);
const el = (tag, attrs = {}, ...kids) => {
  const n = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs)) {
    if (k === 'class') n.className = v;
    else if (k === 'text') n.textContent = v;
    else n.setAttribute(k, v);
  }
  for (const k of kids) if (k !== null && k !== undefined) n.append(k);
  return n;
};
const SVG = 'http://www.w3.org/2000/svg';
const svg = (tag, attrs = {}) => {
  const n = document.createElementNS(SVG, tag);
  for (const [k, v] of Object.entries(attrs)) n.setAttribute(k, String(v));
  return n;
};

async function api(path, body) {
  const init = body === undefined ? {} : { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body) };
  const res = await fetch(path, init);
  const data = await res.json();
  if (!res.ok) {
    const e = data && data.error ? data.error : { code: 'http_' + res.status, message: res.statusText };
    const err = new Error(e.message);
    err.info = e;
    throw err;
  }
  return data;
}

const state = { grammars: [], runs: { u: null, c: null }, step: 0, timer: null, vocab: 1 };

// ---------- grammar and model choice ----------
async function loadChoices(selectId) {
  const [g, m] = await Promise.all([api('/api/grammars'), api('/api/models')]);
  state.grammars = g.grammars;
  const gs = $('#grammar');
  const keep = selectId ?? gs.value;
  gs.replaceChildren(...g.grammars.map((x) => el('option', { value: x.id, text: x.origin === 'checked' ? `${x.name} (edited, ${x.id})` : x.name })));
  if (keep && g.grammars.some((x) => x.id === keep)) gs.value = keep;
  else if (g.grammars.some((x) => x.id === 'lf')) gs.value = 'lf';
  const ms = $('#model');
  if (ms.options.length === 0) {
    ms.replaceChildren(...m.models.map((x) => el('option', { value: x.id, text: x.id })));
    state.models = m.models;
  }
  if (m.models.length === 0) setStatus('#ask-status', 'No model is loaded: start the server with --model DIR.', true);
}

function setStatus(sel, text, bad = false) {
  const s = $(sel);
  s.textContent = text;
  s.classList.toggle('bad', bad);
}

function showOptions() {
  const strategy = $('#strategy').value;
  for (const o of document.querySelectorAll('.opt')) o.hidden = o.dataset.for !== strategy;
}

// ---------- decoding ----------
function request(constrained) {
  const body = {
    question: $('#question').value.trim(),
    grammar: $('#grammar').value,
    constrained,
    steps: true,
    execute: true,
    max_tokens: Number($('#max-tokens').value) || 64,
  };
  const model = $('#model').value;
  if (model) body.model = model;
  const strategy = $('#strategy').value;
  if (strategy === 'beam') body.beam = Number($('#beam').value) || 3;
  if (strategy === 'sample') {
    body.sample = true;
    body.temperature = Number($('#temperature').value) || 1;
    body.seed = Math.trunc(Number($('#seed').value) || 0);
  }
  return body;
}

async function decodeBoth(ev) {
  ev.preventDefault();
  stopPlay();
  if ($('#question').value.trim() === '') return;
  $('#go').disabled = true;
  setStatus('#ask-status', 'decoding…');
  try {
    const [u, c] = await Promise.all([api('/api/decode', request(false)), api('/api/decode', request(true))]);
    state.runs = { u, c };
    const m = (state.models || []).find((x) => x.id === c.model);
    state.vocab = m ? m.vocab_size : 1;
    const n = Math.max(u.steps.length, c.steps.length);
    $('#step').max = String(n);
    $('#steps').hidden = false;
    setStatus('#ask-status', `${c.model} · ${c.grammar} · ${c.strategy} · without grammar ${u.tokens.length} tokens in ${u.total_ms.toFixed(0)} ms, with grammar ${c.tokens.length} tokens in ${c.total_ms.toFixed(0)} ms`);
    setStep(n);
  } catch (e) {
    setStatus('#ask-status', e.message, true);
  } finally {
    $('#go').disabled = false;
  }
}

function setStep(i) {
  state.step = i;
  $('#step').value = String(i);
  $('#step-label').textContent = `${i} / ${$('#step').max}`;
  for (const key of ['u', 'c']) if (state.runs[key]) renderRun(key, state.runs[key], i);
}

function stopPlay() {
  if (state.timer !== null) clearInterval(state.timer);
  state.timer = null;
  $('#play').textContent = '▶ play';
}

function togglePlay() {
  if (state.timer !== null) return stopPlay();
  const max = Number($('#step').max);
  if (state.step >= max) setStep(0);
  $('#play').textContent = '❚❚ pause';
  state.timer = setInterval(() => {
    if (state.step >= max) return stopPlay();
    setStep(state.step + 1);
  }, 180);
}

function renderRun(key, run, upto) {
  const panel = document.querySelector(`#${key} .panel`);
  const shown = Math.min(upto, run.steps.length);
  const cur = shown > 0 ? run.steps[shown - 1] : null;

  const chips = el('div', { class: 'chips', id: `${key}-tokens` });
  run.steps.forEach((s, i) => {
    let cls = 'chip';
    if (i < shown) cls += ' seen';
    if (i === shown - 1) cls += ' now';
    if (s.viable === false) cls += ' off';
    else if (s.allowed === false) cls += ' over';
    else if (s.allowed === null) cls += ' after';
    const tip = s.allowed_count === null ? 'after the text left the grammar'
      : `${s.allowed_count} tokens allowed here${s.viable === false ? '; this one leaves the grammar' : s.allowed === false ? '; this one fits the grammar but leaves too few tokens to finish' : ''}`;
    // spaces shown as a visible mark so whitespace tokens do not look empty
    chips.append(el('span', { class: cls, title: `step ${i + 1}: ${JSON.stringify(s.token)} (id ${s.id}) — ${tip}`, text: s.token.replace(/ /g, '\u2423') }));
  });

  const left = run.left_grammar_at;
  const over = run.over_budget_at;
  let captionText = `Allowed tokens per step (of ${state.vocab}; log scale).`;
  if (over !== null && (left === null || over < left)) captionText += ` From step ${over + 1} (amber) the text no longer fits the ${run.steps.length + (run.finished === 'eos' ? 1 : 0)}-token budget.`;
  if (left !== null) captionText += ` Step ${left + 1} (red) chose a token after which the text is no program prefix.`;
  const caption = el('p', { class: 'caption' }, captionText);

  const sofar = el('div', { class: 'sofar', id: `${key}-sofar`, title: 'text so far', text: cur ? cur.text : '' });

  const parts = [chips, chart(run, shown), caption, el('div', { class: 'note', text: 'text so far' }), sofar];

  // the tokens the grammar allows after the text so far (asked from /api/mask when not playing)
  if (run.left_grammar_at === null || shown <= run.left_grammar_at) {
    // (with no length budget: after an amber step the grammar still allows these)
    const allowedBox = el('div', { class: 'allowed', id: `${key}-allowed` });
    parts.push(el('div', { class: 'note', text: 'allowed next (no length budget)' }), allowedBox);
    if (state.timer === null) scheduleAllowed(key, run, cur ? cur.text : '', allowedBox);
  }

  parts.push(el('div', { class: 'note', text: 'tree' }));
  const treeBox = el('div', { class: 'tree', id: `${key}-tree` });
  if (run.tree_view) {
    const filled = cur ? cur.filled : 0;
    const ul = el('ul');
    const node = renderNode(run.tree_view, filled);
    if (node) ul.append(node);
    treeBox.append(ul);
    if (!node) treeBox.append(el('span', { class: 'note', text: '(nothing yet)' }));
  } else {
    treeBox.append(el('span', { class: 'note', text: run.parses ? 'the output parses but is not well-typed: no tree' : 'the output does not parse: no tree' }));
  }
  parts.push(treeBox);

  if (shown >= run.steps.length) {
    const yes = (b, t) => el('span', { class: `badge ${b ? 'yes' : 'no'}`, text: `${t}: ${b ? 'yes' : 'no'}` });
    parts.push(el('div', { class: 'badges' }, yes(run.parses, 'parses'), yes(run.well_typed, 'well-typed'), el('span', { class: 'badge', text: `ended: ${run.finished}` })));
    parts.push(el('div', { class: 'note', text: 'final code' }), el('div', { class: 'code', id: `${key}-code`, text: run.text }));
    if (run.canonical !== null && run.canonical !== undefined && run.canonical !== run.text) {
      parts.push(el('div', { class: 'note', text: 'canonical print (what runs)' }), el('div', { class: 'code', id: `${key}-canonical`, text: run.canonical }));
    } else if (run.canonical) {
      parts.push(el('div', { class: 'code', id: `${key}-canonical`, hidden: '', text: run.canonical }));
    }
    if (run.parse_error) parts.push(el('div', { class: 'code', text: run.parse_error }));
    parts.push(el('div', { class: 'note', text: 'answer' }));
    const a = run.answer;
    const answer = el('div', { class: `answer${a && a.ok ? '' : ' bad'}`, id: `${key}-answer` });
    answer.textContent = a === null ? '(not run)' : a.ok ? formatAnswer(a.value) : `not answered: ${a.error}`;
    parts.push(answer);
  }
  panel.replaceChildren(...parts);
}

const allowedTimers = {};
function scheduleAllowed(key, run, prefix, box) {
  clearTimeout(allowedTimers[key]);
  box.textContent = '…';
  allowedTimers[key] = setTimeout(async () => {
    try {
      const r = await api('/api/mask', { grammar: run.grammar, model: run.model, prefix, sample: 500 });
      if (!box.isConnected) return;
      box.dataset.count = String(r.allowed_count);
      box.dataset.ids = r.allowed.map((t) => t.id).join(' ');
      const shownTokens = r.allowed.slice(0, 60).map((t) => el('span', { class: 'tok', 'data-id': String(t.id), text: t.text.replace(/ /g, '\u2423') }));
      const more = r.allowed_count > shownTokens.length ? el('span', { class: 'note', text: ` … ${r.allowed_count - shownTokens.length} more` }) : null;
      box.replaceChildren(el('span', { class: 'note', text: `${r.allowed_count}${r.complete ? ' (end allowed)' : ''}: ` }), ...shownTokens, more ?? '');
    } catch (e) {
      if (box.isConnected) box.textContent = e.message;
    }
  }, 120);
}

function formatAnswer(v) {
  if (v && Array.isArray(v.columns) && Array.isArray(v.rows)) {
    const rows = v.rows.slice(0, 20).map((r) => r.map((x) => String(x)).join(' | '));
    return [v.columns.join(' | '), ...rows, v.rows.length > 20 ? `… ${v.rows.length} rows` : null].filter((x) => x !== null).join('\n');
  }
  if (v && v.type === 'set') return `{${v.members.join(', ')}}`;
  if (v && 'value' in v) return `${v.type}: ${JSON.stringify(v.value)}`;
  return JSON.stringify(v);
}

function chart(run, shown) {
  const n = Math.max(run.steps.length, 1);
  const W = 600;
  const H = 90;
  const pad = 14;
  const bw = (W - 2) / n;
  const top = Math.log10(Math.max(state.vocab, 2) + 1);
  const g = svg('svg', { class: 'chart', viewBox: `0 0 ${W} ${H}`, preserveAspectRatio: 'none', role: 'img', 'aria-label': 'allowed tokens per step' });
  run.steps.forEach((s, i) => {
    const v = s.allowed_count;
    const h = v === null ? 4 : Math.max(2, ((H - pad) * Math.log10(v + 1)) / top);
    const cls = v === null ? 'bar none' : s.viable === false ? 'bar off' : s.allowed === false ? 'bar over' : 'bar';
    const r = svg('rect', { class: cls, x: 1 + i * bw + bw * 0.1, y: H - h, width: Math.max(bw * 0.8, 0.5), height: h, opacity: i < shown ? 1 : 0.3 });
    const t = svg('title');
    t.textContent = `step ${i + 1}: ${v === null ? 'outside the grammar' : `${v} allowed`}`;
    r.append(t);
    g.append(r);
  });
  if (shown > 0) g.append(svg('line', { class: 'cursor', x1: 1 + (shown - 0.5) * bw, x2: 1 + (shown - 0.5) * bw, y1: 0, y2: H }));
  const label = svg('text', { x: 4, y: 11 });
  const cur = shown > 0 ? run.steps[shown - 1] : null;
  label.textContent = cur ? (cur.allowed_count === null ? 'outside the grammar' : `${cur.allowed_count} allowed at step ${shown}`) : `${n} steps`;
  g.append(label);
  return g;
}

/** A tree-view node as a list item when its text has begun at `filled` non-space characters. */
function renderNode(node, filled) {
  if (!(node.start < filled || (node.start === 0 && filled > 0))) return null;
  const done = node.end <= filled;
  const head = el('span', { class: `node ${done ? 'done' : 'open'}${node.children.length === 0 && node.field !== null ? ' leaf' : ''}` });
  if (node.field !== null) head.append(el('span', { class: 'field', text: `${node.field}: ` }));
  head.append(document.createTextNode(node.label));
  const li = el('li', {}, head);
  const kids = node.children.map((c) => renderNode(c, filled)).filter((x) => x !== null);
  if (kids.length > 0) li.append(el('ul', {}, ...kids));
  return li;
}

// ---------- grammar editor ----------
const editor = { seq: 0, timer: null, lastId: null };

function offsetOf(text, line, column) {
  let at = 0;
  for (let l = 1; l < line; l++) {
    const nl = text.indexOf('\n', at);
    if (nl < 0) return text.length;
    at = nl + 1;
  }
  return Math.min(text.length, at + column - 1);
}

function renderGutter(text, diags) {
  const lines = text.split('\n').length;
  const marks = new Map();
  for (const d of diags) if (!marks.has(d.line) || d.severity === 'error') marks.set(d.line, d);
  const rows = [];
  for (let i = 1; i <= lines; i++) {
    const d = marks.get(i);
    const row = el('div', { text: String(i), 'data-line': String(i) });
    if (d) {
      row.className = d.severity === 'error' ? 'err' : 'warn';
      row.title = `${d.line}:${d.column}: ${d.message}`;
    }
    rows.push(row);
  }
  $('#gutter').replaceChildren(...rows);
}

function renderMarks(text, diags) {
  const spans = diags
    .map((d) => {
      const a = offsetOf(text, d.line, d.column);
      let b = offsetOf(text, d.end_line ?? d.line, d.end_column ?? d.column + 1);
      if (b <= a) b = Math.min(text.length, a + 1);
      return { a, b, d };
    })
    .sort((x, y) => x.a - y.a);
  const out = [];
  let at = 0;
  for (const s of spans) {
    if (s.a < at) continue; // overlapping spans: the first one is marked (the list shows all)
    out.push(document.createTextNode(text.slice(at, s.a)));
    const piece = text.slice(s.a, s.b);
    out.push(el('mark', { class: s.d.severity, 'data-line': String(s.d.line), 'data-column': String(s.d.column), text: piece === '' || piece === '\n' ? ' ' : piece }));
    at = s.b;
  }
  out.push(document.createTextNode(text.slice(at) + '\n'));
  $('#marks').replaceChildren(...out);
  syncScroll();
}

function syncScroll() {
  const t = $('#editor');
  $('#marks').scrollTop = t.scrollTop;
  $('#marks').scrollLeft = t.scrollLeft;
  $('#gutter').scrollTop = t.scrollTop;
}

async function checkNow() {
  const text = $('#editor').value;
  const seq = ++editor.seq;
  try {
    const r = await api('/api/check', { text, file: 'editor.twg' });
    if (seq !== editor.seq) return; // a newer check is on its way
    renderGutter(text, r.diagnostics);
    renderMarks(text, r.diagnostics);
    const errs = r.diagnostics.filter((d) => d.severity === 'error').length;
    const warns = r.diagnostics.length - errs;
    editor.lastId = r.ok ? r.id : null;
    $('#use-grammar').disabled = !r.ok;
    setStatus('#check-status', r.ok ? `compiles (${warns} warning${warns === 1 ? '' : 's'}) · grammar id ${r.id}` : `${errs} error${errs === 1 ? '' : 's'}`, !r.ok);
    $('#diagnostics').replaceChildren(
      ...r.diagnostics.map((d) => {
        const li = el('li', { class: d.severity, 'data-line': String(d.line), text: `${d.file}:${d.line}:${d.column}: ${d.severity}: ${d.message}${d.hint ? `\nhint: ${d.hint}` : ''}` });
        li.addEventListener('click', () => {
          const t = $('#editor');
          const a = offsetOf(text, d.line, d.column);
          t.focus();
          t.setSelectionRange(a, Math.max(a, offsetOf(text, d.end_line, d.end_column)));
        });
        return li;
      }),
    );
  } catch (e) {
    if (seq === editor.seq) setStatus('#check-status', e.message, true);
  }
}

function scheduleCheck() {
  if (editor.timer !== null) clearTimeout(editor.timer);
  renderGutter($('#editor').value, []);
  editor.timer = setTimeout(() => {
    editor.timer = null;
    void checkNow();
  }, 300);
}

function loadSelectedGrammar() {
  const g = state.grammars.find((x) => x.id === $('#grammar').value);
  if (!g) return;
  $('#editor').value = g.text;
  $('#editor').scrollTop = 0;
  void checkNow();
}

async function useGrammar() {
  if (editor.lastId === null) return;
  await loadChoices(editor.lastId);
  setStatus('#ask-status', `now decoding with the edited grammar ${editor.lastId}`);
}

// ---------- start ----------
window.addEventListener('DOMContentLoaded', async () => {
  $('#ask-form').addEventListener('submit', decodeBoth);
  $('#strategy').addEventListener('change', showOptions);
  $('#step').addEventListener('input', () => { stopPlay(); setStep(Number($('#step').value)); });
  $('#play').addEventListener('click', togglePlay);
  $('#editor').addEventListener('input', scheduleCheck);
  $('#editor').addEventListener('scroll', syncScroll);
  $('#load-grammar').addEventListener('click', loadSelectedGrammar);
  $('#use-grammar').addEventListener('click', () => void useGrammar());
  showOptions();
  try {
    await loadChoices();
    loadSelectedGrammar();
  } catch (e) {
    setStatus('#ask-status', e.message, true);
  }
});
