/**
 * The command registry: each command module exports `register(program)`.
 * Add one line here per command.
 */
import type { Command } from 'commander';
import type { CommandContext } from './common.js';
import { register as inspect } from './inspect.js';
import { register as merge } from './merge.js';
import { register as converge } from './converge.js';
import { register as viscosity } from './viscosity.js';
import { register as stokes } from './stokes.js';
import { register as report } from './report.js';

import { ANALYSES } from '../../analyses/index.js';
import { registerAnalysis } from './analysis.js';

/** Commands made from analysis descriptors (one per registered analysis). */
const ANALYSIS_COMMANDS = ANALYSES.map((d) => (program: Command, cc: CommandContext) => registerAnalysis(program, cc, d));

export const COMMANDS: Array<(program: Command, cc: CommandContext) => void> = [
  ...ANALYSIS_COMMANDS,
  inspect,
  merge,
  converge,
  viscosity,
  stokes,
  report,
];
