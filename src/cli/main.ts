/**
 * The `treewright` command line. Entry points only: every command lives in its own file under
 * commands/ and calls library code from the pipeline stages; no logic a library user would need
 * lives here.
 */
import { Command, CommanderError } from 'commander';
import { COMMANDS } from './commands/index.ts';

/** Runs the CLI with the given arguments (without `node` and the script); returns the exit code. */
export async function main(argv: readonly string[]): Promise<number> {
  const program = new Command();
  program
    .name('treewright')
    .description('Describe a language once; parse, print, sample it, and mask a model\'s tokens so every output is a valid program.')
    .exitOverride()
    .showHelpAfterError(false);
  let exitCode = 0;
  const setExit = (code: number) => {
    exitCode = code;
  };
  for (const register of COMMANDS) register(program, setExit);
  try {
    await program.parseAsync([...argv], { from: 'user' });
  } catch (err) {
    if (err instanceof CommanderError) {
      // help and version exit with code 0; usage errors have already been printed by commander
      return err.exitCode;
    }
    throw err;
  }
  return exitCode;
}
