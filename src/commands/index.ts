/**
 * The command registry: each command module exports `register(program)`.
 * Add one line here per command.
 */
import type { Command } from 'commander';
import { register as inspect } from './inspect.js';
import { register as merge } from './merge.js';
import { register as converge } from './converge.js';

export const COMMANDS: Array<(program: Command) => void> = [
  inspect,
  merge,
  converge,
];
