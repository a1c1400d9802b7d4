/**
 * The `msd` analysis as a command: mean-squared displacement and self-diffusion coefficient of each
 * species (or molecule kind), with the fit window, a segment uncertainty, the non-Gaussian
 * parameter and the optional Yeh–Hummer finite-size correction. The computation is
 * analyses/msd.ts; this module declares its options, text, files and its site axis.
 */
import {
  addGroupSums,
  DOES_NOT_MOVE,
  finishMsd,
  msdPass,
  msdPlan,
  msdSums,
  planeComponents,
  requireFrameInterval,
  YEH_HUMMER_PLANE_ERROR,
  type GroupSums,
  type MsdOptions,
  type MsdPassOptions,
  type MsdPlan,
  type MsdResult,
} from './msd.js';
import type { StorePartial } from '../src/store/store.js';
import { speciesSpec } from '../src/store/layout.js';
import { defineAnalysis } from '../src/engine/analysis.js';
import { PLANE_OPTION, SITE_OPTIONS, siteValues, windowOptionSpecs, windowValues, type OptionSpec, type OptionValues } from '../src/engine/options.js';
import { UsageError } from '../src/errors.js';
import { formatQuantity, formatSig, formatTable, toCsv } from '../src/output.js';
import { CAUTION } from '../src/caution.js';
import { DEFAULT_SEGMENTS, DEFAULT_SLOPE_TOLERANCE } from '../src/fit.js';
import type { Quantity } from '../src/types.js';
import { hasReason } from '../src/estimate.js';

/** D in the table unit 10⁻⁹ m²/s. */
export const dTable = (q: Quantity | null) => formatQuantity(q, 1e9, '');

/** The window options of the MSD fit, with the defaults they name. */
export const MSD_WINDOW_OPTIONS: readonly OptionSpec[] = windowOptionSpecs({ slopeTolerance: DEFAULT_SLOPE_TOLERANCE, segments: DEFAULT_SEGMENTS });

/** --viscosity and --temperature of the Yeh–Hummer correction, and --no-alpha2. */
export function yehHummerOptionSpecs(what: string): OptionSpec[] {
  return [
    { key: 'viscosity', flag: '--viscosity <eta>', help: `solvent viscosity for the Yeh–Hummer correction${what}`, type: { kind: 'quantity', dimension: 'viscosity', positive: true } },
    { key: 'temperature', flag: '--temperature <T>', help: 'temperature for the Yeh–Hummer correction, e.g. 300K', type: { kind: 'quantity', dimension: 'temperature', bare: 'K', positive: true } },
    { key: 'alpha2', flag: '--no-alpha2', help: 'skip the non-Gaussian parameter', type: { kind: 'flag' } },
  ];
}

/** MSD analysis options from the parsed option values. */
export function msdOptionsFrom(v: OptionValues): MsdOptions {
  const viscosity = v.viscosity as number | undefined;
  const temperature = v.temperature as number | undefined;
  if ((viscosity === undefined) !== (temperature === undefined)) {
    throw new UsageError('the Yeh–Hummer correction needs both --viscosity and --temperature');
  }
  if (viscosity !== undefined && v.plane !== undefined) throw new UsageError(YEH_HUMMER_PLANE_ERROR);
  const out: MsdOptions = { ...windowValues(v), nonGaussian: v.alpha2 === true };
  if (typeof v.plane === 'string') out.plane = v.plane;
  if (viscosity !== undefined) out.viscosity = viscosity;
  if (temperature !== undefined) out.temperature = temperature;
  return out;
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
    hasReason(g.diffusion, DOES_NOT_MOVE) ? 'does not move' : g.converged ? 'ok' : 'NOT CONVERGED',
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

/** MSD site sums over one batch of sites, with the lag plan they were made with. */
interface MsdBatchSums {
  plan: MsdPlan;
  groups: GroupSums[];
}

/** `msd`: mean-squared displacement and self-diffusion coefficient per species. */
export const msdAnalysis = defineAnalysis<MsdPassOptions, StorePartial, MsdResult>({
  name: 'msd',
  summary: 'mean-squared displacement and self-diffusion coefficient per species, with fit window and uncertainty',
  options: [
    ...SITE_OPTIONS,
    PLANE_OPTION,
    ...MSD_WINDOW_OPTIONS,
    ...yehHummerOptionSpecs(' finite-size correction, e.g. 0.89mPa.s (with --temperature)'),
    { key: 'csv', flag: '--csv <file>', help: 'write the MSD curves to this CSV file', type: { kind: 'file', output: 'file' } },
  ],
  configure: (v) => ({ ...siteValues(v), ...msdOptionsFrom(v) }),
  pass: msdPass,
  render: (file, r) => renderMsd(file, r),
  outputs: [{ option: 'csv', write: (r) => [['', msdCsv(r)]] }],
  sites: {
    layout: (o) => speciesSpec(o),
    bytesPerSiteFrame: () => ({ all: 24, batch: 24 }),
    store: (o) => ({ layout: speciesSpec(o), removeDrift: !o.keepDrift, keepVelocities: false }),
    sums(store, layout, groupSites, ctx, o): MsdBatchSums {
      const plan = msdPlan(store.frames, requireFrameInterval(ctx), o, true);
      return { plan, groups: msdSums(store, layout, plan, planeComponents(o.plane), groupSites) };
    },
    add: (a: MsdBatchSums, b: MsdBatchSums): MsdBatchSums => ({ plan: a.plan, groups: a.groups.map((s, i) => addGroupSums(s, b.groups[i]!)) }),
    finish: (s: MsdBatchSums, record, layout, ctx, o) =>
      finishMsd(s.groups, s.plan, record.info, layout, ctx, o, { reads: record.reads, bytesHeld: record.bytesHeld, note: record.note }),
  },
});
