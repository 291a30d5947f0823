/**
 * `treewright serve [--host 127.0.0.1] [--port 8080] [--model DIR]... [--grammar G]... [--db FILE]
 * [--names FILE]`: the JSON API under /api/ and the decoding playground at /, until SIGINT or
 * SIGTERM. Grammars default to the four shipped ones, models to models/coop when it holds an ONNX
 * export, the database to the demo cooperative (built from grammars/sql/coop.sql into a temporary
 * folder). Limits: --body-limit BYTES, --time-limit MS, --max-active N, --max-queued N. Prints one
 * line `listening on http://HOST:PORT/` on stdout when ready; errors (naming the file) on stderr,
 * exit 1.
 */
import type { Command } from 'commander';
import type { RegisterCommand } from './index.ts';

interface Flags {
  host: string;
  port: string;
  model?: string[];
  grammar?: string[];
  db?: string;
  names?: string;
  threads?: string;
  bodyLimit?: string;
  timeLimit?: string;
  maxActive?: string;
  maxQueued?: string;
}

function int(flag: string, value: string | undefined, min: number): number | undefined {
  if (value === undefined) return undefined;
  const n = Number(value);
  if (value.trim() === '' || !Number.isInteger(n) || n < min) throw new Error(`--${flag}: found ${JSON.stringify(value)}; expected an integer ≥ ${min}`);
  return n;
}

const collect = (v: string, all: string[] | undefined) => [...(all ?? []), v];

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('serve')
    .description('serve the JSON API and the decoding playground page over HTTP')
    .option('--host <host>', 'address to bind', '127.0.0.1')
    .option('--port <port>', 'TCP port (0: any free port)', '8080')
    .option('--model <dir>', 'model folder (repeatable; default models/coop when present)', collect)
    .option('--grammar <g>', 'grammar: .twg path or shipped name (repeatable; default sql, lf, arith, json)', collect)
    .option('--db <file>', 'SQLite database for SQL, the LF fact base and names (default: the demo cooperative)')
    .option('--names <file>', 'JSON bindings of open name sets, merged over the defaults')
    .option('--threads <n>', 'onnxruntime threads per model session')
    .option('--body-limit <bytes>', 'largest request body (default 1048576)')
    .option('--time-limit <ms>', 'wall-clock limit of one decode request (default 30000)')
    .option('--max-active <n>', 'model and executor requests running at once (default 2)')
    .option('--max-queued <n>', 'requests waiting for a slot before answering 503 (default 64)')
    .action(async (f: Flags) => {
      try {
        const { startServer } = await import('../../server/index.ts');
        const app = await startServer({
          host: f.host,
          port: int('port', f.port, 0),
          models: f.model,
          grammars: f.grammar,
          db: f.db,
          names: f.names,
          threads: int('threads', f.threads, 1),
          bodyLimit: int('body-limit', f.bodyLimit, 1),
          timeLimitMs: int('time-limit', f.timeLimit, 1),
          maxActive: int('max-active', f.maxActive, 1),
          maxQueued: int('max-queued', f.maxQueued, 0),
        });
        const addr = app.server.address();
        const where = typeof addr === 'object' && addr !== null ? `http://${addr.family === 'IPv6' ? `[${addr.address}]` : addr.address}:${addr.port}/` : String(addr);
        process.stdout.write(`listening on ${where}\n`);
        await new Promise<void>((resolve) => {
          const stop = () => {
            process.off('SIGINT', stop);
            process.off('SIGTERM', stop);
            void app.close().then(resolve, resolve);
          };
          process.on('SIGINT', stop);
          process.on('SIGTERM', stop);
        });
        setExit(0);
      } catch (e) {
        const err = e as NodeJS.ErrnoException;
        if (err.code === 'EADDRINUSE' || err.code === 'EACCES' || err.code === 'EADDRNOTAVAIL') {
          process.stderr.write(`--host ${f.host} --port ${f.port}: cannot listen there (${err.code}: ${err.message}); expected a free port on a local address (--port 0 picks one)\n`);
        } else process.stderr.write(`${err.message}\n`);
        setExit(1);
      }
    });
};
