/**
 * `sojourn msd FILE`: mean-squared displacement and self-diffusion coefficient of each species
 * (or molecule kind), with the fit window, a segment uncertainty, the non-Gaussian parameter and
 * the optional Yeh–Hummer finite-size correction. Also the option helpers shared by the
 * `vacf`, `diffusion` and `conductivity` commands.
 */
import type { Command } from 'commander';
import {
  addGroupSums,
  finishMsd,
  msdPass,
  msdPlan,
  msdSums,
  planeComponents,
  requireFrameInterval,
  YEH_HUMMER_PLANE_ERROR,
  type GroupSums,
  type MsdOptions,
  type MsdPlan,
  type MsdResult,
} from '../../analyses/msd.js';
import { resolveLayout, speciesSpec, type LayoutSpec } from '../store/layout.js';
import type { SiteLayout, SpeciesLayoutOptions } from '../store/sites.js';
import type { StoreOptions, StorePartial } from '../store/store.js';
import { groupSitesInBatch, planSiteBatches, readStoreInBatches, type SiteBatchPlan } from './batching.js';
import type { PassContext } from '../types.js';
import type { TrajectoryRun } from './common.js';
import { addTrajectoryOptions, emit, runOnTrajectory, type TrajectoryOptions } from './common.js';
import { finishPasses } from '../runner.js';
import { parseQuantity } from '../units.js';
import { UsageError } from '../errors.js';
import { checkOutputFile, formatQuantity, formatSig, formatTable, toCsv, writeFileAtomic } from '../output.js';
import type { Quantity } from '../types.js';
import { CAUTION } from '../caution.js';
import { DEFAULT_PLATEAU_SPAN, DEFAULT_PLATEAU_TOLERANCE, DEFAULT_SEGMENTS, DEFAULT_SLOPE_TOLERANCE } from '../fit.js';

/** Options of the site choice (shared by msd, vacf, diffusion). */
export interface SiteCliOptions {
  select?: string;
  species?: string[];
  molecules?: boolean;
  plane?: string;
  keepDrift?: boolean;
}

/** Options of the fit windows (shared by msd, diffusion, conductivity). */
export interface WindowCliOptions {
  fitFrom?: string;
  fitTo?: string;
  slopeTolerance?: string;
  segments?: string;
}

/** Options of the plateau rule (shared by vacf, diffusion, conductivity). */
export interface PlateauCliOptions {
  plateauTolerance?: string;
  plateauSpan?: string;
  segments?: string;
}

/** Accumulate a repeatable option into an array. */
export function collect(value: string, previous: string[] = []): string[] {
  return [...previous, value];
}

/** Add --select, --species, --molecules, --plane and --keep-drift. */
export function addSiteOptions(cmd: Command, withPlane = true): Command {
  cmd
    .option('--select <sel>', 'atoms to analyse (selection syntax: "Na", "el=O&res=SOL", "idx=0-99"); default all')
    .option('--species <sel>', 'report this selection as one group (repeatable); default one group per atom label', collect)
    .option('--molecules', 'follow molecule (residue) centres of mass instead of atoms; groups by residue name')
    .option('--keep-drift', 'do not remove the centre-of-mass drift (removed by default, mass-weighted over all atoms)');
  if (withPlane) cmd.option('--plane <xy|xz|yz>', '2-D diffusion in a plane (d = 2) instead of 3-D');
  return cmd;
}

/** Add --fit-from, --fit-to, --slope-tolerance and --segments. */
export function addWindowOptions(cmd: Command): Command {
  return cmd
    .option('--fit-from <time>', 'start of the fit window, e.g. 20ps (with --fit-to; default: automatic)')
    .option('--fit-to <time>', 'end of the fit window, e.g. 200ps')
    .option('--slope-tolerance <x>', `automatic window: largest |d ln MSD/d ln t − 1| (default ${DEFAULT_SLOPE_TOLERANCE})`)
    .option('--segments <M>', `independent segments for the uncertainty (default ${DEFAULT_SEGMENTS})`);
}

/** Add --plateau-tolerance and --plateau-span (and --segments when not yet there). */
export function addPlateauOptions(cmd: Command, withSegments: boolean): Command {
  cmd
    .option('--plateau-tolerance <x>', `plateau: largest relative change of the running integral over the span (default ${DEFAULT_PLATEAU_TOLERANCE})`)
    .option('--plateau-span <f>', `plateau: span as a fraction of the lags a segment holds (default ${DEFAULT_PLATEAU_SPAN})`);
  if (withSegments) cmd.option('--segments <M>', `independent segments for the uncertainty (default ${DEFAULT_SEGMENTS})`);
  return cmd;
}

/** A number option in (lo, hi), or undefined. */
export function parseFraction(text: string | undefined, what: string, lo: number, hi: number): number | undefined {
  if (text === undefined) return undefined;
  const v = Number(text);
  if (!(v > lo && v < hi)) throw new UsageError(`${what} must be a number between ${lo} and ${hi} (exclusive), got "${text}"`);
  return v;
}

/** --segments as an integer ≥ 2, or undefined. */
export function parseSegments(text: string | undefined): number | undefined {
  if (text === undefined) return undefined;
  const v = Number(text);
  if (!(Number.isInteger(v) && v >= 2)) throw new UsageError(`--segments must be a whole number ≥ 2, got "${text}"`);
  return v;
}

/** The window options as analysis options (times in ps). */
export function windowOptions(o: WindowCliOptions): { fitFrom?: number; fitTo?: number; tolerance?: number; segments?: number } {
  if ((o.fitFrom === undefined) !== (o.fitTo === undefined)) throw new UsageError('give both --fit-from and --fit-to, or neither');
  const fitFrom = o.fitFrom !== undefined ? parseQuantity(o.fitFrom, 'time', '--fit-from') : undefined;
  const fitTo = o.fitTo !== undefined ? parseQuantity(o.fitTo, 'time', '--fit-to') : undefined;
  if (fitFrom !== undefined && !(fitFrom >= 0)) throw new UsageError('--fit-from must not be negative');
  return { fitFrom, fitTo, tolerance: parseFraction(o.slopeTolerance, '--slope-tolerance', 0, 1), segments: parseSegments(o.segments) };
}

/** The plateau options as analysis options. */
export function plateauOptions(o: PlateauCliOptions): { plateauTolerance?: number; plateauSpan?: number; segments?: number } {
  return {
    plateauTolerance: parseFraction(o.plateauTolerance, '--plateau-tolerance', 0, 1),
    plateauSpan: parseFraction(o.plateauSpan, '--plateau-span', 0, 0.5),
    segments: parseSegments(o.segments),
  };
}

/** The site options as layout options. */
export function siteOptions(o: SiteCliOptions): SpeciesLayoutOptions & { keepDrift?: boolean; plane?: string } {
  return { selection: o.select, species: o.species, molecules: o.molecules, keepDrift: o.keepDrift, plane: o.plane };
}

/** D in the table unit 10⁻⁹ m²/s. */
export const dTable = (q: Quantity | null) => formatQuantity(q, 1e9, '');

/** Add --max-memory (the commands that store whole time series). */
export function addMemoryOption(cmd: Command): Command {
  return cmd.option(
    '--max-memory <size>',
    'largest memory for stored coordinates, e.g. 512MB or 2GB; beyond it the atoms are processed in batches, one read of the file each',
  );
}

/** The MSD of a run whose sites did not fit in memory at once: one read per batch of sites. */
export async function batchedMsd(
  file: string,
  opts: TrajectoryOptions,
  plan: SiteBatchPlan,
  layoutSpec: LayoutSpec,
  removeDrift: boolean,
  mo: MsdOptions,
  warnings: string[],
  firstRead: Partial<StoreOptions> = {},
): Promise<{ result: MsdResult; run: TrajectoryRun; store: StorePartial; layout: SiteLayout; ctx: PassContext }> {
  let sums: GroupSums[] | null = null;
  let mplan: MsdPlan | null = null;
  // readStoreInBatches keeps no read's coordinates past its callback, so one batch is held at a
  // time, and counts long unwrapping steps once when every read unwraps the same atoms.
  const r = await readStoreInBatches(
    file,
    opts,
    plan,
    (_batch, i) => ({ layout: layoutSpec, removeDrift, keepVelocities: false, ...(i === 0 ? firstRead : {}) }),
    warnings,
    (store, batch, run) => {
      const layout = resolveLayout(layoutSpec, run.ctx.topology);
      mplan ??= msdPlan(store.frames, requireFrameInterval(run.ctx), mo, true);
      const part = msdSums(store, layout, mplan, planeComponents(mo.plane), groupSitesInBatch(layout, batch));
      sums = sums ? sums.map((s, i) => addGroupSums(s, part[i]!)) : part;
    },
  );
  const layout = resolveLayout(layoutSpec, r.ctx.topology);
  const result = finishMsd(sums!, mplan!, r.info, layout, r.ctx, mo, { reads: r.reads, bytesHeld: r.bytesHeld, note: r.note });
  return { result, run: r.first, store: r.info, layout, ctx: r.ctx };
}

interface MsdCliOptions extends TrajectoryOptions, SiteCliOptions, WindowCliOptions {
  maxMemory?: string;
  viscosity?: string;
  temperature?: string;
  alpha2?: boolean;
  csv?: string;
}

/** Human-readable report of an MSD result. */
export function renderMsd(file: string, r: MsdResult): string {
  const out: string[] = [];
  out.push(`${file}: mean-squared displacement, ${r.frames} frames every ${formatSig(r.frameInterval, 6)} ps, d = ${r.dimensions}${r.plane ? ` (plane ${r.plane})` : ''}${r.molecules ? ', molecule centres of mass' : ''}`);
  const headers = ['group', 'sites', 'D (10⁻⁹ m²/s)', ...(r.yehHummer ? ['D∞ (10⁻⁹ m²/s)'] : []), 'fit window (ps)', 'segments', 'status'];
  const rows = r.groups.map((g) => [
    g.label,
    String(g.count),
    dTable(g.diffusion),
    ...(r.yehHummer ? [dTable(g.diffusionCorrected)] : []),
    `${formatSig(g.fit.from, 4)}–${formatSig(g.fit.to, 4)}${g.fit.automatic ? '' : ' (user)'}`,
    g.segments > 0 ? String(g.segments) : '—',
    g.converged ? 'ok' : 'NOT CONVERGED',
  ]);
  out.push(formatTable(headers, rows));
  out.push('');
  out.push(`uncertainty: ${r.rules.uncertainty}`);
  out.push(`fit window: ${r.rules.window}`);
  out.push(`drift: ${r.driftNote}`);
  if (r.yehHummer) out.push(`Yeh–Hummer: ΔD = ${formatSig(r.yehHummer.correction.value * 1e9, 4)}×10⁻⁹ m²/s; ${r.yehHummer.note}`);
  out.push(r.memoryNote ? `memory: ${r.memoryNote}` : `memory: ${formatSig(r.bytesHeld / 2 ** 20, 4)} MiB of coordinates held`);
  for (const g of r.groups) {
    const defined = g.nonGaussian.filter((x) => Number.isFinite(x.value));
    if (defined.length) {
      const peak = defined.reduce((a, b) => (b.value > a.value ? b : a));
      out.push(`${g.label}: non-Gaussian parameter α2 peaks at ${formatSig(peak.value, 3)} near ${formatSig(peak.time, 4)} ps`);
    } else if (g.nonGaussian.length) {
      out.push(`${g.label}: non-Gaussian parameter α2 undefined: the atoms did not move (MSD = 0)`);
    }
    for (const n of g.notes) out.push(`${g.label}: ${n}`);
  }
  out.push('');
  out.push(CAUTION);
  return out.join('\n');
}

/** CSV of the MSD curves: time and, per group, total and x, y, z MSD (Å²). */
export function msdCsv(r: MsdResult): string {
  const names = ['time_ps'];
  const cols: ArrayLike<number>[] = [r.groups[0]?.time ?? []];
  for (const g of r.groups) {
    names.push(`${g.label}_msd_A2`, `${g.label}_x_A2`, `${g.label}_y_A2`, `${g.label}_z_A2`);
    cols.push(g.msd, ...g.msdXYZ);
  }
  return toCsv(names.map((n) => n.replace(/[,\s]+/g, '_')), cols);
}

/** MSD analysis options from the command line. */
export function msdOptionsFrom(opts: MsdCliOptions): MsdOptions {
  const viscosity = opts.viscosity !== undefined ? parseQuantity(opts.viscosity, 'viscosity', '--viscosity') : undefined;
  const temperature = opts.temperature !== undefined ? parseQuantity(opts.temperature, 'temperature', '--temperature', 'K') : undefined;
  if ((viscosity === undefined) !== (temperature === undefined)) {
    throw new UsageError('the Yeh–Hummer correction needs both --viscosity and --temperature');
  }
  if (viscosity !== undefined && !(viscosity > 0)) throw new UsageError('--viscosity must be positive');
  if (temperature !== undefined && !(temperature > 0)) throw new UsageError('--temperature must be positive');
  if (viscosity !== undefined && opts.plane !== undefined) throw new UsageError(YEH_HUMMER_PLANE_ERROR);
  return { ...windowOptions(opts), plane: opts.plane, viscosity, temperature, nonGaussian: opts.alpha2 !== false };
}

/** Register the command on the program (src/commands/index.ts). */
export function register(program: Command): void {
  const cmd = program
    .command('msd <file>')
    .description('mean-squared displacement and self-diffusion coefficient per species, with fit window and uncertainty');
  addSiteOptions(cmd);
  addWindowOptions(cmd);
  addMemoryOption(cmd);
  cmd
    .option('--viscosity <eta>', 'solvent viscosity for the Yeh–Hummer finite-size correction, e.g. 0.89mPa.s (with --temperature)')
    .option('--temperature <T>', 'temperature for the Yeh–Hummer correction, e.g. 300K')
    .option('--no-alpha2', 'skip the non-Gaussian parameter')
    .option('--csv <file>', 'write the MSD curves to this CSV file');
  addTrajectoryOptions(cmd).action(async (file: string, opts: MsdCliOptions) => {
    const warnings: string[] = [];
    const mo = msdOptionsFrom(opts);
    if (opts.csv) checkOutputFile(opts.csv, [file], '--csv');
    const so = siteOptions(opts);
    const layoutSpec = speciesSpec(so);
    const plan = await planSiteBatches(file, opts, layoutSpec, 24);
    let results: MsdResult;
    let run: TrajectoryRun;
    if (plan) {
      ({ result: results, run } = await batchedMsd(file, opts, plan, layoutSpec, !so.keepDrift, mo, warnings));
    } else {
      const pass = msdPass({ ...so, ...mo });
      run = await runOnTrajectory(file, opts, [pass], warnings);
      results = finishPasses([pass], run.partials, run.ctx).msd as MsdResult;
    }
    if (opts.csv) await writeFileAtomic(opts.csv, msdCsv(results));
    emit('msd', opts, [run.input], { ...opts }, results, warnings, () => renderMsd(file, results));
  });
}
