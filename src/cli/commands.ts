/** The list of subcommands. Add a command: write src/cli/<name>.ts exporting `register`, list it here. */
import type { Command } from 'commander';
import { register as analyze } from './analyze.js';
import { register as calibrate } from './calibrate.js';
import { register as bag } from './bag.js';
import { register as checkConfig } from './check-config.js';
import { register as classify } from './classify.js';
import { register as compare } from './compare.js';
import { register as faults } from './faults.js';
import { register as merge } from './merge.js';
import { register as node } from './node.js';
import { register as replay } from './replay.js';
import { register as simulate } from './simulate.js';
import { register as sweep } from './sweep.js';

export type Register = (program: Command) => void;

export const COMMANDS: Register[] = [checkConfig, classify, analyze, bag, replay, simulate, compare, faults, node, sweep, merge, calibrate];
