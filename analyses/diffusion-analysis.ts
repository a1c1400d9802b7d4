/**
 * The `diffusion` analysis: the self-diffusion coefficient of each species two ways from one
 * read of the trajectory — the MSD slope (Einstein) and the VACF plateau (Green–Kubo) — side by
 * side, flagged when they disagree by more than DISAGREEMENT_FACTOR combined standard errors.
 * One coordinate store (positions, and velocities when the file has them) serves both; under
 * --max-memory both analyses' site sums add over the batches.
 */
import {
  addGroupSums,
  analyseMsd,
  DOES_NOT_MOVE,
  finishMsd,
  msdPlan,
  msdSums,
  planeComponents,
  requireFrameInterval,
  type GroupSums,
  type MsdOptions,
  type MsdPlan,
  type MsdResult,
} from './msd.js';
import { storePass, type StorePartial } from '../src/store/store.js';
import { resolveLayout, speciesSpec } from '../src/store/layout.js';
import type { SpeciesLayoutOptions } from '../src/store/sites.js';
import { addVacfSums, analyseVacf, finishVacf, vacfPlan, vacfSums, velocityFrames, type VacfGroupSums, type VacfOptions, type VacfPlan, type VacfResult } from './vacf.js';
import { vacfStoreBytes } from './vacf-analysis.js';
import { dTable, MSD_WINDOW_OPTIONS, msdOptionsFrom, yehHummerOptionSpecs } from './msd-analysis.js';
import { defineAnalysis } from '../src/engine/analysis.js';
import { PLANE_OPTION, SITE_OPTIONS, plateauOptions, plateauValues, siteValues } from '../src/engine/options.js';
import { formatSig, formatTable } from '../src/output.js';
import { quantity, type Pass, type Quantity } from '../src/types.js';
import { CAUTION } from '../src/caution.js';
import { DEFAULT_PLATEAU_SPAN, DEFAULT_PLATEAU_TOLERANCE } from '../src/plateau.js';
import { hasReason, type Estimate } from '../src/estimate.js';
import { compareEstimates, DISAGREEMENT_FACTOR, type Agreement } from '../src/numerics/compare.js';

/** Options of the diffusion analysis: the sites, the MSD window and the VACF plateau. */
export interface DiffusionOptions extends SpeciesLayoutOptions {
  keepDrift?: boolean;
  msd: MsdOptions;
  vacf: VacfOptions;
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
        hasReason({ reasons: (g.msd.diffusion as Partial<Estimate>).reasons ?? [] }, DOES_NOT_MOVE) ? 'does not move' : !g.msd.converged || !g.vacf.converged ? 'not compared' : g.comparison.agree === null ? 'no uncertainty' : g.comparison.agree ? 'agree' : 'DISAGREE',
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

/** The result from the two analyses. */
function combine(msd: MsdResult, vacf: VacfResult, memory: { reads: number; bytesHeld: number; memoryNote: string | null }): DiffusionResult {
  return {
    groups: compareDiffusion(msd, vacf),
    disagreementRule: `flagged when |D_MSD − D_VACF| > ${DISAGREEMENT_FACTOR}·√(σ_MSD² + σ_VACF²)`,
    ...memory,
    msd,
    vacf,
  };
}

/** The pass: one coordinate store with velocities, finished by both analyses. */
export function diffusionPass(o: DiffusionOptions): Pass<StorePartial, DiffusionResult> {
  const store = storePass({ layout: speciesSpec(o), removeDrift: !o.keepDrift, keepVelocities: true });
  return {
    name: 'diffusion',
    needsEvenSpacing: true,
    create: store.create,
    merge: store.merge,
    finish(p, ctx) {
      const layout = resolveLayout(speciesSpec(o), ctx.topology);
      const msd = analyseMsd(p, layout, ctx, o.msd);
      const vacf = analyseVacf(p, layout, ctx, o.vacf);
      return combine(msd, vacf, { reads: 1, bytesHeld: msd.bytesHeld, memoryNote: null });
    },
  };
}

/** Both analyses' site sums over one batch of sites, with their lag plans. */
interface DiffusionBatchSums {
  msdPlan: MsdPlan;
  vacfPlan: VacfPlan;
  msd: GroupSums[];
  vacf: VacfGroupSums[];
}

/** `diffusion`: D per species from the MSD and from the VACF in one read, side by side. */
export const diffusionAnalysis = defineAnalysis<DiffusionOptions, StorePartial, DiffusionResult>({
  name: 'diffusion',
  summary: 'self-diffusion per species from the MSD and from the VACF in one read, side by side, with a disagreement flag',
  options: [
    ...SITE_OPTIONS,
    PLANE_OPTION,
    ...MSD_WINDOW_OPTIONS,
    ...plateauOptions({ tolerance: DEFAULT_PLATEAU_TOLERANCE, span: DEFAULT_PLATEAU_SPAN }),
    ...yehHummerOptionSpecs(' of the MSD value (with --temperature)'),
  ],
  configure(v) {
    const site = siteValues(v);
    const msd = msdOptionsFrom(v);
    const vacf: VacfOptions = { ...plateauValues(v) };
    if (site.plane !== undefined) vacf.plane = site.plane;
    return { ...site, msd, vacf };
  },
  pass: diffusionPass,
  render: (file, r) => renderDiffusion(file, r),
  sites: {
    layout: (o) => speciesSpec(o),
    bytesPerSiteFrame: (_o, first) => ({ all: vacfStoreBytes(first), batch: vacfStoreBytes(first) }),
    store: (o) => ({ layout: speciesSpec(o), removeDrift: !o.keepDrift, keepVelocities: true }),
    sums(store, layout, groupSites, ctx, o): DiffusionBatchSums {
      const dt = requireFrameInterval(ctx);
      const comps = planeComponents(o.msd.plane);
      const mp = msdPlan(store.frames, dt, o.msd, true);
      const vp = vacfPlan(velocityFrames(store), o.vacf);
      return { msdPlan: mp, vacfPlan: vp, msd: msdSums(store, layout, mp, comps, groupSites), vacf: vacfSums(store, layout, vp, comps, dt, groupSites) };
    },
    add: (a: DiffusionBatchSums, b: DiffusionBatchSums): DiffusionBatchSums => ({
      ...a,
      msd: a.msd.map((s, i) => addGroupSums(s, b.msd[i]!)),
      vacf: a.vacf.map((s, i) => addVacfSums(s, b.vacf[i]!)),
    }),
    finish(s: DiffusionBatchSums, record, layout, ctx, o) {
      const read = { reads: record.reads, bytesHeld: record.bytesHeld, note: record.note };
      const msd = finishMsd(s.msd, s.msdPlan, record.info, layout, ctx, o.msd, read);
      const vacf = finishVacf(s.vacf, s.vacfPlan, record.info, layout, ctx, o.vacf, read);
      return combine(msd, vacf, { reads: record.reads, bytesHeld: record.bytesHeld, memoryNote: record.note });
    },
  },
});
