/**
 * `sojourn vacf FILE`: velocity autocorrelation per species, the Green–Kubo self-diffusion
 * coefficient on the running integral's plateau with a segment uncertainty, and the vibrational
 * spectrum (Hann-tapered cosine transform) in THz and cm⁻¹.
 */
import type { Command } from 'commander';
import {
  addVacfSums,
  finishVacf,
  vacfPass,
  vacfPlan,
  vacfSums,
  velocityFrames,
  type VacfGroupSums,
  type VacfOptions,
  type VacfPlan,
  type VacfResult,
} from '../../analyses/vacf.js';
import { planeComponents, requireFrameInterval } from '../../analyses/msd.js';
import { resolveLayout, speciesSpec, type LayoutSpec } from '../store/layout.js';
import { addTrajectoryOptions, emit, runOnTrajectory, type TrajectoryOptions, type TrajectoryRun } from './common.js';
import {
  addMemoryOption,
  addPlateauOptions,
  addSiteOptions,
  dTable,
  plateauOptions,
  siteOptions,
  type PlateauCliOptions,
  type SiteCliOptions,
} from './msd.js';
import { groupSitesInBatch, planSiteBatches, readStoreInBatches, type FirstFrameInfo, type SiteBatchPlan } from './batching.js';
import { finishPasses } from '../runner.js';
import { checkOutputFile, formatSig, formatTable, toCsv, writeFileAtomic } from '../output.js';
import { CAUTION } from '../caution.js';

interface VacfCliOptions extends TrajectoryOptions, SiteCliOptions, PlateauCliOptions {
  maxMemory?: string;
  csv?: string;
  spectrumCsv?: string;
}

/**
 * Bytes a store for the VACF holds per site and frame: unwrapped positions (3 × 8 B, always
 * kept; central differences need them) plus the site velocities (3 × 8 B) when the file carries
 * them (judged on its first frame).
 */
export function vacfStoreBytes(first: FirstFrameInfo): number {
  return first.velocities ? 48 : 24;
}

/**
 * The VACF of a run whose sites did not fit in memory at once: one read per batch of sites, the
 * groups' site sums (full-run and segment curves, `vacfSums`) added over the batches before
 * `finishVacf` divides by the number of sites and integrates.
 */
export async function batchedVacf(
  file: string,
  opts: TrajectoryOptions,
  plan: SiteBatchPlan,
  layoutSpec: LayoutSpec,
  removeDrift: boolean,
  vo: VacfOptions,
  warnings: string[],
): Promise<{ result: VacfResult; run: TrajectoryRun }> {
  const comps = planeComponents(vo.plane);
  let sums: VacfGroupSums[] | null = null;
  let vplan: VacfPlan | null = null;
  const b = await readStoreInBatches(file, opts, plan, () => ({ layout: layoutSpec, removeDrift, keepVelocities: true }), warnings, (store, batch, run) => {
    const layout = resolveLayout(layoutSpec, run.ctx.topology);
    vplan ??= vacfPlan(velocityFrames(store), vo);
    const part = vacfSums(store, layout, vplan, comps, requireFrameInterval(run.ctx), groupSitesInBatch(layout, batch));
    sums = sums ? sums.map((s, i) => addVacfSums(s, part[i]!)) : part;
  });
  const result = finishVacf(sums!, vplan!, b.info, resolveLayout(layoutSpec, b.ctx.topology), b.ctx, vo, { reads: b.reads, bytesHeld: b.bytesHeld, note: b.note });
  return { result, run: b.first };
}

/** Human-readable report of a VACF result. */
export function renderVacf(file: string, r: VacfResult): string {
  const out: string[] = [];
  out.push(`${file}: velocity autocorrelation, ${r.frames} frames every ${formatSig(r.frameInterval, 6)} ps, d = ${r.dimensions}, velocities from ${r.velocitySource}`);
  out.push(
    formatTable(
      ['group', 'sites', 'D (10⁻⁹ m²/s)', 'plateau (ps)', 'C(0) (Å²/ps²)', 'status'],
      r.groups.map((g) => [
        g.label,
        String(g.count),
        dTable(g.diffusion),
        `${formatSig(g.plateau.from, 4)}–${formatSig(g.plateau.to, 4)}${g.plateau.found ? '' : ' (no plateau)'}`,
        formatSig(g.vacf[0], 5),
        g.converged ? 'ok' : 'NOT CONVERGED',
      ]),
    ),
  );
  out.push('');
  out.push(`plateau: ${r.rules.plateau}`);
  out.push(`uncertainty: ${r.rules.uncertainty}`);
  out.push(`spectrum: ${r.rules.spectrum}`);
  out.push(`drift: ${r.driftNote}`);
  out.push(
    r.memoryNote
      ? `memory: ${r.memoryNote}`
      : `memory: ${formatSig(r.bytesHeld / 2 ** 20, 4)} MiB held (stored positions${r.velocitySource === 'file' ? ' and velocities' : ''})`,
  );
  for (const g of r.groups) {
    const s = g.spectrum;
    let k = 1;
    for (let i = 1; i < s.intensity.length; i++) if (s.intensity[i] > s.intensity[k]) k = i;
    if (s.intensity.length > 1) {
      out.push(`${g.label}: strongest non-zero spectral peak at ${formatSig(s.frequencyTHz[k], 4)} THz (${formatSig(s.wavenumber[k], 4)} cm⁻¹)`);
    }
    for (const n of g.notes) out.push(`${g.label}: ${n}`);
  }
  out.push('');
  out.push(CAUTION);
  return out.join('\n');
}

/** CSV of the VACF curves: time and, per group, C(t) (Å²/ps²), C/C(0) and D(t) (m²/s). */
export function vacfCsv(r: VacfResult): string {
  const names = ['time_ps'];
  const cols: ArrayLike<number>[] = [r.groups[0]?.time ?? []];
  for (const g of r.groups) {
    names.push(`${g.label}_vacf_A2_per_ps2`, `${g.label}_normalized`, `${g.label}_D_m2_per_s`);
    cols.push(g.vacf, g.normalized, g.runningIntegral);
  }
  return toCsv(names.map((n) => n.replace(/[,\s]+/g, '_')), cols);
}

/** CSV of the spectra: frequency (THz), wavenumber (cm⁻¹) and, per group, intensity (Å²/ps). */
export function spectrumCsv(r: VacfResult): string {
  const first = r.groups[0]?.spectrum;
  const names = ['frequency_THz', 'wavenumber_per_cm'];
  const cols: ArrayLike<number>[] = [first?.frequencyTHz ?? [], first?.wavenumber ?? []];
  for (const g of r.groups) {
    names.push(`${g.label}_intensity_A2_per_ps`);
    cols.push(g.spectrum.intensity);
  }
  return toCsv(names.map((n) => n.replace(/[,\s]+/g, '_')), cols);
}

/** Register the command on the program (src/commands/index.ts). */
export function register(program: Command): void {
  const cmd = program
    .command('vacf <file>')
    .description('velocity autocorrelation, Green–Kubo self-diffusion on its plateau, and the vibrational spectrum per species');
  addSiteOptions(cmd);
  addPlateauOptions(cmd, true);
  addMemoryOption(cmd);
  cmd.option('--csv <file>', 'write the VACF and running integral to this CSV file').option('--spectrum-csv <file>', 'write the spectra to this CSV file');
  addTrajectoryOptions(cmd).action(async (file: string, opts: VacfCliOptions) => {
    const warnings: string[] = [];
    const po = plateauOptions(opts);
    // Before any reading: an output that cannot be written is found now, not after the run.
    if (opts.csv) checkOutputFile(opts.csv, [file], '--csv');
    if (opts.spectrumCsv) checkOutputFile(opts.spectrumCsv, [file], '--spectrum-csv');
    const so = siteOptions(opts);
    const layoutSpec = speciesSpec(so);
    const plan = await planSiteBatches(file, opts, layoutSpec, vacfStoreBytes);
    let results: VacfResult;
    let run: TrajectoryRun;
    if (plan) {
      ({ result: results, run } = await batchedVacf(file, opts, plan, layoutSpec, !so.keepDrift, { ...po, plane: so.plane }, warnings));
    } else {
      const pass = vacfPass({ ...so, ...po });
      run = await runOnTrajectory(file, opts, [pass], warnings);
      results = finishPasses([pass], run.partials, run.ctx).vacf as VacfResult;
    }
    if (opts.csv) await writeFileAtomic(opts.csv, vacfCsv(results));
    if (opts.spectrumCsv) await writeFileAtomic(opts.spectrumCsv, spectrumCsv(results));
    emit('vacf', opts, [run.input], { ...opts }, results, warnings, () => renderVacf(file, results));
  });
}
