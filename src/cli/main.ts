#!/usr/bin/env node
/**
 * The `antiphon` command. One file per subcommand under src/cli/; each exports
 * `register(program)` and does argument parsing only, then calls into the library.
 */
import { Command, CommanderError } from 'commander';
import { EXIT_BAD_INPUT } from '../util/errors.js';
import { COMMANDS } from './commands.js';

export function buildProgram(): Command {
  const program = new Command('antiphon')
    .description('Speaker/listener role arbitration for dual-arm carrying: filter, infer, recommend, hold.')
    .version('0.1.0')
    .showHelpAfterError()
    .exitOverride();
  for (const register of COMMANDS) register(program);
  return program;
}

async function main(): Promise<void> {
  const program = buildProgram();
  try {
    await program.parseAsync(process.argv);
  } catch (err) {
    if (err instanceof CommanderError) {
      // --help and --version end here with exit code 0; usage errors with 2 (bad input).
      process.exitCode = err.exitCode === 0 ? 0 : EXIT_BAD_INPUT;
      return;
    }
    throw err;
  }
}

await main();
