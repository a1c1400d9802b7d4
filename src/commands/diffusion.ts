/**
 * `sojourn diffusion FILE`: the self-diffusion coefficient of each species two ways from one
 * read of the trajectory — the MSD slope (Einstein) and the VACF plateau (Green–Kubo) — side by
 * side, flagged when they disagree by more than DISAGREEMENT_FACTOR combined standard errors.
 */
import type { Command } from 'commander';
import {
  addGroupSums,
  analyseMsd,
  finishMsd,
  msdPlan,
  msdSums,
  planeComponents,
  requireFrameInterval,
  type GroupSums,
  type MsdOptions,
  type MsdPlan,
  type MsdResult,
} from '../../analyses/msd.js';
import { resolveLayout, speciesSpec, type LayoutSpec } from '../store/layout.js';
import { storePass, type StorePartial } from '../store/store.js';
import {
  addVacfSums,
  analyseVacf,
  finishVacf,
  vacfPlan,
  vacfSums,
  velocityFrames,
  type VacfGroupSums,
  type VacfOptions,
  type VacfPlan,
  type VacfResult,
} from '../../analyses/vacf.js';
import { addTrajectoryOptions, emit, runOnTrajectory, type TrajectoryOptions, type TrajectoryRun } from './common.js';
import { groupSitesInBatch, planSiteBatches, readStoreInBatches, type SiteBatchPlan } from './batching.js';
import { vacfStoreBytes } from './vacf.js';
import {
  addMemoryOption,
  addPlateauOptions,
  addSiteOptions,
  addWindowOptions,
  dTable,
  msdOptionsFrom,
  plateauOptions,
  siteOptions,
  type PlateauCliOptions,
  type SiteCliOptions,
  type WindowCliOptions,
} from './msd.js';
import { finishPasses } from '../runner.js';
import { formatSig, formatTable } from '../output.js';
import { quantity, type Quantity } from '../types.js';
import { CAUTION } from '../caution.js';
import { compareEstimates, DISAGREEMENT_FACTOR, type Agreement } from '../numerics/compare.js';

interface DiffusionCliOptions extends TrajectoryOptions, SiteCliOptions, WindowCliOptions, PlateauCliOptions {
  maxMemory?: string;
  viscosity?: string;
  temperature?: string;
  alpha2?: boolean;
}

/** The side-by-side comparison per species. */
export interface DiffusionComparison {
  label: string;
  count: number;
  msd: { diffusion: Quantity; fit: { from: number; to: number }; converged: boolean };
  vacf: { diffusion: Quantity; plateau: { from: number; to: number; found: boolean }; converged: boolean };
  comparison: Agreement;
}

/** Results of the diffusion command. */
export interface DiffusionResult {
  groups: DiffusionComparison[];
  disagreementRule: string;
  /** Reads of the file, the largest store held at once (bytes), and why the sites were batched (or null). */
  reads: number;
  bytesHeld: number;
  memoryNote: string | null;
  msd: MsdResult;
  vacf: VacfResult;
}

/**
 * MSD and VACF of a run whose sites did not fit in memory at once: one read per batch of sites
 * (positions and, when the file has them, velocities of the batch), each read adding its MSD site
 * sums (`msdSums`) and VACF site sums (`vacfSums`) to the totals; both analyses finish from the
 * totals (division by the number of sites after the addition), as one read would.
 */
export async function batchedDiffusion(
  file: string,
  opts: TrajectoryOptions,
  plan: SiteBatchPlan,
  layoutSpec: LayoutSpec,
  removeDrift: boolean,
  mo: MsdOptions,
  vo: VacfOptions,
  warnings: string[],
): Promise<{ msd: MsdResult; vacf: VacfResult; run: TrajectoryRun; reads: number; bytesHeld: number; note: string }> {
  let msums: GroupSums[] | null = null;
  let vsums: VacfGroupSums[] | null = null;
  let mplan: MsdPlan | null = null;
  let vplan: VacfPlan | null = null;
  const comps = planeComponents(mo.plane);
  const b = await readStoreInBatches(file, opts, plan, () => ({ layout: layoutSpec, removeDrift, keepVelocities: true }), warnings, (store, batch, run) => {
    const layout = resolveLayout(layoutSpec, run.ctx.topology);
    const dt = requireFrameInterval(run.ctx);
    const gs = groupSitesInBatch(layout, batch);
    mplan ??= msdPlan(store.frames, dt, mo, true);
    vplan ??= vacfPlan(velocityFrames(store), vo);
    const m = msdSums(store, layout, mplan, comps, gs);
    const v = vacfSums(store, layout, vplan, comps, dt, gs);
    msums = msums ? msums.map((s, i) => addGroupSums(s, m[i]!)) : m;
    vsums = vsums ? vsums.map((s, i) => addVacfSums(s, v[i]!)) : v;
  });
  const layout = resolveLayout(layoutSpec, b.ctx.topology);
  const read = { reads: b.reads, bytesHeld: b.bytesHeld, note: b.note };
  const msd = finishMsd(msums!, mplan!, b.info, layout, b.ctx, mo, read);
  const vacf = finishVacf(vsums!, vplan!, b.info, layout, b.ctx, vo, read);
  return { msd, vacf, run: b.first, reads: b.reads, bytesHeld: b.bytesHeld, note: b.note };
}

/** Pair the MSD and VACF groups (same layout, same order) and compare them. */
export function compareDiffusion(msd: MsdResult, vacf: VacfResult): DiffusionComparison[] {
  return msd.groups.map((g, i) => {
    const v = vacf.groups[i];
    return {
      label: g.label,
      count: g.count,
      msd: { diffusion: g.diffusion, fit: { from: g.fit.from, to: g.fit.to }, converged: g.converged },
      vacf: { diffusion: v.diffusion, plateau: v.plateau, converged: v.converged },
      // Comparing an unconverged estimate would dress a known bias up as a test result.
      comparison: g.converged && v.converged
        ? compareEstimates(g.diffusion, v.diffusion)
        : { difference: quantity(g.diffusion.value - v.diffusion.value, null, g.diffusion.unit), sigmas: null, agree: null },
    };
  });
}

/** Human-readable report. */
export function renderDiffusion(file: string, r: DiffusionResult): string {
  const out: string[] = [];
  out.push(`${file}: self-diffusion from the MSD (Einstein) and the VACF (Green–Kubo), ${r.msd.frames} frames every ${formatSig(r.msd.frameInterval, 6)} ps`);
  out.push(
    formatTable(
      ['group', 'sites', 'D MSD (10⁻⁹ m²/s)', 'window (ps)', 'D VACF (10⁻⁹ m²/s)', 'plateau (ps)', 'difference', 'verdict'],
      r.groups.map((g) => [
        g.label,
        String(g.count),
        dTable(g.msd.diffusion) + (g.msd.converged ? '' : ' *'),
        `${formatSig(g.msd.fit.from, 4)}–${formatSig(g.msd.fit.to, 4)}`,
        dTable(g.vacf.diffusion) + (g.vacf.converged ? '' : ' *'),
        `${formatSig(g.vacf.plateau.from, 4)}–${formatSig(g.vacf.plateau.to, 4)}${g.vacf.plateau.found ? '' : ' (none)'}`,
        g.comparison.sigmas === null ? '—' : `${formatSig(g.comparison.sigmas, 2)} σ`,
        !g.msd.converged || !g.vacf.converged ? 'not compared' : g.comparison.agree === null ? 'no uncertainty' : g.comparison.agree ? 'agree' : 'DISAGREE',
      ]),
    ),
  );
  if (r.groups.some((g) => !g.msd.converged || !g.vacf.converged)) out.push('* not converged: see the notes below');
  out.push('');
  out.push(`comparison: ${r.disagreementRule}`);
  out.push(`MSD window: ${r.msd.rules.window}; ${r.msd.rules.uncertainty}`);
  out.push(`VACF plateau: ${r.vacf.rules.plateau}; velocities from ${r.vacf.velocitySource}`);
  out.push(`drift: ${r.msd.driftNote}`);
  if (r.memoryNote) out.push(`memory: ${r.memoryNote}`);
  for (const g of r.msd.groups) for (const n of g.notes) out.push(`${g.label} (MSD): ${n}`);
  for (const g of r.vacf.groups) for (const n of g.notes) out.push(`${g.label} (VACF): ${n}`);
  out.push('');
  out.push(CAUTION);
  return out.join('\n');
}

/** Register the command on the program (src/commands/index.ts). */
export function register(program: Command): void {
  const cmd = program
    .command('diffusion <file>')
    .description('self-diffusion per species from the MSD and from the VACF in one read, side by side, with a disagreement flag');
  addSiteOptions(cmd);
  addWindowOptions(cmd);
  addPlateauOptions(cmd, false);
  cmd
    .option('--viscosity <eta>', 'solvent viscosity for the Yeh–Hummer correction of the MSD value (with --temperature)')
    .option('--temperature <T>', 'temperature for the Yeh–Hummer correction')
    .option('--no-alpha2', 'skip the non-Gaussian parameter');
  addMemoryOption(cmd);
  addTrajectoryOptions(cmd).action(async (file: string, opts: DiffusionCliOptions) => {
    const warnings: string[] = [];
    const mo = msdOptionsFrom(opts);
    const po = plateauOptions(opts);
    const so = siteOptions(opts);
    const vo: VacfOptions = { ...po, plane: so.plane };
    const layoutSpec = speciesSpec(so);
    // One store serves both: positions (24 B per site and frame) and, when the file has them,
    // velocities (another 24 B).
    const plan = await planSiteBatches(file, opts, layoutSpec, vacfStoreBytes);
    let msd: MsdResult;
    let vacf: VacfResult;
    let run: TrajectoryRun;
    let memory: { reads: number; bytesHeld: number; memoryNote: string | null };
    if (plan) {
      const b = await batchedDiffusion(file, opts, plan, layoutSpec, !so.keepDrift, mo, vo, warnings);
      ({ msd, vacf, run } = b);
      memory = { reads: b.reads, bytesHeld: b.bytesHeld, memoryNote: b.note };
    } else {
      const pass = storePass({ layout: layoutSpec, removeDrift: !so.keepDrift, keepVelocities: true });
      run = await runOnTrajectory(file, opts, [pass], warnings);
      const store = finishPasses([pass], run.partials, run.ctx).store as StorePartial;
      const layout = resolveLayout(layoutSpec, run.ctx.topology);
      msd = analyseMsd(store, layout, run.ctx, mo);
      vacf = analyseVacf(store, layout, run.ctx, vo);
      memory = { reads: 1, bytesHeld: msd.bytesHeld, memoryNote: null };
    }
    const results: DiffusionResult = {
      groups: compareDiffusion(msd, vacf),
      disagreementRule: `flagged when |D_MSD − D_VACF| > ${DISAGREEMENT_FACTOR}·√(σ_MSD² + σ_VACF²)`,
      ...memory,
      msd,
      vacf,
    };
    emit('diffusion', opts, [run.input], { ...opts }, results, warnings, () => renderDiffusion(file, results));
  });
}
