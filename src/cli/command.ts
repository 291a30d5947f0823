/**
 * What every command file shares: the `register` signature, the error a command throws for bad
 * input, and the wrapper that turns errors into a message on stderr and exit code 1.
 *
 * Adding a command: write `commands/NAME.ts` exporting `register: RegisterCommand` (options from
 * ../options.ts, body inside `runCommand`), and add an entry (name, help term, summary, import) to `commands/index.ts`.
 */
import type { Command } from 'commander';

/** Adds one subcommand to the program. `setExit` records the process exit code. */
export type RegisterCommand = (program: Command, setExit: (code: number) => void) => void;

/** Bad input found by a command itself; the message is printed on stderr (exit 1). */
export class UsageError extends Error {
  override readonly name = 'UsageError';
}

/**
 * Runs a command body. Its result (a number) is the exit code, 0 when it returns nothing; an error
 * becomes its message on stderr (every stage's errors name the file, line and column or JSON path)
 * and exit code 1 — never a stack trace, unless the environment sets TREEWRIGHT_DEBUG=1 (for
 * reporting a bug). `label`, when given, starts the message (`treewright evaluate: …`).
 */
export async function runCommand(setExit: (code: number) => void, body: () => void | number | Promise<void | number>, label?: string): Promise<void> {
  try {
    const code = await body();
    setExit(typeof code === 'number' ? code : 0);
  } catch (e) {
    const err = e instanceof Error ? e : new Error(String(e));
    const text = process.env.TREEWRIGHT_DEBUG === '1' && err.stack ? err.stack : err.message;
    process.stderr.write(`${label === undefined ? '' : `${label}: `}${text}\n`);
    setExit(1);
  }
}
