/** The list of subcommands. Add a command: write src/cli/<name>.ts exporting `register`, list it here. */
import type { Command } from 'commander';

export type Register = (program: Command) => void;

export const COMMANDS: Register[] = [];
