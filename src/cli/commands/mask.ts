/**
 * `treewright mask --grammar G --tokenizer T [--prefix TEXT] [--names F|--db F] [--json]`: the
 * token mask after a text prefix. Prints whether the prefix is viable and complete, the number of
 * allowed token ids and a sample of allowed token strings; with `--json` one object
 * `{"viable", "complete", "allowed_count", "allowed_ids"}` (all ids, EOS included when complete).
 * Uses the mask cache (`--cache DIR`; `--no-cache`).
 * Exit 1 with a message on stderr for bad input (grammar, tokenizer, names, cache directory).
 */
import { byteFallbackIds } from '../../vocab/index.ts';
import { readFileSync } from 'node:fs';
import type { Command } from 'commander';
import { loadOrCompile } from '../../masks/index.ts';
import { runCommand, type RegisterCommand } from '../command.ts';
import { maskCacheDir, opt, withInputs } from '../options.ts';

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('mask')
    .description('print the tokens a model may emit after a text prefix (the token mask)')
    .addOption(opt.grammar())
    .addOption(opt.tokenizer())
    .option('--prefix <text>', 'text emitted so far', '')
    .addOption(opt.names())
    .addOption(opt.db())
    .addOption(opt.json('print {"viable", "complete", "allowed_count", "allowed_ids"} on stdout'))
    .addOption(opt.cache())
    .addOption(opt.noCache())
    .action((opts: { grammar: string; tokenizer: string; prefix: string; names?: string; db?: string; json?: boolean; cache?: string | false }) =>
      runCommand(setExit, () =>
        withInputs(opts, async ({ grammar, names }) => {
          const { engine, warning } = loadOrCompile(grammar, readFileSync(grammar.file, 'utf8'), opts.tokenizer, await maskCacheDir(opts.cache));
          if (warning) process.stderr.write(`warning: ${warning}\n`);
          const c = engine.bind(names ?? {});
          const state = c.advanceBytes(c.start(), new TextEncoder().encode(opts.prefix));
          const viable = c.viable(state);
          const complete = viable && c.isComplete(state);
          const mask = new Uint32Array((c.vocabSize + 31) >>> 5);
          if (viable) c.writeAllowed(state, Infinity, mask);
          const ids: number[] = [];
          for (let w = 0; w < mask.length; w++) {
            let bits = mask[w];
            while (bits !== 0) {
              const low = bits & -bits;
              ids.push((w << 5) + (31 - Math.clz32(low)));
              bits ^= low;
            }
          }
          if (opts.json) {
            process.stdout.write(JSON.stringify({ viable, complete, allowed_count: ids.length, allowed_ids: ids }) + '\n');
            return;
          }
          const v = engine.vocab;
          const lines = [
            `prefix:   ${JSON.stringify(opts.prefix)}`,
            `viable:   ${viable ? 'yes' : 'no — no program of ' + grammar.name + ' starts with this text'}`,
            `complete: ${complete ? 'yes (end of sequence allowed)' : 'no'}`,
            `allowed:  ${ids.length} of ${v.vocabSize} token ids`,
          ];
          if (ids.length > 0) {
            const step = Math.max(1, Math.floor(ids.length / 24));
            const sample: string[] = [];
            let byteIds: ReadonlySet<number> = new Set();
            try {
              byteIds = byteFallbackIds(JSON.parse(readFileSync(opts.tokenizer, 'utf8')), opts.tokenizer);
            } catch {
              // the tokenizer was read once already; byte tokens are then only not marked
            }
            for (let i = 0; i < ids.length && sample.length < 24; i += step) {
              const id = ids[i];
              // a byte-fallback token is shown as its piece (<0x61>), apart from the ordinary "a"
              const byte = byteIds.has(id) ? `<0x${v.byteAt(id, 0).toString(16).toUpperCase().padStart(2, '0')}>` : null;
              sample.push(`${id}:${v.eosIds.includes(id) ? '<end of sequence>' : (byte ?? JSON.stringify(v.text(id)))}`);
            }
            lines.push(`sample:   ${sample.join('  ')}`);
          }
          process.stdout.write(lines.join('\n') + '\n');
        }),
      ),
    );
};
