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
  // the default is the first grammar listed (the server lists the demo's SQL grammar first)
  if (keep && g.grammars.some((x) => x.id === keep)) gs.value = keep;
  else if (g.grammars.length > 0) gs.value = g.grammars[0].id;
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
  try {
    // one after the other, so neither run's times include the other's work on the same cores
    setStatus('#ask-status', 'decoding without the grammar…');
    const u = await api('/api/decode', request(false));
    setStatus('#ask-status', 'decoding with the grammar…');
    const c = await api('/api/decode', request(true));
    state.runs = { u, c };
    const m = (state.models || []).find((x) => x.id === c.model);
    state.vocab = m ? m.vocab_size : 1;
    const n = Math.max(u.steps.length, c.steps.length);
    $('#step').max = String(n);
    $('#steps').hidden = false;
    setStatus('#ask-status', `${c.model} · grammar ${c.grammar} · ${c.strategy} decoding · ${state.vocab.toLocaleString('en')} tokens in the vocabulary`);
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
  $('#step-label').textContent = `step ${i} of ${$('#step').max}`;
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

/** A token as the page shows it: spaces made visible; a byte-fallback token as its byte, `<0x61>`. */
function tokenLabel(text, byte) {
  if (byte !== null && byte !== undefined) return `<0x${byte.toString(16).toUpperCase().padStart(2, '0')}>`;
  return text.replace(/ /g, '\u2423').replace(/\n/g, '\u21b5');
}
function tokenTitle(text, byte) {
  if (byte !== null && byte !== undefined) {
    const ch = byte >= 0x20 && byte < 0x7f ? ` (${JSON.stringify(String.fromCharCode(byte))})` : '';
    return `byte-fallback token: the single byte 0x${byte.toString(16).toUpperCase().padStart(2, '0')}${ch}, not the ordinary token with the same text`;
  }
  return JSON.stringify(text);
}

/** Where the run stands after `i` tokens, in words: [class, text]. */
function verdict(run, i) {
  if (i === 0) return ['wait', 'nothing written yet'];
  if (i > run.steps.length) {
    return verdict(run, run.steps.length).map((x, k) => (k === 1 ? `${x} — this run ended after step ${run.steps.length} (${run.finished === 'eos' ? 'end of sequence' : run.finished})` : x));
  }
  const s = run.steps[i - 1];
  if (s.viable === false) return ['bad', `step ${i} left the grammar: no program begins with this text`];
  if (s.viable === null) return ['bad', `outside the grammar since step ${run.left_grammar_at + 1}`];
  const over = s.allowed === false ? '; but too few tokens are left to finish it' : '';
  if (s.complete) return ['ok', `a complete program so far${over}`];
  return ['part', `a valid beginning of a program, not complete yet${over}`];
}

function perStep(ms, n) {
  return n > 0 ? `${(ms / n).toFixed(ms / n < 10 ? 2 : 1)} ms` : '–';
}

function renderRun(key, run, upto) {
  const panel = document.querySelector(`#${key} .panel`);
  const shown = Math.min(upto, run.steps.length);
  const cur = shown > 0 ? run.steps[shown - 1] : null;

  const chips = el('div', { class: 'chips', id: `${key}-tokens` });
  run.steps.forEach((s, i) => {
    let cls = 'chip';
    if (s.byte !== null && s.byte !== undefined) cls += ' byte';
    if (i < shown) cls += ' seen';
    if (i === shown - 1) cls += ' now';
    if (s.viable === false) cls += ' off';
    else if (s.allowed === false) cls += ' over';
    else if (s.allowed === null) cls += ' after';
    const tip = s.allowed_count === null ? 'after the text left the grammar'
      : `${s.allowed_count} tokens allowed here${s.viable === false ? '; this one leaves the grammar' : s.allowed === false ? '; this one fits the grammar but leaves too few tokens to finish' : ''}`;
    chips.append(el('span', { class: cls, title: `step ${i + 1}: ${tokenTitle(s.token, s.byte)} (id ${s.id}) — ${tip}`, text: tokenLabel(s.token, s.byte) }));
  });

  // what happened at the selected step, in the slider's numbering
  const stepLine = el('div', { class: 'stepline', id: `${key}-stepline` });
  if (upto === 0) stepLine.textContent = 'step 0: before the first token';
  else if (upto > run.steps.length) stepLine.textContent = `step ${upto}: no token — this run ended after step ${run.steps.length}`;
  else {
    const byte = cur.byte !== null && cur.byte !== undefined;
    stepLine.append(
      `step ${upto}: chose `,
      el('span', { class: `chip seen${byte ? ' byte' : ''}`, title: tokenTitle(cur.token, cur.byte), text: tokenLabel(cur.token, cur.byte) }),
      cur.allowed_count === null ? ' (the text was already outside the grammar)'
        : cur.allowed ? ` — one of the ${cur.allowed_count.toLocaleString('en')} tokens allowed here (of ${state.vocab.toLocaleString('en')})`
        : ` — not among the ${cur.allowed_count.toLocaleString('en')} tokens allowed here${cur.viable === false ? ': it leaves the grammar' : ': too few tokens would be left to finish'}`,
    );
  }

  const left = run.left_grammar_at;
  const over = run.over_budget_at;
  let captionText = 'Bars: tokens the grammar allows at each step (log scale; the chosen step is outlined).';
  if (over !== null && (left === null || over < left)) captionText += ` From step ${over + 1} (amber) the text no longer fits the ${run.steps.length + (run.finished === 'eos' ? 1 : 0)}-token budget.`;
  if (left !== null) captionText += ` Step ${left + 1} (red) chose a token after which the text is no program prefix.`;
  const caption = el('p', { class: 'caption' }, captionText);

  const [vcls, vtext] = verdict(run, upto);
  const sofar = el('div', { class: 'sofar', id: `${key}-sofar`, title: 'text so far', text: cur ? cur.text : '' });
  const verdictBox = el('div', { class: `verdict ${vcls}`, id: `${key}-verdict`, text: vtext });

  const n = run.steps.length;
  const timing = el('div', { class: 'note timing', id: `${key}-timing`,
    text: run.constrained
      ? `server time per step: model ${perStep(run.model_ms, n)}, masks ${perStep(run.mask_ms, n)}`
      : `server time per step: model ${perStep(run.model_ms, n)} (no masks)` });

  const parts = [stepLine, chips, chart(run, upto), caption, el('div', { class: 'note', text: `text after step ${shown}` }), sofar, verdictBox];

  // the tokens the grammar allows after the text so far (asked from /api/mask when not playing)
  if (run.left_grammar_at === null || shown <= run.left_grammar_at) {
    // (with no length budget: after an amber step the grammar still allows these)
    const allowedBox = el('div', { class: 'allowed', id: `${key}-allowed` });
    parts.push(el('div', { class: 'note', text: 'allowed next (no length budget)' }), allowedBox);
    if (state.timer === null) scheduleAllowed(key, run, cur ? cur.text : '', allowedBox);
  }

  parts.push(el('div', { class: 'note', text: `tree after step ${shown}` }));
  const treeBox = el('div', { class: 'tree', id: `${key}-tree` });
  if (run.tree_view) {
    const filled = cur ? cur.filled : 0;
    const ul = el('ul');
    const node = renderNode(run.tree_view, filled);
    if (node) ul.append(node);
    treeBox.append(ul);
    if (!node) treeBox.append(el('span', { class: 'note', text: '(nothing yet)' }));
  } else if (cur && cur.complete) {
    // the final output has no tree, but the text so far is a whole program: parse it
    treeBox.append(el('span', { class: 'note', text: '…' }));
    if (state.timer === null) scheduleParse(key, run, cur.text, treeBox);
  } else if (cur === null) {
    treeBox.append(el('span', { class: 'note', text: '(nothing yet)' }));
  } else if (cur.viable === false || cur.viable === null) {
    treeBox.append(el('span', { class: 'note', text: 'no tree: the text has left the grammar' }));
  } else {
    treeBox.append(el('span', { class: 'note', text: shown >= run.steps.length && !run.valid ? 'no tree: the output ends before the program is complete' : 'no tree yet: the text so far is not a complete program' }));
  }
  parts.push(treeBox);

  if (upto >= run.steps.length) {
    const yes = (b, t) => el('span', { class: `badge ${b ? 'yes' : 'no'}`, text: `${t}: ${b ? 'yes' : 'no'}` });
    parts.push(el('div', { class: 'note', text: 'final output' }));
    parts.push(el('div', { class: 'badges' }, yes(run.valid, 'valid'), yes(run.well_typed, 'well-typed'), el('span', { class: 'badge', text: `ended: ${run.finished === 'eos' ? 'end of sequence' : run.finished}` })));
    parts.push(el('div', { class: 'code', id: `${key}-code`, text: run.text }));
    if (run.canonical !== null && run.canonical !== undefined && run.canonical !== run.text) {
      parts.push(el('div', { class: 'note', text: 'canonical print (what runs)' }), el('div', { class: 'code', id: `${key}-canonical`, text: run.canonical }));
    } else if (run.canonical) {
      parts.push(el('div', { class: 'code', id: `${key}-canonical`, hidden: '', text: run.canonical }));
    }
    // the excerpt keeps its lines (no wrapping), so the ^ stays under its column
    if (run.parse_error) parts.push(el('div', { class: 'code excerpt', id: `${key}-error`, text: run.parse_error }));
    parts.push(el('div', { class: 'note', text: 'answer' }));
    const a = run.answer;
    const answer = el('div', { class: `answer${a && a.ok ? '' : ' bad'}`, id: `${key}-answer` });
    answer.textContent = a === null ? '(not run)' : a.ok ? formatAnswer(a.value) : `not answered: ${a.error}`;
    parts.push(answer);
  }
  parts.push(timing);
  panel.replaceChildren(...parts);
}

const parseTimers = {};
function scheduleParse(key, run, text, box) {
  clearTimeout(parseTimers[key]);
  parseTimers[key] = setTimeout(async () => {
    try {
      const r = await api('/api/parse', { grammar: run.grammar, text });
      if (!box.isConnected) return;
      const ul = el('ul', {}, renderTree(r.tree, null));
      box.replaceChildren(ul);
    } catch (e) {
      if (box.isConnected) box.replaceChildren(el('span', { class: 'note', text: e.message }));
    }
  }, 120);
}

/** A parsed JSON tree as nested list items (every node complete). */
function renderTree(value, field) {
  const head = el('span', { class: 'node done' });
  if (field !== null) head.append(el('span', { class: 'field', text: `${field}: ` }));
  const li = el('li', {}, head);
  if (value !== null && typeof value === 'object' && !Array.isArray(value)) {
    head.append(document.createTextNode(value.kind));
    const kids = [];
    for (const [k, v] of Object.entries(value)) {
      if (k === 'kind' || v === null) continue;
      if (Array.isArray(v)) v.forEach((x, i) => kids.push(renderTree(x, `${k}[${i}]`)));
      else kids.push(renderTree(v, k));
    }
    if (kids.length > 0) li.append(el('ul', {}, ...kids));
  } else {
    head.classList.add('leaf');
    head.append(document.createTextNode(String(value)));
  }
  return li;
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
      const shownTokens = r.allowed.slice(0, 60).map((t) => el('span', { class: t.byte !== null && t.byte !== undefined ? 'tok byte' : 'tok', 'data-id': String(t.id), title: `${tokenTitle(t.text, t.byte)} (id ${t.id})`, text: tokenLabel(t.text, t.byte) }));
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

/**
 * Bars of allowed-token counts on a log axis (ticks at powers of ten up to the vocabulary size),
 * step numbers below; the selected step is outlined and labelled in the slider's numbering.
 */
function chart(run, upto) {
  const n = Math.max(run.steps.length, 1);
  const W = 600;
  const H = 150;
  const L = 46; // room for the axis labels
  const R = 8;
  const T = 18;
  const B = 22;
  const plotW = W - L - R;
  const plotH = H - T - B;
  const vocab = Math.max(state.vocab, 2);
  const decades = Math.max(1, Math.ceil(Math.log10(vocab)));
  const y = (v) => T + plotH - (plotH * Math.log10(Math.max(v, 1))) / decades;
  const bw = plotW / n;
  const g = svg('svg', { class: 'chart', viewBox: `0 0 ${W} ${H}`, role: 'img', 'aria-label': 'tokens allowed per step, log scale' });
  // y axis: 1, 10, 100, … and the vocabulary size
  for (let d = 0; d <= decades; d++) {
    const v = 10 ** d;
    if (v > vocab * 1.0001 && d > 0) break;
    g.append(svg('line', { class: 'grid', x1: L, x2: W - R, y1: y(v), y2: y(v) }));
    const t = svg('text', { class: 'tick y', x: L - 4, y: y(v) + 3, 'text-anchor': 'end' });
    t.textContent = v >= 1000 ? `${v / 1000}k` : String(v);
    g.append(t);
  }
  g.append(svg('line', { class: 'grid all', x1: L, x2: W - R, y1: y(vocab), y2: y(vocab) }));
  const all = svg('text', { class: 'tick all', x: W - R, y: y(vocab) - 3, 'text-anchor': 'end' });
  all.textContent = `all ${vocab.toLocaleString('en')}`;
  g.append(all);
  g.append(svg('line', { class: 'axis', x1: L, x2: L, y1: T, y2: T + plotH }));
  g.append(svg('line', { class: 'axis', x1: L, x2: W - R, y1: T + plotH, y2: T + plotH }));
  // x axis: step numbers
  const every = n <= 12 ? 1 : n <= 30 ? 5 : n <= 120 ? 10 : 50;
  for (let i = 1; i <= n; i++) {
    if (i !== 1 && i % every !== 0) continue;
    const t = svg('text', { class: 'tick x', x: L + (i - 0.5) * bw, y: H - 8, 'text-anchor': 'middle' });
    t.textContent = String(i);
    g.append(t);
  }
  run.steps.forEach((s, i) => {
    const v = s.allowed_count;
    const top = v === null ? T + plotH - 3 : Math.min(y(v), T + plotH - 2);
    const cls = v === null ? 'bar none' : s.viable === false ? 'bar off' : s.allowed === false ? 'bar over' : 'bar';
    const r = svg('rect', { class: cls + (i === upto - 1 ? ' now' : ''), x: L + i * bw + bw * 0.12, y: top, width: Math.max(bw * 0.76, 0.5), height: T + plotH - top, opacity: i < upto ? 1 : 0.35 });
    const t = svg('title');
    t.textContent = `step ${i + 1}: ${v === null ? 'outside the grammar' : `${v} allowed`}`;
    r.append(t);
    g.append(r);
  });
  const label = svg('text', { class: 'label', x: L + 4, y: 12 });
  const cur = upto > 0 && upto <= run.steps.length ? run.steps[upto - 1] : null;
  label.textContent = upto === 0 ? `${run.steps.length} steps`
    : cur === null ? `step ${upto}: none (ended after step ${run.steps.length})`
    : cur.allowed_count === null ? `step ${upto}: outside the grammar`
    : `step ${upto}: ${cur.allowed_count.toLocaleString('en')} allowed`;
  g.append(label);
  const yl = svg('text', { class: 'tick', x: 2, y: 12 });
  yl.textContent = 'allowed';
  g.append(yl);
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

/**
 * Keeps the first error in view: when its line is scrolled out of the editor, scroll to it, and
 * when the caret's own line is out of view too (after a load or a paste the caret sits at the end)
 * put the caret at the error's line and column.
 */
function revealFirstError(text, diags) {
  const first = diags.find((d) => d.severity === 'error');
  if (!first) return;
  const t = $('#editor');
  const lineH = 18;
  const pad = 6;
  const rowTop = (line) => pad + (line - 1) * lineH;
  const inView = (line) => rowTop(line) >= t.scrollTop && rowTop(line) + lineH <= t.scrollTop + t.clientHeight;
  if (inView(first.line)) return;
  const caretLine = text.slice(0, t.selectionStart).split('\n').length;
  if (!inView(caretLine) || document.activeElement !== t) {
    const a = offsetOf(text, first.line, first.column);
    t.setSelectionRange(a, a);
  }
  t.scrollTop = Math.max(0, rowTop(first.line) - Math.floor(t.clientHeight / 3));
  // horizontally: the error's column within the visible width
  const chW = charWidth();
  const x = 8 + (first.column - 1) * chW;
  if (x < t.scrollLeft || x > t.scrollLeft + t.clientWidth - 4 * chW) t.scrollLeft = Math.max(0, x - 8 * chW);
  syncScroll();
}

let charWidthCache = 0;
function charWidth() {
  if (charWidthCache > 0) return charWidthCache;
  const probe = el('span', { text: 'x'.repeat(100) });
  probe.style.font = getComputedStyle($('#editor')).font;
  probe.style.position = 'absolute';
  probe.style.visibility = 'hidden';
  probe.style.whiteSpace = 'pre';
  document.body.append(probe);
  charWidthCache = probe.getBoundingClientRect().width / 100 || 8;
  probe.remove();
  return charWidthCache;
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
    revealFirstError(text, r.diagnostics);
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
  // the editor follows the grammar chosen for decoding
  $('#grammar').addEventListener('change', loadSelectedGrammar);
  $('#use-grammar').addEventListener('click', () => void useGrammar());
  showOptions();
  try {
    await loadChoices();
    loadSelectedGrammar();
  } catch (e) {
    setStatus('#ask-status', e.message, true);
  }
});
