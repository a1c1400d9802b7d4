/**
 * The command registry: each command module exports `register(program)`.
 * Add one line here per command.
 */
import type { Command } from 'commander';
import { register as inspect } from './inspect.js';
import { register as merge } from './merge.js';
import { register as converge } from './converge.js';
import { register as rdf } from './rdf.js';
import { register as shell } from './shell.js';
import { register as viscosity } from './viscosity.js';
import { register as stokes } from './stokes.js';
import { register as msd } from './msd.js';
import { register as vacf } from './vacf.js';
import { register as diffusion } from './diffusion.js';
import { register as conductivity } from './conductivity.js';
import { register as report } from './report.js';

export const COMMANDS: Array<(program: Command) => void> = [
  inspect,
  merge,
  converge,
  rdf,
  shell,
  viscosity,
  stokes,
  msd,
  vacf,
  diffusion,
  conductivity,
  report,
];
