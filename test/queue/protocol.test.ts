/**
 * What travels through Redis is untrusted: the --queue URL, job data and posted rows are checked
 * with located messages (JSON paths), sizes bounded. Fingerprints: hashes checked against
 * coreutils' sha256sum (an outside implementation of FIPS 180-4), and each part changes exactly
 * when its input does.
 */
import { describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { cpSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { EvalRow } from '../../src/eval/run.ts';
import { checkQueueName, decodingHash, fileHash, fingerprint, fingerprintKey, jobId, LIMITS, modelHash, namesHash, parseRedisUrl, readFormatRecord, readJobData, readRowPost, type Decoding, type JobData } from '../../src/queue/index.ts';

const H = (c: string) => c.repeat(64);
const fp = { model: H('a'), grammar: H('b'), names: H('c'), execution: H('d'), decoding: decodingHash({ beam: null, maxTokens: 16, prefix: null }) };
const decoding: Decoding = { beam: null, maxTokens: 16, prefix: null };
const item = { id: 'q1', split: 'test', question: 'which trees are old?', gold: '(count x (tree x))' };
const key = fingerprintKey(fp);
const id = jobId(key, item.id, 'constrained');
const job: JobData = { v: 1, fp, decoding, item, mode: 'constrained' };

const row: EvalRow = {
  id: 'q1', split: 'test', mode: 'constrained', question: item.question, gold: item.gold, text: '(count x (tree x))', tokens: 9,
  latency_ms: 12.5, model_ms: 10, mask_ms: 2, mask_share: 0.16, truncated: false, token_texts: null, valid: true, well_typed: true,
  executable: true, exact_match: true, execution_accuracy: true, failure: null, answer: { type: 'number', value: 3 }, gold_answer: { type: 'number', value: 3 }, gold_error: null,
};

describe('--queue URL and --queue-name', () => {
  it('accepts redis:// and rediss:// with host, port, database and credentials', () => {
    expect(parseRedisUrl('redis://127.0.0.1:6390')).toMatchObject({ host: '127.0.0.1', port: 6390, db: 0, tls: false, display: 'redis://127.0.0.1:6390' });
    expect(parseRedisUrl('redis://cache.coop.example/3')).toMatchObject({ host: 'cache.coop.example', port: 6379, db: 3 });
    const t = parseRedisUrl('rediss://orchard:s3cret@[::1]:7000/15');
    expect(t).toMatchObject({ host: '::1', port: 7000, db: 15, tls: true, username: 'orchard', password: 's3cret' });
    expect(t.display).toBe('rediss://orchard:***@[::1]:7000/15');
  });
  it('refuses anything else, saying what was expected and never showing the password', () => {
    const E = 'expected redis://HOST:PORT or redis://HOST:PORT/DB (rediss:// for TLS; USER:PASSWORD@ before HOST if the server wants them)';
    expect(() => parseRedisUrl('localhost:6379')).toThrow(`--queue: scheme "localhost" in localhost:6379; ${E}`);
    expect(() => parseRedisUrl('http://a:pw@h:1')).toThrow(`--queue: scheme "http" in http://a:***@h:1; ${E}`);
    expect(() => parseRedisUrl('not a url')).toThrow(`--queue: "not a url" is not a URL; ${E}`);
    expect(() => parseRedisUrl('redis://h:0')).toThrow('--queue: port 0 in redis://h:0; expected 1 to 65535');
    expect(() => parseRedisUrl('redis://h:6379/16')).toThrow('--queue: database "16" in redis://h:6379/16; expected a number from 0 to 15 after the port');
    expect(() => parseRedisUrl('redis://h:6379/x/y')).toThrow('database "x/y"');
    expect(() => parseRedisUrl('redis://u:pw@h:6379?db=2')).toThrow(`--queue: redis://u:***@h:6379?db=2 has a query or fragment; ${E}`);
    expect(() => parseRedisUrl(`redis://${'h'.repeat(2000)}`)).toThrow('--queue: the URL is 2008 characters long');
    expect(() => checkQueueName('orchard nightly')).toThrow('--queue-name: "orchard nightly"; expected 1 to 64 letters, digits, "_", "-" or "."');
    expect(() => checkQueueName('a:b')).toThrow('--queue-name');
    expect(checkQueueName('coop.nightly-2')).toBe('coop.nightly-2');
  });
});

describe('job data read from Redis', () => {
  it('reads a well-formed job', () => {
    expect(readJobData(id, JSON.parse(JSON.stringify(job)))).toEqual(job);
  });
  it('refuses bad jobs with the job id and a JSON path', () => {
    const bad = (patch: (j: Record<string, any>) => void) => {
      const j = JSON.parse(JSON.stringify(job)) as Record<string, any>;
      patch(j);
      return () => readJobData(id, j);
    };
    expect(() => readJobData(id, 'x')).toThrow(`job ${id}: $: expected an object, found "x"`);
    expect(bad((j) => (j.v = 2))).toThrow(`job ${id}: $.v: expected format version 1 (this treewright's), found 2`);
    expect(bad((j) => (j.mode = 'loose'))).toThrow(`job ${id}: $.mode: expected unconstrained or constrained, found "loose"`);
    expect(bad((j) => (j.item.question = 7))).toThrow(`job ${id}: $.item.question: expected a string of at most ${LIMITS.question} characters, found 7`);
    expect(bad((j) => (j.item.question = 'q'.repeat(LIMITS.question + 1)))).toThrow(`$.item.question: expected a string of at most ${LIMITS.question} characters`);
    expect(bad((j) => (j.item.gold = 'g'.repeat(LIMITS.jobBytes)))).toThrow(`job ${id}: $: expected at most ${LIMITS.jobBytes} bytes of JSON`);
    expect(bad((j) => (j.fp.model = 'zz'))).toThrow(`job ${id}: $.fp.model: expected a string of at most 64 characters matching ^[0-9a-f]{64}$, found "zz"`);
    expect(bad((j) => (j.decoding.beam = 0))).toThrow(`job ${id}: $.decoding.beam: expected an integer from 1 to 64, found 0`);
    expect(bad((j) => (j.decoding.prefix = 'to lf: '))).toThrow(`job ${id}: $.fp.decoding: expected the hash of $.decoding`);
    expect(bad((j) => (j.item.id = 'q2'))).toThrow(`job ${id}: $: expected data whose fingerprint, item id and mode give the job's id`);
  });
});

describe('rows posted by workers', () => {
  const want = { item, mode: 'constrained' as const, key };
  const post = (r: Record<string, unknown> = { ...row }) => ({ v: 1, key, worker: 'packhouse:41', row: r });
  it('reads a well-formed row', () => {
    expect(readRowPost(id, post(), want)).toEqual({ row, worker: 'packhouse:41' });
  });
  it('refuses a row that does not answer the job, or is not a row', () => {
    expect(() => readRowPost(id, post({ ...row, question: 'another question' }), want)).toThrow(`job ${id}: $.row.question: expected the item's question "which trees are old?", found "another question"`);
    expect(() => readRowPost(id, post({ ...row, mode: 'unconstrained' }), want)).toThrow(`job ${id}: $.row.mode: expected "constrained", found "unconstrained"`);
    expect(() => readRowPost(id, { ...post(), key: H('e') }, want)).toThrow(`job ${id}: $.key: expected this evaluation's fingerprint key ${key.slice(0, 12)}…`);
    expect(() => readRowPost(id, post({ ...row, valid: 'yes' }), want)).toThrow(`job ${id}: $.row.valid: expected true or false, found "yes"`);
    expect(() => readRowPost(id, post({ ...row, parses: true }), want)).toThrow(`job ${id}: $.row.parses: the old name of the measure "valid"`);
    expect(() => readRowPost(id, post({ ...row, tokens: -1 }), want)).toThrow(`job ${id}: $.row.tokens: expected an integer from 0 to`);
    expect(() => readRowPost(id, post({ ...row, token_texts: ['a', 3] }), want)).toThrow(`job ${id}: $.row.token_texts[1]: expected a string`);
    expect(() => readRowPost(id, post({ ...row, failure: { category: 'x', detail: 'y', offset: 'z' } }), want)).toThrow(`job ${id}: $.row.failure.offset: expected an integer`);
    expect(() => readRowPost(id, post({ ...row, answer: 'a'.repeat(LIMITS.rowBytes) }), want)).toThrow(`job ${id}: $: expected at most ${LIMITS.rowBytes} bytes of JSON`);
  });
});

describe('the format record', () => {
  it('tells a treewright queue of this format from anything else', () => {
    expect(readFormatRecord(null)).toBeNull();
    expect(readFormatRecord(JSON.stringify({ format: 'treewright-evaluation-queue', version: 1, fp, decoding, jobs: 4 }))).toEqual({ format: 'treewright-evaluation-queue', version: 1, fp, decoding, jobs: 4 });
    expect(readFormatRecord(JSON.stringify({ format: 'treewright-evaluation-queue', version: 2 }))).toEqual({ other: 'a treewright evaluation queue of format 2' });
    expect(readFormatRecord('{"jobs": 1}')).toEqual({ other: 'a record that is not a treewright evaluation queue' });
    expect(readFormatRecord('{')).toEqual({ other: 'a record that is not JSON' });
  });
});

describe('fingerprints', () => {
  it('hash file bytes as sha256sum does (coreutils)', () => {
    const file = 'grammars/lf/lf.twg';
    expect(fileHash(file)).toBe(execFileSync('sha256sum', [file], { encoding: 'utf8' }).split(' ')[0]);
  });
  it('change with the model files, the names and the decoding options, and only with them', () => {
    const dir = mkdtempSync(join(tmpdir(), 'tw-fp-'));
    try {
      cpSync('test/fixtures/tiny-seq2seq', join(dir, 'm'), { recursive: true });
      const before = modelHash(join(dir, 'm'));
      expect(modelHash('test/fixtures/tiny-seq2seq')).toBe(before);
      writeFileSync(join(dir, 'm', 'notes.txt'), 'not read by the loader');
      expect(modelHash(join(dir, 'm'))).toBe(before);
      writeFileSync(join(dir, 'm', 'tokenizer_config.json'), '{}');
      expect(modelHash(join(dir, 'm'))).not.toBe(before);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
    expect(namesHash({ Entity: ['a', 'b'], Rel: ['r'] })).toBe(namesHash({ Rel: ['r'], Entity: ['a', 'b'] }));
    expect(namesHash({ Entity: ['a', 'b'] })).not.toBe(namesHash({ Entity: ['a', 'c'] }));
    expect(decodingHash({ beam: null, maxTokens: null, prefix: null })).not.toBe(decodingHash({ beam: 1, maxTokens: null, prefix: null }));
    const a = fingerprint({ modelDir: 'test/fixtures/tiny-seq2seq', grammarFile: 'grammars/lf/lf.twg', names: {}, decoding });
    const b = fingerprint({ modelDir: 'test/fixtures/tiny-seq2seq', grammarFile: 'grammars/sql/sql.twg', names: {}, decoding });
    expect(Object.keys(a).filter((k) => a[k as keyof typeof a] !== b[k as keyof typeof b])).toEqual(['grammar']);
    expect(jobId(fingerprintKey(a), 'q1', 'constrained')).not.toBe(jobId(fingerprintKey(b), 'q1', 'constrained'));
    expect(jobId(fingerprintKey(a), 'q1', 'constrained')).not.toBe(jobId(fingerprintKey(a), 'q1', 'unconstrained'));
  });
});
