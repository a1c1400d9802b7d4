/**
 * The `vacf` analysis as a command: velocity autocorrelation per species, the Green–Kubo
 * self-diffusion coefficient on the running integral's plateau with a segment uncertainty, and
 * the vibrational spectrum. The computation is analyses/vacf.ts; this module declares its
 * options, text, files and its site axis.
 */
import { defineAnalysis } from '../src/engine/analysis.js';
import { PLANE_OPTION, SHARED, SITE_OPTIONS, plateauOptions, siteValues, type OptionValues } from '../src/engine/options.js';
import { formatQuantity, formatSig, formatTable, toCsv } from '../src/output.js';
import { CAUTION } from '../src/caution.js';
import { DEFAULT_SEGMENTS } from '../src/fit.js';
import { DEFAULT_PLATEAU_SPAN, DEFAULT_PLATEAU_TOLERANCE } from '../src/plateau.js';
import { speciesSpec } from '../src/store/layout.js';
import type { StorePartial } from '../src/store/store.js';
import { planeComponents, requireFrameInterval } from './msd.js';
import {
  addVacfSums,
  finishVacf,
  vacfPass,
  vacfPlan,
  vacfSums,
  velocityFrames,
  type VacfGroupSums,
  type VacfOptions,
  type VacfPassOptions,
  type VacfPlan,
  type VacfResult,
} from './vacf.js';

/**
 * Bytes a store for the VACF holds per site and frame: unwrapped positions (3 × 8 B, always
 * kept; central differences need them) plus the site velocities (3 × 8 B) when the file carries
 * them (judged on its first frame).
 */
export function vacfStoreBytes(first: { velocities: boolean }): number {
  return first.velocities ? 48 : 24;
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
        formatQuantity(g.diffusion, 1e9, ''),
        `${formatSig(g.plateau.from, 4)}–${formatSig(g.plateau.to, 4)}${g.plateau.found ? '' : ' (no plateau)'}`,
        formatSig(g.vacf[0], 5),
        g.reasons.some((r) => r.code === 'vacf.does-not-move') ? 'does not move' : g.converged ? 'ok' : 'NOT CONVERGED',
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

/** The VACF pass options from the parsed command options. */
function configureVacf(v: OptionValues): VacfPassOptions {
  const plateau: VacfOptions = {};
  if (v.plateauTolerance !== undefined) plateau.plateauTolerance = v.plateauTolerance as number;
  if (v.plateauSpan !== undefined) plateau.plateauSpan = v.plateauSpan as number;
  if (v.segments !== undefined) plateau.segments = v.segments as number;
  return { ...siteValues(v), ...plateau };
}

/** Site sums of the VACF over one batch of sites, with the lag plan they were made with. */
interface VacfBatchSums {
  plan: VacfPlan;
  groups: VacfGroupSums[];
}

/**
 * `vacf`: velocity autocorrelation per species, the Green–Kubo self-diffusion coefficient on the
 * running integral's plateau with a segment uncertainty, and the vibrational spectrum
 * (Hann-tapered cosine transform) in THz and cm⁻¹. Its site sums add over batches of sites
 * (`--max-memory`): the groups' full-run and segment curves are divided by the number of sites
 * only in `finishVacf`.
 */
export const vacfAnalysis = defineAnalysis<VacfPassOptions, StorePartial, VacfResult>({
  name: 'vacf',
  summary: 'velocity autocorrelation, Green–Kubo self-diffusion on its plateau, and the vibrational spectrum per species',
  options: [
    ...SITE_OPTIONS,
    PLANE_OPTION,
    ...plateauOptions({ tolerance: DEFAULT_PLATEAU_TOLERANCE, span: DEFAULT_PLATEAU_SPAN }),
    SHARED.segments(undefined, DEFAULT_SEGMENTS),
    SHARED.csvFile('write the VACF and running integral to this CSV file'),
    SHARED.csvFile('write the spectra to this CSV file', 'spectrumCsv', '--spectrum-csv <file>'),
  ],
  configure: configureVacf,
  pass: vacfPass,
  render: (file, r) => renderVacf(file, r),
  outputs: [
    { option: 'csv', write: (r) => [['', vacfCsv(r)]] },
    { option: 'spectrumCsv', write: (r) => [['', spectrumCsv(r)]] },
  ],
  sites: {
    layout: (o) => speciesSpec(o),
    bytesPerSiteFrame: (_o, first) => ({ all: vacfStoreBytes(first), batch: vacfStoreBytes(first) }),
    store: (o) => ({ layout: speciesSpec(o), removeDrift: !o.keepDrift, keepVelocities: true }),
    sums(store, layout, groupSites, ctx, o): VacfBatchSums {
      const plan = vacfPlan(velocityFrames(store), o);
      return { plan, groups: vacfSums(store, layout, plan, planeComponents(o.plane), requireFrameInterval(ctx), groupSites) };
    },
    add: (a: VacfBatchSums, b: VacfBatchSums): VacfBatchSums => ({ plan: a.plan, groups: a.groups.map((s, i) => addVacfSums(s, b.groups[i]!)) }),
    finish: (s: VacfBatchSums, record, layout, ctx, o) =>
      finishVacf(s.groups, s.plan, record.info, layout, ctx, o, { reads: record.reads, bytesHeld: record.bytesHeld, note: record.note }),
  },
});
