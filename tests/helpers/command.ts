import { Command, CommanderError } from 'commander';
import type { CommandIo } from '../../src/commands/io.js';
import { StopError } from '../../src/errors.js';

export interface CommandRun {
  code?: number;
  stdout: string;
  stderr: string;
  /** A StopError or CommanderError the command threw (cli.ts turns these into exit 2). */
  error?: StopError | CommanderError;
}

/**
 * Run one subcommand in process, as `phasebook <argv…>`, with its output captured:
 * `register` is the command's registerXxxCommand. Any other error is thrown.
 */
export async function runCommand(register: (program: Command, io: CommandIo) => unknown, argv: readonly string[]): Promise<CommandRun> {
  const out: CommandRun = { stdout: '', stderr: '' };
  const program = new Command('phasebook')
    .exitOverride()
    .configureOutput({ writeOut: (s) => void (out.stdout += s), writeErr: (s) => void (out.stderr += s) });
  register(program, { exit: (c) => (out.code = c), stdout: (s) => void (out.stdout += s), stderr: (s) => void (out.stderr += s) });
  try {
    await program.parseAsync(['node', 'phasebook', ...argv]);
  } catch (error) {
    if (error instanceof StopError || error instanceof CommanderError) return { ...out, error };
    throw error;
  }
  return out;
}
