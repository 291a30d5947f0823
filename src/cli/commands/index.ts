/**
 * The command registry. Each command file exports `register: RegisterCommand` (../command.ts);
 * add a line here to make it part of the CLI. Shared options come from ../options.ts.
 */
import type { RegisterCommand } from '../command.ts';
import { register as bench } from './bench.ts';
import { register as check } from './check.ts';
import { register as evaluate } from './evaluate.ts';
import { register as fromSchema } from './from-schema.ts';
import { register as demo } from './demo.ts';
import { register as generate } from './generate.ts';
import { register as mask } from './mask.ts';
import { register as parse } from './parse.ts';
import { register as print } from './print.ts';
import { register as sample } from './sample.ts';
import { register as schema } from './schema.ts';
import { register as serve } from './serve.ts';
import { register as worker } from './worker.ts';

export const COMMANDS: RegisterCommand[] = [
  bench,
  check,
  evaluate,
  demo,
  fromSchema,
  generate,
  mask,
  parse,
  print,
  sample,
  schema,
  serve,
  worker,
];
