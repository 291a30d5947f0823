/**
 * The `treewright` command line. Entry points only: every command lives in its own file under
 * commands/ and calls library code from the pipeline stages; no logic a library user would need
 * lives here.
 *
 * Start-up: only the command named on the command line is imported (commands/index.ts); without
 * one (`--help`, no arguments, an unknown name) every command is listed from the registry's terms
 * and summaries, and nothing else is loaded.
 */
import { Command, CommanderError } from 'commander';
import { COMMANDS, type CommandEntry } from './commands/index.ts';

/** The registry entry of the command argv names (`help NAME` included), if any. */
function named(argv: readonly string[]): CommandEntry | undefined {
  const first = argv[0] === 'help' ? argv[1] : argv[0];
  return COMMANDS.find((c) => c.name === first);
}

/** The program with every command listed (name, term, summary) but none loaded: for the help text and unknown names. */
function listing(program: Command): void {
  const terms = new Map(COMMANDS.map((c) => [c.name, c.term]));
  const base = program.createHelp();
  program.configureHelp({ subcommandTerm: (cmd) => terms.get(cmd.name()) ?? base.subcommandTerm(cmd) });
  for (const c of COMMANDS) program.command(c.name).description(c.summary);
}

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
  const entry = named(argv);
  if (entry !== undefined) (await entry.load()).register(program, setExit);
  else listing(program);
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
