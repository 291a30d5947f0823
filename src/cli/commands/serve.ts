/**
 * `treewright serve [--host 127.0.0.1] [--port 8080] [--model DIR]... [--grammar G]... [--db FILE]
 * [--names FILE]`: the JSON API under /api/ and the decoding playground at /, until SIGINT or
 * SIGTERM. Grammars default to the four shipped ones, models to models/coop when it holds an ONNX
 * export, the database to the demo cooperative (built from grammars/sql/coop.sql into a temporary
 * folder). Limits: --body-limit BYTES, --time-limit MS, --max-active N, --max-queued N, --exec-active N,
 * --exec-queued N, --compile-limit MS, --compile-workers N, --compile-memory MB. Executors: --bind-executor KIND=GRAMMAR, --checked-executors. Prints one
 * line `listening on http://HOST:PORT/` on stdout when ready; errors (naming the file) on stderr,
 * exit 1.
 */
import { Option, type Command } from 'commander';
import { runCommand, type RegisterCommand } from '../command.ts';
import { integer, opt } from '../options.ts';

interface Flags {
  host: string;
  port: number;
  model?: string[];
  grammar?: string[];
  db?: string;
  names?: string;
  threads?: number;
  bodyLimit?: number;
  timeLimit?: number;
  maxActive?: number;
  maxQueued?: number;
  bindExecutor?: string[];
  checkedExecutors?: boolean;
  execActive?: number;
  execQueued?: number;
  compileLimit?: number;
  compileWorkers?: number;
  compileMemory?: number;
}

export const register: RegisterCommand = (program: Command, setExit) => {
  program
    .command('serve')
    .description('serve the JSON API and the decoding playground page over HTTP')
    .option('--host <host>', 'address to bind', '127.0.0.1')
    .addOption(new Option('--port <port>', 'TCP port (0: any free port)').argParser(integer(0, 65535)).default(8080))
    .addOption(opt.model('repeatable'))
    .addOption(opt.grammar('repeatable'))
    .addOption(opt.db())
    .addOption(opt.names())
    .addOption(new Option('--threads <n>', 'onnxruntime threads per model session').argParser(integer(1)))
    .addOption(new Option('--body-limit <bytes>', 'largest request body (default 1048576)').argParser(integer(1)))
    .addOption(new Option('--time-limit <ms>', 'wall-clock limit of one decode request (default 30000)').argParser(integer(1)))
    .addOption(new Option('--max-active <n>', 'model requests running at once (default 2; executors have --exec-active)').argParser(integer(1)))
    .addOption(new Option('--max-queued <n>', 'requests waiting for a slot before answering 503 (default 64)').argParser(integer(0)))
    .addOption(new Option('--bind-executor <kind=grammar>', 'bind an executor (sql or lf) to a --grammar description, e.g. sql=my-sql.twg (repeatable; default: the shipped sql and lf descriptions)').argParser((v: string, prev: string[] | undefined) => [...(prev ?? []), v]))
    .option('--checked-executors', 'let descriptions checked through /api/check run with the executor of the startup grammar of the same name (default: they get none)')
    .addOption(new Option('--exec-active <n>', 'executor runs (SQL, LF) at once, apart from the model slots (default 2)').argParser(integer(1)))
    .addOption(new Option('--exec-queued <n>', 'executor runs waiting before answering 503 (default 16)').argParser(integer(0)))
    .addOption(new Option('--compile-limit <ms>', "time limit of one compile-worker job: a description checked, a program parsed, mask tables built (default 10000)").argParser(integer(1)))
    .addOption(new Option('--compile-workers <n>', 'worker threads doing every request\'s compile work (default 2)').argParser(integer(1, 64)))
    .addOption(new Option('--compile-memory <mb>', 'V8 heap limit of each compile worker in MB (default 512)').argParser(integer(64)))
    .action((f: Flags) =>
      runCommand(setExit, async () => {
        const { startServer } = await import('../../server/index.ts');
        let app;
        try {
          app = await startServer({
            host: f.host,
            port: f.port,
            models: f.model,
            grammars: f.grammar,
            db: f.db,
            names: f.names,
            threads: f.threads,
            bodyLimit: f.bodyLimit,
            timeLimitMs: f.timeLimit,
            maxActive: f.maxActive,
            maxQueued: f.maxQueued,
            executors: f.bindExecutor,
            checkedExecutors: f.checkedExecutors,
            execActive: f.execActive,
            execQueued: f.execQueued,
            checkTimeoutMs: f.compileLimit,
            compileWorkers: f.compileWorkers,
            compileMemoryMb: f.compileMemory,
          });
        } catch (e) {
          const err = e as NodeJS.ErrnoException;
          if (err.code === 'EADDRINUSE' || err.code === 'EACCES' || err.code === 'EADDRNOTAVAIL') {
            throw new Error(`--host ${f.host} --port ${f.port}: cannot listen there (${err.code}: ${err.message}); expected a free port on a local address (--port 0 picks one)`);
          }
          throw e;
        }
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
      }),
    );
};
