/**
 * The `conductivity` analysis: ionic conductivity by Nernst–Einstein (from the species' MSD),
 * Einstein–Helfand (the collective charge displacement) and Green–Kubo (the current
 * autocorrelation), with the ionicity, Haven ratio and molar conductivity. Under --max-memory the
 * species' MSD site sums add over batches, and the first read keeps the collective sums Σq r and
 * Σq v per frame.
 */
import {
  analyseConductivity,
  conductivityLayout,
  conductivityPass,
  type ConductivityPassOptions,
  type ConductivityResult,
} from './conductivity.js';
import { addGroupSums, DOES_NOT_MOVE, finishMsd, msdPlan, msdSums, requireFrameInterval, type GroupSums, type MsdOptions, type MsdPlan } from './msd.js';
import { hasReason } from '../src/estimate.js';
import type { StorePartial } from '../src/store/store.js';
import { resolveLayout } from '../src/store/layout.js';
import { parseChargeRules } from '../src/store/charges.js';
import { dTable, MSD_WINDOW_OPTIONS } from './msd-analysis.js';
import { defineAnalysis } from '../src/engine/analysis.js';
import { plateauOptions, plateauValues, windowValues, type OptionValues } from '../src/engine/options.js';
import { parseSelection } from '../src/selection.js';
import { formatQuantity, formatSig, formatTable, toCsv } from '../src/output.js';
import type { Quantity } from '../src/types.js';
import { CAUTION } from '../src/caution.js';
import { DEFAULT_PLATEAU_SPAN, DEFAULT_PLATEAU_TOLERANCE } from '../src/plateau.js';

/** σ in the table unit mS/cm (1 S/m = 10 mS/cm). */
const mScm = (q: Quantity | null) => formatQuantity(q, 10, 'mS/cm');

/** Human-readable report of a conductivity result. */
export function renderConductivity(file: string, r: ConductivityResult): string {
  const out: string[] = [];
  out.push(
    `${file}: ionic conductivity at ${formatSig(r.temperature.value, 5)} K, <V> = ${formatSig(r.volume.value, 6)} Å³, ` +
      `${r.frames} frames every ${formatSig(r.frameInterval, 6)} ps`,
  );
  const gk = r.greenKuboPlateau;
  out.push(
    formatTable(
      ['quantity', 'value', 'from'],
      [
        ['σ Nernst–Einstein (ions independent)', mScm(r.nernstEinstein), 'species MSD D (below)'],
        ['σ Einstein–Helfand (collective)', mScm(r.einsteinHelfand), `slope over ${formatSig(r.fit.from, 4)}–${formatSig(r.fit.to, 4)} ps${r.fit.automatic ? '' : ' (user)'}`],
        [
          'σ Green–Kubo (collective)',
          mScm(r.greenKubo) + (r.greenKuboConverged === false ? ' *' : ''),
          gk ? `plateau ${formatSig(gk.from, 4)}–${formatSig(gk.to, 4)} ps${gk.found ? '' : ' (no plateau)'}` : 'no velocities in the file',
        ],
        ['ionicity σ_EH/σ_NE', Number.isFinite(r.ionicity.value) ? formatQuantity(r.ionicity) : '—', ''],
        ['Haven ratio σ_NE/σ_EH', formatQuantity(r.havenRatio), ''],
        ['molar conductivity Λ = σ_EH/c', formatQuantity(r.molarConductivity, 1e4, 'S cm²/mol'), r.concentration ? `c = ${formatSig(r.concentration.value, 4)} mol/L (cations)` : ''],
        ['status', hasReason(r.einsteinHelfand, 'conductivity.does-not-move') ? 'no charged site moves' : r.converged ? 'ok' : 'NOT CONVERGED', ''],
      ],
    ),
  );
  if (r.greenKuboConverged === false) out.push('* Green–Kubo value not converged: see the notes below');
  out.push('');
  const rows = [...r.species, ...r.otherCharged];
  out.push(
    formatTable(
      ['species', 'count', 'charge (e)', 'role', 'D (10⁻⁹ m²/s)', 'fit window (ps)', 'segments', 'status'],
      rows.map((s) => [
        s.label,
        String(s.count),
        formatSig(s.charge, 4),
        s.ion ? 'ion' : 'current only',
        dTable(s.diffusion),
        `${formatSig(s.fit.from, 4)}–${formatSig(s.fit.to, 4)}`,
        s.segments > 0 ? String(s.segments) : '—',
        hasReason(s.diffusion, DOES_NOT_MOVE) ? 'does not move' : s.converged ? 'ok' : 'NOT CONVERGED',
      ]),
    ),
  );
  out.push('');
  out.push(`fit window: ${r.rules.window}`);
  out.push(`uncertainty: ${r.rules.uncertainty}`);
  out.push(`ratios: ${r.rules.ratios}`);
  out.push(`concentration: ${r.rules.concentration}`);
  out.push(`drift: ${r.driftNote}`);
  if (r.memoryNote) out.push(`memory: ${r.memoryNote}`);
  for (const n of r.notes) out.push(`note: ${n}`);
  for (const s of rows) for (const n of s.notes) out.push(`${s.label}: ${n}`);
  out.push('');
  out.push(CAUTION);
  return out.join('\n');
}

/** CSV: time (ps), ⟨|ΔM|²⟩ (e²Å²) and the running Green–Kubo σ (S/m) when present. */
export function conductivityCsv(r: ConductivityResult): string {
  const names = ['time_ps', 'collective_msd_e2A2'];
  const cols: ArrayLike<number>[] = [r.curves.time, r.curves.collectiveMsd];
  if (r.curves.greenKuboRunning) {
    names.push('green_kubo_S_per_m');
    cols.push(r.curves.greenKuboRunning);
  }
  return toCsv(names, cols);
}

/** The pass options from the parsed option values. */
export function configureConductivity(v: OptionValues): ConductivityPassOptions {
  const wo = windowValues(v);
  const po = plateauValues(v);
  if (typeof v.ions === 'string') parseSelection(v.ions);
  const o: ConductivityPassOptions = {
    ...wo,
    ...po,
    temperature: v.temperature as number,
    charges: typeof v.charges === 'string' ? parseChargeRules(v.charges) : null,
    greenKubo: v.greenKubo === true,
    ions: typeof v.ions === 'string' ? v.ions : null,
  };
  const segments = wo.segments ?? po.segments;
  if (segments !== undefined) o.segments = segments;
  if (v.molecules === true) o.molecules = true;
  if (v.keepDrift === true) o.keepDrift = true;
  return o;
}

/** The MSD options of the batched species sums (no non-Gaussian parameter). */
function speciesMsdOptions(o: ConductivityPassOptions): MsdOptions {
  const mo: MsdOptions = { nonGaussian: false };
  if (o.fitFrom !== undefined) mo.fitFrom = o.fitFrom;
  if (o.fitTo !== undefined) mo.fitTo = o.fitTo;
  if (o.tolerance !== undefined) mo.tolerance = o.tolerance;
  if (o.segments !== undefined) mo.segments = o.segments;
  return mo;
}

/** Species MSD sums over one batch of sites, with their lag plan. */
interface SpeciesBatchSums {
  plan: MsdPlan;
  groups: GroupSums[];
}

/** `conductivity`: Nernst–Einstein, Einstein–Helfand and Green–Kubo, ionicity, Haven ratio, molar conductivity. */
export const conductivityAnalysis = defineAnalysis<ConductivityPassOptions, StorePartial, ConductivityResult>({
  name: 'conductivity',
  summary: 'ionic conductivity: Nernst–Einstein, Einstein–Helfand and Green–Kubo, ionicity, Haven ratio, molar conductivity',
  options: [
    { key: 'charges', flag: '--charges <list>', help: 'charges by selection, e.g. "Na=+1,Cl=-1" (default: the formal charges in the file)', type: { kind: 'text' } },
    { key: 'temperature', flag: '--temperature <T>', help: 'temperature of the run, e.g. 300K', type: { kind: 'quantity', dimension: 'temperature', bare: 'K', positive: true }, required: true },
    { key: 'molecules', flag: '--molecules', help: 'molecular ions: follow molecule (residue) centres of mass, charge = sum of atom charges', type: { kind: 'flag' } },
    { key: 'keepDrift', flag: '--keep-drift', help: 'do not remove the centre-of-mass drift (removed by default)', type: { kind: 'flag' } },
    { key: 'greenKubo', flag: '--no-green-kubo', help: 'skip the Green–Kubo value (and do not hold velocities in memory)', type: { kind: 'flag' } },
    {
      key: 'ions',
      flag: '--ions <sel>',
      help: 'atoms to count as ions in the Nernst–Einstein sum and the concentration (default: single atoms or, with --molecules, molecules with a non-zero whole charge; give it for scaled charges such as ±0.8)',
      type: { kind: 'text' },
    },
    { key: 'csv', flag: '--csv <file>', help: 'write the collective MSD and running Green–Kubo conductivity to this CSV file', type: { kind: 'file', output: 'file' } },
    ...MSD_WINDOW_OPTIONS,
    ...plateauOptions({ tolerance: DEFAULT_PLATEAU_TOLERANCE, span: DEFAULT_PLATEAU_SPAN }),
  ],
  configure: configureConductivity,
  pass: conductivityPass,
  render: (file, r) => renderConductivity(file, r),
  outputs: [{ option: 'csv', write: (r) => [['', conductivityCsv(r)]] }],
  sites: {
    layout: (o) => conductivityLayout(o),
    // One read holds positions (+ velocities for Green–Kubo) of every ion; batched reads hold
    // positions only, the collective sums Σq r and Σq v being kept per frame by the first read.
    bytesPerSiteFrame: (o) => ({ all: o.greenKubo ? 48 : 24, batch: 24 }),
    store: (o, first) => ({
      layout: conductivityLayout(o),
      removeDrift: !o.keepDrift,
      keepVelocities: false,
      ...(first ? { collectiveCharges: true, collectiveVelocities: o.greenKubo ?? true } : {}),
    }),
    sums(store, layout, groupSites, ctx, o): SpeciesBatchSums {
      const plan = msdPlan(store.frames, requireFrameInterval(ctx), speciesMsdOptions(o), true);
      return { plan, groups: msdSums(store, layout, plan, [0, 1, 2], groupSites) };
    },
    add: (a: SpeciesBatchSums, b: SpeciesBatchSums): SpeciesBatchSums => ({ plan: a.plan, groups: a.groups.map((s, i) => addGroupSums(s, b.groups[i]!)) }),
    finish(s: SpeciesBatchSums, record, layout, ctx, o) {
      const read = { reads: record.reads, bytesHeld: record.bytesHeld, note: record.note };
      const msd = finishMsd(s.groups, s.plan, record.info, layout, ctx, speciesMsdOptions(o), read);
      const full = resolveLayout(conductivityLayout(o), ctx.topology);
      return analyseConductivity(record.info, full, ctx, o, msd, { reads: msd.reads, bytesHeld: msd.bytesHeld, note: msd.memoryNote ?? undefined });
    },
  },
});
