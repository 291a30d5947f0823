/**
 * The evaluation report: one self-contained HTML file (no network: Chart.js and its error-bar
 * plugin are inlined from node_modules). It shows the five measures per split and mode with 95%
 * Wilson score intervals, the difference between the modes with its paired-bootstrap interval and
 * McNemar's p, latency distributions, the failure taxonomy and
 * example cards (gold vs unconstrained vs constrained, the first bad token marked, the answers).
 *
 * Every number in the tables carries `data-key` (its path in metrics.json) so a reader — or a
 * test — can tie it back to the file. The tables are plain HTML and readable without scripts;
 * the charts need JavaScript. Cost: linear in the rows; the file is ~250 KB plus the rows' data.
 */
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { createRequire } from 'node:module';
import { formatAnswer } from '../exec/answer.ts';
import type { Metrics, ModeMetrics, RateMetric, TaxonomyEntry } from './metrics.ts';
import { RATE_METRICS } from './metrics.ts';
import type { EvalRow, Mode } from './run.ts';
import type { DifferenceCI, RateCI } from './stats.ts';
import { BOOTSTRAP_RESAMPLES } from './stats.ts';

const require = createRequire(import.meta.url);

/** The text of `file` inside installed package `pkg` (found from its main entry; exports maps hide subpaths). */
function libraryScript(pkg: string, file: string): string {
  let dir = dirname(require.resolve(pkg));
  while (!existsSync(join(dir, 'package.json')) || JSON.parse(readFileSync(join(dir, 'package.json'), 'utf8')).name !== pkg) {
    const up = dirname(dir);
    if (up === dir) throw new Error(`cannot find the installed package ${pkg} (run npm install)`);
    dir = up;
  }
  // `<\/script` means the same as `</script` inside JS strings and regexes, and cannot end the tag
  return readFileSync(join(dir, file), 'utf8').replace(/<\/script/gi, '<\\/script');
}

export interface ReportInput {
  readonly title?: string;
  readonly meta: Readonly<Record<string, string>>;
  readonly metrics: Metrics;
  readonly taxonomy: Record<Mode, TaxonomyEntry[]>;
  readonly rows: readonly EvalRow[];
  /** most example cards to show (default 8) */
  readonly examples?: number;
}

/** What each measure means, shown as the tooltip of its row (the row shows the measure's own name). */
export const METRIC_MEANINGS: Record<RateMetric, string> = {
  valid: 'the output is a program of the grammar',
  well_typed: 'it also passes the tree check with the bound names (known names, variables in scope)',
  executable: 'it ran without error',
  exact_match: 'its tree equals the gold tree',
  execution_accuracy: 'its answer equals the gold answer',
};

const MODES: readonly Mode[] = ['unconstrained', 'constrained'];

function esc(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/** Percent with one decimal, as shown in the report: 0.8345 → "83.5%". */
export function pct(x: number | null): string {
  return x === null ? '–' : `${(x * 100).toFixed(1)}%`;
}

/**
 * A difference of rates in percentage points with its sign, one decimal: 0.0125 → "+1.3",
 * −0.2 → "−20.0" (U+2212), anything that rounds to zero → "0.0".
 */
export function pp(x: number | null): string {
  if (x === null) return '–';
  const v = Math.abs(x * 100).toFixed(1);
  return `${v === '0.0' ? '' : x > 0 ? '+' : '\u2212'}${v}`;
}

export function ms(x: number | null): string {
  return x === null ? '–' : `${x.toFixed(1)} ms`;
}

export function pval(p: number | null): string {
  return p === null ? '–' : p.toPrecision(3);
}

function rateCell(key: string, r: RateCI): string {
  return `<td><span class="num" data-key="${esc(key)}.rate">${pct(r.rate)}</span>` +
    `<span class="ci"> [<span data-key="${esc(key)}.ci_low">${pct(r.ci_low)}</span> – ` +
    `<span data-key="${esc(key)}.ci_high">${pct(r.ci_high)}</span>]</span>` +
    `<span class="n"> n=<span data-key="${esc(key)}.n">${r.n}</span></span></td>`;
}

function differenceCell(key: string, d: DifferenceCI): string {
  const ci = d.ci_low === null || d.ci_high === null
    ? `<span class="ci" title="the bootstrap has no spread to measure when the modes never disagree"> (no item differs)</span>`
    : `<span class="ci"> [<span data-key="${esc(key)}.ci_low">${pp(d.ci_low)}</span> – <span data-key="${esc(key)}.ci_high">${pp(d.ci_high)}</span>]</span>`;
  return `<td><span class="num" data-key="${esc(key)}.estimate">${pp(d.estimate)}</span>${ci}` +
    `<span class="n"> <span data-key="${esc(key)}.discordant">${d.discordant}</span> differ</span></td>`;
}

function splitTable(split: string, m: Metrics[string]): string {
  const rows = RATE_METRICS.map((metric) => {
    const cells = MODES.map((mode) => rateCell(`${split}.${mode}.${metric}`, (m[mode] as ModeMetrics)[metric])).join('');
    const diff = differenceCell(`${split}.difference.${metric}`, m.difference[metric]);
    const p = `<td class="p" data-key="${esc(split)}.mcnemar_p.${metric}">${pval(m.mcnemar_p[metric])}</td>`;
    return `<tr><th scope="row" title="${esc(METRIC_MEANINGS[metric])}"><code>${metric}</code></th>${cells}${diff}${p}</tr>`;
  });
  const lat = (q: 'latency_ms_p50' | 'latency_ms_p95', label: string) =>
    `<tr><th scope="row">${label}</th>${MODES.map((mode) => `<td><span class="num" data-key="${esc(split)}.${mode}.${q}">${ms(m[mode][q])}</span></td>`).join('')}<td></td><td class="p"></td></tr>`;
  return `<table class="metrics">
<caption>split <b>${esc(split)}</b></caption>
<thead><tr><th></th><th class="mode-u">unconstrained</th><th class="mode-c">constrained</th><th>constrained − unconstrained, pp</th><th>McNemar p</th></tr></thead>
<tbody>${rows.join('\n')}
${lat('latency_ms_p50', 'latency p50')}
${lat('latency_ms_p95', 'latency p95')}</tbody></table>`;
}

function taxonomyTable(entries: readonly TaxonomyEntry[], mode: Mode, shown: ReadonlySet<string>): string {
  if (entries.length === 0) return `<p class="quiet">No ${mode} output failed.</p>`;
  const total = entries.reduce((s, e) => s + e.count, 0);
  return `<table class="taxonomy" data-mode="${mode}"><thead><tr><th>where it first went wrong</th><th>count</th><th>share</th><th>example</th></tr></thead><tbody>
${entries.map((e) => `<tr><td><code>${esc(e.category)}</code></td><td class="count">${e.count}</td><td>${pct(e.count / total)}</td><td>${shown.has(e.example) ? `<a href="#card-${esc(e.example)}">${esc(e.example)}</a>` : esc(e.example)}</td></tr>`).join('\n')}
</tbody></table>`;
}

/**
 * [start, end) of the token holding `offset`, when the token texts spell the text (the decoder may
 * drop one leading space of the first token); null otherwise.
 */
export function tokenSpan(text: string, tokens: readonly string[] | null, offset: number): [number, number] | null {
  if (tokens === null || tokens.length === 0) return null;
  const joined = tokens.join('');
  const shift = joined.length - text.length;
  if (shift < 0 || joined.slice(shift) !== text) return null;
  let pos = -shift;
  for (const t of tokens) {
    const end = pos + t.length;
    if (offset < end && end > 0) return [Math.max(0, pos), end];
    pos = end;
  }
  return null;
}

/**
 * The output text with the first bad token wrapped in <mark>: the model's token holding `offset`
 * when token texts are known, else the word (or single character) starting there; an output that
 * stopped early gets an end marker.
 */
export function markText(text: string, offset: number | null, tokens: readonly string[] | null = null): string {
  if (offset === null || offset < 0) return esc(text);
  if (offset >= text.trimEnd().length) return `${esc(text)}<mark class="end" title="the output stopped here">⟨end⟩</mark>`;
  let span = tokenSpan(text, tokens, offset);
  if (span === null || span[1] <= offset) {
    let end = offset + 1;
    while (end < text.length && /[\w$]/.test(text[offset]) && /[\w$]/.test(text[end])) end++;
    span = [offset, end];
  }
  const [a, b] = span;
  return `${esc(text.slice(0, a))}<mark title="the token holding the first character the grammar does not allow here">${esc(text.slice(a, b))}</mark>${esc(text.slice(b))}`;
}

function verdict(r: EvalRow): string {
  if (!r.valid) return '<span class="bad">does not parse</span>';
  if (!r.well_typed) return '<span class="bad">ill-typed</span>';
  if (!r.executable) return '<span class="bad">runtime error</span>';
  if (r.execution_accuracy) return r.exact_match ? '<span class="good">exact</span>' : '<span class="good">right answer</span>';
  return '<span class="warn">wrong answer</span>';
}

function pickExamples(rows: readonly EvalRow[], max: number): [EvalRow, EvalRow][] {
  const byId = new Map<string, { u?: EvalRow; c?: EvalRow }>();
  for (const r of rows) {
    const e = byId.get(r.id) ?? {};
    if (r.mode === 'unconstrained') e.u = r;
    else e.c = r;
    byId.set(r.id, e);
  }
  const pairs = [...byId.values()].filter((e) => e.u && e.c).map((e) => [e.u!, e.c!] as [EvalRow, EvalRow]);
  const groups: [EvalRow, EvalRow][][] = [
    pairs.filter(([u, c]) => !u.valid && c.execution_accuracy),
    pairs.filter(([u]) => !u.valid),
    pairs.filter(([u]) => u.valid && !u.executable),
    pairs.filter(([, c]) => !c.execution_accuracy),
    pairs.filter(([u, c]) => u.execution_accuracy && c.execution_accuracy),
  ];
  const chosen: [EvalRow, EvalRow][] = [];
  const seen = new Set<string>();
  for (let round = 0; chosen.length < max && round < max; round++) {
    for (const g of groups) {
      const next = g.find(([u]) => !seen.has(u.id));
      if (next && chosen.length < max) {
        seen.add(next[0].id);
        chosen.push(next);
      }
    }
  }
  return chosen;
}

function card([u, c]: [EvalRow, EvalRow]): string {
  const line = (label: string, cls: string, r: EvalRow) => `<div class="out ${cls}">
  <div class="label">${label} ${verdict(r)}</div>
  <pre>${markText(r.text, r.valid ? null : r.failure?.offset ?? null, r.token_texts ?? null)}</pre>
  ${r.failure ? `<div class="why">${esc(r.failure.category)}${r.failure.detail !== r.failure.category ? ` — ${esc(r.failure.detail)}` : ''}</div>` : ''}
  <div class="answer">answer: ${esc(formatAnswer(r.answer))}</div>
</div>`;
  return `<article class="card" id="card-${esc(u.id)}">
<header><span class="id">${esc(u.id)}</span> <span class="split">${esc(u.split)}</span></header>
<p class="question">${esc(u.question)}</p>
<div class="out gold"><div class="label">gold</div><pre>${esc(u.gold)}</pre><div class="answer">answer: ${esc(formatAnswer(u.gold_answer))}</div></div>
${line('unconstrained', 'mode-u', u)}
${line('constrained', 'mode-c', c)}
</article>`;
}

function histogram(values: readonly number[], bins: number, lo: number, hi: number): number[] {
  const out = new Array<number>(bins).fill(0);
  const w = (hi - lo) / bins || 1;
  for (const v of values) out[Math.min(bins - 1, Math.max(0, Math.floor((v - lo) / w)))]++;
  return out;
}

const STYLE = `
:root { --ink:#1d2327; --quiet:#5f6b72; --line:#d9dcd6; --paper:#fbfaf6; --u:#b5542d; --c:#1f6f78; --good:#2f7d32; --bad:#a33a2b; --warn:#8a6d1a; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink); font: 15px/1.5 system-ui, -apple-system, "Segoe UI", sans-serif; }
main { max-width: 1100px; margin: 0 auto; padding: 28px 24px 60px; }
h1 { font-size: 26px; margin: 0 0 4px; font-weight: 650; letter-spacing: -0.01em; }
h2 { font-size: 19px; margin: 36px 0 10px; padding-bottom: 4px; border-bottom: 2px solid var(--ink); }
.meta { color: var(--quiet); font-size: 13px; }
.meta span { margin-right: 14px; }
.split { margin-bottom: 22px; } .split .chart { margin-top: 10px; }
.metrics td { white-space: nowrap; }
.grid { display: grid; grid-template-columns: repeat(auto-fit, minmax(480px, 1fr)); gap: 18px; }
table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; background: #fff; }
caption { text-align: left; padding: 6px 0; }
th, td { text-align: left; padding: 5px 8px; border-bottom: 1px solid var(--line); vertical-align: top; }
thead th { font-size: 12px; text-transform: uppercase; letter-spacing: 0.04em; color: var(--quiet); }
.mode-u { color: var(--u); } .mode-c { color: var(--c); }
.num { font-weight: 600; } .ci, .n { color: var(--quiet); font-size: 12px; }
.p { font-variant-numeric: tabular-nums; }
.chart { background: #fff; border: 1px solid var(--line); padding: 10px; height: 320px; position: relative; }
.chart canvas { width: 100% !important; height: 100% !important; }
.quiet { color: var(--quiet); }
.cards { display: grid; grid-template-columns: repeat(auto-fit, minmax(500px, 1fr)); gap: 16px; }
.card { background: #fff; border: 1px solid var(--line); border-top: 4px solid var(--ink); padding: 10px 14px 12px; }
.card header { font-size: 12px; color: var(--quiet); }
.card .question { font-weight: 600; margin: 4px 0 8px; }
.out { margin: 6px 0; padding-left: 10px; border-left: 3px solid var(--line); }
.out.gold { border-left-color: var(--ink); } .out.mode-u { border-left-color: var(--u); } .out.mode-c { border-left-color: var(--c); }
.out .label { font-size: 12px; text-transform: uppercase; letter-spacing: 0.04em; color: var(--quiet); }
.out pre { margin: 2px 0; white-space: pre-wrap; word-break: break-word; font: 13px/1.45 ui-monospace, "SFMono-Regular", Menlo, Consolas, monospace; color: var(--ink); }
.out .why, .out .answer { font-size: 12.5px; color: var(--quiet); }
mark { background: #f6c9b8; color: #5a1505; border-bottom: 2px solid var(--bad); padding: 0 1px; }
mark.end { background: none; color: var(--bad); border: none; font-weight: 700; }
.good { color: var(--good); font-weight: 600; text-transform: none; } .bad { color: var(--bad); font-weight: 600; text-transform: none; } .warn { color: var(--warn); font-weight: 600; text-transform: none; }
.note { font-size: 13px; color: var(--quiet); max-width: 80ch; }
code { font: 12.5px ui-monospace, Menlo, Consolas, monospace; }
.taxonomy td:last-child, .taxonomy td.count { white-space: nowrap; font-size: 12.5px; }
.taxonomy code { white-space: normal; }
`;

/** Builds the report's HTML text. */
export function renderReport(input: ReportInput): string {
  const splits = Object.keys(input.metrics);
  const allLatencies = input.rows.map((r) => r.latency_ms);
  const lo = allLatencies.length ? Math.min(...allLatencies) : 0;
  const hi = allLatencies.length ? Math.max(...allLatencies) : 1;
  const bins = 20;
  const data = {
    splits,
    metrics: input.metrics,
    metricNames: RATE_METRICS,
    metricLabels: RATE_METRICS,
    latency: {
      edges: Array.from({ length: bins }, (_, i) => lo + ((hi - lo) * i) / bins),
      width: (hi - lo) / bins,
      counts: Object.fromEntries(MODES.map((m) => [m, histogram(input.rows.filter((r) => r.mode === m).map((r) => r.latency_ms), bins, lo, hi)])),
    },
    taxonomy: input.taxonomy.unconstrained.slice(0, 12),
  };
  const json = JSON.stringify(data).replace(/</g, '\\u003c');
  const maskShare = (mode: Mode) => {
    const rs = input.rows.filter((r) => r.mode === mode);
    if (rs.length === 0) return '–';
    const sorted = rs.map((r) => r.mask_share).sort((a, b) => a - b);
    return pct(sorted[Math.floor((sorted.length - 1) / 2)]);
  };
  const examples = pickExamples(input.rows, input.examples ?? 8);
  const shown = new Set(examples.map(([u]) => u.id));
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1">
<title>${esc(input.title ?? 'treewright evaluation')}</title>
<style>${STYLE}</style></head>
<body><main>
<h1>${esc(input.title ?? 'treewright evaluation')}</h1>
<div class="meta">${Object.entries(input.meta).map(([k, v]) => `<span>${esc(k)}: <b>${esc(v)}</b></span>`).join('')}<span>rows: <b>${input.rows.length}</b></span></div>

<h2>Validity and accuracy</h2>
<p class="note">Each rate with its 95% Wilson score interval (meaningful at 0% and 100% too: 20 of 20 gives [83.9% – 100%]).
The difference is constrained − unconstrained in percentage points on the items decoded in both modes, with a 95% paired
percentile-bootstrap interval (${BOOTSTRAP_RESAMPLES} resamples, fixed seed) and the number of items on which the modes differ;
with few such items the interval is too narrow, and with none there is no interval. McNemar p: exact two-sided test of
constrained against unconstrained on the same items.</p>
${splits.map((s) => `<div class="split">${splitTable(s, input.metrics[s])}<div class="chart"><canvas id="chart-rates-${esc(s)}" data-chart="rates" data-split="${esc(s)}"></canvas></div></div>`).join('\n')}

<h2>Latency</h2>
<p class="note">Wall-clock time per decoded item, all splits. Median share of that time spent computing token masks:
unconstrained <b>${maskShare('unconstrained')}</b>, constrained <b>${maskShare('constrained')}</b>.</p>
<div class="chart"><canvas id="chart-latency" data-chart="latency"></canvas></div>

<h2>Where unconstrained outputs first went wrong</h2>
<div class="grid">
<div>${taxonomyTable(input.taxonomy.unconstrained, 'unconstrained', shown)}
<h3 class="quiet" style="font-size:14px">constrained</h3>${taxonomyTable(input.taxonomy.constrained, 'constrained', shown)}</div>
<div class="chart" style="height:${Math.max(320, 80 + 48 * Math.min(12, input.taxonomy.unconstrained.length))}px"><canvas id="chart-taxonomy" data-chart="taxonomy"></canvas></div>
</div>

<h2>Examples</h2>
<p class="note">The model's token holding the first character the grammar does not allow is <mark>marked</mark>; <mark class="end">⟨end⟩</mark> marks an output that stopped before the program was complete.</p>
<div class="cards">
${examples.map(card).join('\n')}
</div>
</main>
<script type="application/json" id="tw-data">${json}</script>
<script>${libraryScript('chart.js', 'dist/chart.umd.min.js')}</script>
<script>${libraryScript('chartjs-chart-error-bars', 'build/index.umd.min.js')}</script>
<script>
(function () {
  var D = JSON.parse(document.getElementById('tw-data').textContent);
  var U = '#b5542d', C = '#1f6f78';
  Chart.register(ChartErrorBars.BarWithErrorBarsController, ChartErrorBars.BarWithErrorBar);
  Chart.defaults.font.family = 'system-ui, -apple-system, "Segoe UI", sans-serif';
  Chart.defaults.color = '#1d2327';
  Chart.defaults.animation = false;
  window.twCharts = [];
  // a long category as up to LINES lines of about WIDTH characters (Chart.js draws arrays as lines)
  function wrap(text, width, lines) {
    var out = [], cur = '';
    text.split(' ').forEach(function (w) {
      if (cur && (cur + ' ' + w).length > width) { out.push(cur); cur = w; } else { cur = cur ? cur + ' ' + w : w; }
    });
    if (cur) out.push(cur);
    if (out.length > lines) { out = out.slice(0, lines); out[lines - 1] += ' …'; }
    return out;
  }
  function pctData(split, mode) {
    return D.metricNames.map(function (m) {
      var r = D.metrics[split][mode][m];
      return r.rate === null ? { y: 0, yMin: 0, yMax: 0 } : { y: 100 * r.rate, yMin: 100 * r.ci_low, yMax: 100 * r.ci_high };
    });
  }
  D.splits.forEach(function (split) {
    var el = document.getElementById('chart-rates-' + split);
    window.twCharts.push(new Chart(el, {
      type: 'barWithErrorBars',
      data: { labels: D.metricLabels, datasets: [
        { label: 'unconstrained', data: pctData(split, 'unconstrained'), backgroundColor: U, errorBarColor: '#1d2327', errorBarWhiskerColor: '#1d2327' },
        { label: 'constrained', data: pctData(split, 'constrained'), backgroundColor: C, errorBarColor: '#1d2327', errorBarWhiskerColor: '#1d2327' }
      ] },
      options: { maintainAspectRatio: false, scales: { y: { min: 0, max: 100, title: { display: true, text: '% of items (95% Wilson interval)' } } },
        plugins: { title: { display: true, text: 'split ' + split } } }
    }));
  });
  var digits = D.latency.width >= 10 ? 0 : D.latency.width >= 1 ? 1 : 2;
  var edges = D.latency.edges.map(function (e) { return (e + D.latency.width / 2).toFixed(digits); });
  window.twCharts.push(new Chart(document.getElementById('chart-latency'), {
    type: 'bar',
    data: { labels: edges, datasets: [
      { label: 'unconstrained', data: D.latency.counts.unconstrained, backgroundColor: U },
      { label: 'constrained', data: D.latency.counts.constrained, backgroundColor: C }
    ] },
    options: { maintainAspectRatio: false, scales: { x: { title: { display: true, text: 'latency per item, ms (bin centre)' } }, y: { title: { display: true, text: 'items' }, beginAtZero: true } } }
  }));
  window.twCharts.push(new Chart(document.getElementById('chart-taxonomy'), {
    type: 'bar',
    data: { labels: D.taxonomy.map(function (t) { return wrap(t.category, 30, 3); }),
      datasets: [{ label: 'unconstrained failures', data: D.taxonomy.map(function (t) { return t.count; }), backgroundColor: U }] },
    options: { indexAxis: 'y', maintainAspectRatio: false, plugins: { legend: { display: false } }, scales: { x: { beginAtZero: true, title: { display: true, text: 'outputs' } } } }
  }));
  document.body.setAttribute('data-charts', String(window.twCharts.length));
})();
</script>
</body></html>
`;
}

/** Writes report.html from result rows (metrics and taxonomy computed by the caller). */
export function writeReport(path: string, input: ReportInput): void {
  writeFileSync(path, renderReport(input));
}
