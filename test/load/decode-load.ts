/**
 * Load script (not a unit test): starts `treewright serve` as a second process on 127.0.0.1 and
 * sends POST /api/decode requests from this process at a fixed concurrency, then reports
 * latency percentiles, errors by HTTP status and the server's resident memory (VmRSS from
 * /proc/PID/status) before, during and after.
 *
 *   npx tsx test/load/decode-load.ts [--requests 2000] [--concurrency 32] [--max-seconds 900]
 *                                      [--model DIR] [--max-tokens 64] [--json FILE]
 *
 * The model defaults to the demo model models/coop when it holds an ONNX export, else the test
 * fixture test/fixtures/tiny-seq2seq (the report says which). Questions are invented, about the
 * cooperative, half for the lf grammar and half for sql, one in eight decoded without the grammar.
 * Bounded: stops sending after --requests or --max-seconds, whichever comes first.
 */
import { spawn } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { parseArgs } from 'node:util';

const { values: args } = parseArgs({
  options: {
    requests: { type: 'string', default: '2000' },
    concurrency: { type: 'string', default: '32' },
    'max-seconds': { type: 'string', default: '900' },
    model: { type: 'string' },
    'max-tokens': { type: 'string', default: '64' },
    json: { type: 'string' },
  },
});
const count = Number(args.requests);
const concurrency = Number(args.concurrency);
const maxSeconds = Number(args['max-seconds']);
const maxTokens = Number(args['max-tokens']);
for (const [k, v] of [['requests', count], ['concurrency', concurrency], ['max-seconds', maxSeconds], ['max-tokens', maxTokens]] as const) {
  if (!Number.isInteger(v) || v < 1) throw new Error(`--${k}: found ${JSON.stringify(args[k as keyof typeof args])}; expected a positive integer`);
}
const demo = resolve('models/coop');
const modelDir = args.model ?? (existsSync(resolve(demo, 'onnx')) && existsSync(resolve(demo, 'config.json')) ? demo : resolve('test/fixtures/tiny-seq2seq'));
const modelKind = args.model !== undefined ? 'given with --model' : modelDir === demo ? 'the demo model' : 'the fixture model (models/coop/ has no ONNX export yet)';

const SUBJECTS = ['orchards', 'growers', 'sheds', 'lots', 'varieties', 'orchards above 300 m', 'growers in oakmere', 'lots of conference pears'];
const FORMS = ['which {} are there?', 'how many {} are there?', 'list the {} that grow elstar', 'what is the largest of the {}?', 'are there any {} picked in september?', 'name the {} owned by mara feldwick'];
const QUESTIONS = SUBJECTS.flatMap((s) => FORMS.map((f) => f.replace('{}', s)));

function rssKb(pid: number): number {
  const m = /VmRSS:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
  if (!m) throw new Error(`/proc/${pid}/status: no VmRSS line`);
  return Number(m[1]);
}

function quantile(sorted: number[], q: number): number {
  // nearest-rank percentile (common practice, no source)
  if (sorted.length === 0) return NaN;
  return sorted[Math.min(sorted.length - 1, Math.max(0, Math.ceil(q * sorted.length) - 1))];
}

const server = spawn(process.execPath, ['src/cli/treewright.mjs', 'serve', '--host', '127.0.0.1', '--port', '0', '--model', modelDir, '--grammar', 'lf', '--grammar', 'sql'], { stdio: ['ignore', 'pipe', 'pipe'] });
let serverErr = '';
server.stderr.on('data', (d: Buffer) => {
  if (serverErr.length < 10_000) serverErr += d;
});
const base = await new Promise<string>((resolvePromise, reject) => {
  let out = '';
  server.stdout.on('data', (d: Buffer) => {
    out += d;
    const m = /listening on (http:\/\/\S+)\n/.exec(out);
    if (m) resolvePromise(m[1]);
  });
  server.on('exit', (code) => reject(new Error(`the server exited (${code}) before listening: ${serverErr}`)));
});
const pid = server.pid!;
const modelId = ((await (await fetch(`${base}api/models`)).json()) as { models: { id: string }[] }).models[0].id;

const body = (i: number) => ({
  question: QUESTIONS[i % QUESTIONS.length],
  grammar: i % 2 === 0 ? 'lf' : 'sql',
  model: modelId,
  constrained: i % 8 !== 7,
  max_tokens: maxTokens,
});

async function one(i: number): Promise<{ ms: number; status: number; decodeMs: number | null; wellTyped: boolean }> {
  const t0 = performance.now();
  try {
    const res = await fetch(`${base}api/decode`, { method: 'POST', headers: { 'content-type': 'application/json' }, body: JSON.stringify(body(i)) });
    const json = (await res.json()) as { total_ms?: number; well_typed?: boolean };
    return { ms: performance.now() - t0, status: res.status, decodeMs: json.total_ms ?? null, wellTyped: json.well_typed === true };
  } catch {
    return { ms: performance.now() - t0, status: 0, decodeMs: null, wellTyped: false }; // connection-level failure
  }
}

// warm-up: compile both grammars' masks for the model's vocabulary before measuring
for (let i = 0; i < 4; i++) await one(i);
const rssBefore = rssKb(pid);
const samples: number[] = [];
const sampler = setInterval(() => samples.push(rssKb(pid)), 1000);

const latencies: number[] = [];
const byStatus = new Map<number, number>();
let next = 0;
let wellTyped = 0;
const decodeMs: number[] = [];
const t0 = performance.now();
const deadline = Date.now() + maxSeconds * 1000;
let rssQuarter = 0;
await Promise.all(
  Array.from({ length: concurrency }, async () => {
    for (;;) {
      const i = next++;
      if (i >= count || Date.now() > deadline) return;
      const r = await one(i);
      latencies.push(r.ms);
      byStatus.set(r.status, (byStatus.get(r.status) ?? 0) + 1);
      if (r.decodeMs !== null) decodeMs.push(r.decodeMs);
      if (r.wellTyped) wellTyped++;
      if (latencies.length === Math.floor(count / 4)) rssQuarter = rssKb(pid);
    }
  }),
);
const wall = (performance.now() - t0) / 1000;
clearInterval(sampler);
const rssAfter = rssKb(pid);
server.kill('SIGTERM');
await new Promise((r) => server.on('exit', r));

latencies.sort((a, b) => a - b);
decodeMs.sort((a, b) => a - b);
const errors = [...byStatus].filter(([s]) => s !== 200).reduce((n, [, c]) => n + c, 0);
const report = {
  model: modelDir,
  model_kind: modelKind,
  requests: latencies.length,
  planned: count,
  concurrency,
  max_tokens: maxTokens,
  wall_s: Number(wall.toFixed(1)),
  throughput_rps: Number((latencies.length / wall).toFixed(2)),
  p50_ms: Number(quantile(latencies, 0.5).toFixed(1)),
  p99_ms: Number(quantile(latencies, 0.99).toFixed(1)),
  max_ms: Number(latencies[latencies.length - 1].toFixed(1)),
  decode_p50_ms: Number(quantile(decodeMs, 0.5).toFixed(1)),
  decode_p99_ms: Number(quantile(decodeMs, 0.99).toFixed(1)),
  well_typed: wellTyped,
  errors,
  by_status: Object.fromEntries([...byStatus].sort((a, b) => a[0] - b[0])),
  rss_kb: { before: rssBefore, after_quarter: rssQuarter, after: rssAfter, peak: Math.max(rssBefore, rssAfter, ...samples) },
  machine: `node ${process.version}, ${(await import('node:os')).cpus().length} cores (shared)`,
};
const mb = (kb: number) => `${(kb / 1024).toFixed(1)} MB`;
process.stdout.write(
  `model        ${report.model} (${report.model_kind})\n` +
    `requests     ${report.requests} of ${count} planned, concurrency ${concurrency}, max_tokens ${maxTokens}, ${report.wall_s} s (${report.throughput_rps} req/s)\n` +
    `latency      p50 ${report.p50_ms} ms · p99 ${report.p99_ms} ms · max ${report.max_ms} ms\n` +
    `decode       p50 ${report.decode_p50_ms} ms · p99 ${report.decode_p99_ms} ms (server-side total_ms of one decode; the rest of the latency is waiting for a slot)\n` +
    `well-typed   ${wellTyped} of ${report.requests} outputs (one in eight requests is unconstrained)\n` +
    `statuses     ${Object.entries(report.by_status).map(([s, c]) => `${s}: ${c}`).join(', ')} (errors: ${errors})\n` +
    `server RSS   before ${mb(rssBefore)} · after 1/4 ${mb(rssQuarter)} · after ${mb(rssAfter)} · peak ${mb(report.rss_kb.peak)}\n`,
);
if (args.json !== undefined) writeFileSync(args.json, JSON.stringify(report, null, 2) + '\n');
process.exitCode = errors === 0 && latencies.length === count ? 0 : 1;
