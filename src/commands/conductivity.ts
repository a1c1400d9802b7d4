/**
 * `sojourn conductivity FILE --charges Na=+1,Cl=-1 --temperature 300K`: ionic conductivity by
 * Nernst–Einstein (from each species' MSD), Einstein–Helfand (collective, with ion–ion
 * correlations) and Green–Kubo (when the file has velocities); ionicity, Haven ratio and molar
 * conductivity, each with its uncertainty and fit window.
 */
import type { Command } from 'commander';
import { analyseConductivity, conductivityLayout, conductivityPass, type ConductivityResult } from '../../analyses/conductivity.js';
import { parseChargeRules } from '../store/charges.js';
import { resolveLayout } from '../store/layout.js';
import { addTrajectoryOptions, emit, runOnTrajectory, type TrajectoryOptions, type TrajectoryRun } from './common.js';
import {
  addMemoryOption,
  addPlateauOptions,
  addWindowOptions,
  batchedMsd,
  dTable,
  plateauOptions,
  windowOptions,
  type PlateauCliOptions,
  type WindowCliOptions,
} from './msd.js';
import { planSiteBatches } from './batching.js';
import { finishPasses } from '../runner.js';
import { parseQuantity } from '../units.js';
import { UsageError } from '../errors.js';
import { parseSelection } from '../selection.js';
import { checkOutputFile, formatQuantity, formatSig, formatTable, toCsv, writeFileAtomic } from '../output.js';
import type { Quantity } from '../types.js';
import { CAUTION } from '../caution.js';

interface ConductivityCliOptions extends TrajectoryOptions, WindowCliOptions, PlateauCliOptions {
  maxMemory?: string;
  charges?: string;
  temperature: string;
  molecules?: boolean;
  keepDrift?: boolean;
  greenKubo?: boolean;
  ions?: string;
  csv?: string;
}

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
        ['ionicity σ_EH/σ_NE', formatQuantity(r.ionicity), ''],
        ['Haven ratio σ_NE/σ_EH', formatQuantity(r.havenRatio), ''],
        ['molar conductivity Λ = σ_EH/c', formatQuantity(r.molarConductivity, 1e4, 'S cm²/mol'), r.concentration ? `c = ${formatSig(r.concentration.value, 4)} mol/L (cations)` : ''],
        ['status', r.converged ? 'ok' : 'NOT CONVERGED', ''],
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
        s.converged ? 'ok' : 'NOT CONVERGED',
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

/** Register the command on the program (src/commands/index.ts). */
export function register(program: Command): void {
  const cmd = program
    .command('conductivity <file>')
    .description('ionic conductivity: Nernst–Einstein, Einstein–Helfand and Green–Kubo, ionicity, Haven ratio, molar conductivity')
    .option('--charges <list>', 'charges by selection, e.g. "Na=+1,Cl=-1" (default: the formal charges in the file)')
    .requiredOption('--temperature <T>', 'temperature of the run, e.g. 300K')
    .option('--molecules', 'molecular ions: follow molecule (residue) centres of mass, charge = sum of atom charges')
    .option('--keep-drift', 'do not remove the centre-of-mass drift (removed by default)')
    .option('--no-green-kubo', 'skip the Green–Kubo value (and do not hold velocities in memory)')
    .option(
      '--ions <sel>',
      'atoms to count as ions in the Nernst–Einstein sum and the concentration (default: single atoms or, with --molecules, molecules with a non-zero whole charge; give it for scaled charges such as ±0.8)',
    )
    .option('--csv <file>', 'write the collective MSD and running Green–Kubo conductivity to this CSV file');
  addWindowOptions(cmd);
  addPlateauOptions(cmd, false);
  addMemoryOption(cmd);
  addTrajectoryOptions(cmd).action(async (file: string, opts: ConductivityCliOptions) => {
    const warnings: string[] = [];
    const temperature = parseQuantity(opts.temperature, 'temperature', '--temperature', 'K');
    if (!(temperature > 0)) throw new UsageError('--temperature must be positive');
    const charges = opts.charges !== undefined ? parseChargeRules(opts.charges) : null;
    if (opts.csv) checkOutputFile(opts.csv, [file], '--csv');
    const wo = windowOptions(opts);
    const po = plateauOptions(opts);
    const copts = {
      ...wo,
      ...po,
      segments: wo.segments ?? po.segments,
      temperature,
      charges,
      molecules: opts.molecules,
      keepDrift: opts.keepDrift,
      greenKubo: opts.greenKubo !== false,
      ions: opts.ions ?? null,
    };
    if (opts.ions !== undefined) parseSelection(opts.ions);
    const layoutSpec = conductivityLayout(copts);
    // One read holds positions (+ velocities for Green–Kubo) of every ion; batched reads hold
    // positions only, the collective sums Σq r and Σq v being kept per frame by the first read.
    const plan = await planSiteBatches(file, opts, layoutSpec, copts.greenKubo ? 48 : 24, 24);
    let results: ConductivityResult;
    let run: TrajectoryRun;
    if (plan) {
      const mo = { fitFrom: wo.fitFrom, fitTo: wo.fitTo, tolerance: wo.tolerance, segments: copts.segments, nonGaussian: false };
      const b = await batchedMsd(file, opts, plan, layoutSpec, !opts.keepDrift, mo, warnings, {
        collectiveCharges: true,
        collectiveVelocities: copts.greenKubo,
      });
      run = b.run;
      const layout = resolveLayout(layoutSpec, b.ctx.topology);
      results = analyseConductivity(b.store, layout, b.ctx, copts, b.result, { reads: b.result.reads, bytesHeld: b.result.bytesHeld, note: b.result.memoryNote ?? undefined });
    } else {
      const pass = conductivityPass(copts);
      run = await runOnTrajectory(file, opts, [pass], warnings);
      results = finishPasses([pass], run.partials, run.ctx).conductivity as ConductivityResult;
    }
    if (opts.csv) await writeFileAtomic(opts.csv, conductivityCsv(results));
    emit('conductivity', opts, [run.input], { ...opts }, results, warnings, () => renderConductivity(file, results));
  });
}
