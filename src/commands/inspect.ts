/** `sojourn inspect FILE`: what a trajectory holds. */
import { makePass } from '../../analyses/index.js';
import type { OverviewPartial } from '../../analyses/overview.js';
import type { CommandContext } from './common.js';
import type { Command } from 'commander';
import { overviewPass, type OverviewResult } from '../../analyses/overview.js';
import { addTrajectoryOptions, emit, runOnTrajectory, type TrajectoryOptions } from './common.js';
import { formatSig, formatTable, type InputRecord } from '../output.js';

/** Per label: ["mass of Sv", "18 g/mol, element S (--masses)"]. */
export function massRows(r: OverviewResult): string[][] {
  return r.atomKinds.map((k) => [
    `mass of ${k.label}`,
    `${k.mass !== null ? `${formatSig(k.mass, 6)} g/mol` : 'unknown'} (${k.from}); element ${k.element === 'X' ? 'none' : k.element}${k.elementFrom !== k.from ? ` (${k.elementFrom})` : ''}`,
  ]);
}

/** Human-readable text of an overview; `input` adds the units the file was read in. */
export function renderOverview(file: string, r: OverviewResult, input?: InputRecord): string {
  const rows: string[][] = [
    ['frames', String(r.frames)],
    ['atoms', String(r.atoms)],
    ['species', Object.entries(r.species).map(([k, v]) => `${k} ${v}`).join(', ')],
    ['cell lengths', r.cell ? r.cell.lengths.map((x) => formatSig(x, 6)).join(' × ') + ' Å' : 'none'],
    ['cell angles', r.cell ? r.cell.angles.map((x) => formatSig(x, 5)).join(', ') + ' °' : '—'],
    ['cell volume', r.cell ? `${formatSig(r.cell.volume, 6)} Å³` : '—'],
    ['cell varies', r.cellVaries ? `yes (mean volume ${formatSig(r.meanVolume!.value, 6)} Å³, sd ${formatSig(r.meanVolume!.uncertainty ?? 0, 3)})` : 'no'],
    ['velocities', r.hasVelocities ? 'yes' : 'no'],
    ['time span', r.timeSpan ? `${formatSig(r.timeSpan.value, 6)} ps` : 'unknown (no times in file)'],
    ['frame interval', r.frameInterval ? `${formatSig(r.frameInterval.value, 6)} ps` : 'unknown'],
    ['number density', r.numberDensity ? `${formatSig(r.numberDensity.value, 5)} Å⁻³` : '—'],
    ['mass density', r.massDensity ? `${formatSig(r.massDensity.value, 5)} g/cm³` : '—'],
    ['kinetic temperature', r.kineticTemperature ? `${formatSig(r.kineticTemperature.value, 4)} K (equipartition, 3 per atom)` : '—'],
  ];
  for (const [what, u] of Object.entries(input?.fileUnits ?? {})) rows.push([`${what} read in`, `${u.unit.replace(/^A/, 'Å')} (${u.from})`]);
  rows.push(...massRows(r));
  return `${file}\n${formatTable(['property', 'value'], rows)}`;
}

export function register(program: Command, cc: CommandContext): void {
  const cmd = program.command('inspect <file>').description('report what a trajectory holds: frames, atoms, species, cell, densities');
  addTrajectoryOptions(cmd).action(async (file: string, opts: TrajectoryOptions) => {
    const warnings: string[] = [];
    const pass = makePass<typeof overviewPass>('overview');
    const run = await runOnTrajectory(file, opts, [pass], warnings, cc);
    const results = pass.finish(run.partials[0] as OverviewPartial, run.ctx);
    emit('inspect', opts, [run.input], { ...opts }, results, warnings, () => renderOverview(file, results, run.input));
  });
}
