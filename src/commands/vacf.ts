/**
 * `sojourn vacf FILE`: velocity autocorrelation per species, the Green–Kubo self-diffusion
 * coefficient on the running integral's plateau with a segment uncertainty, and the vibrational
 * spectrum (Hann-tapered cosine transform) in THz and cm⁻¹.
 */
import type { Command } from 'commander';
import { vacfPass, type VacfResult } from '../../analyses/vacf.js';
import { addTrajectoryOptions, emit, runOnTrajectory, type TrajectoryOptions } from './common.js';
import { addPlateauOptions, addSiteOptions, dTable, plateauOptions, siteOptions, type PlateauCliOptions, type SiteCliOptions } from './msd.js';
import { finishPasses } from '../runner.js';
import { formatSig, formatTable, refuseOverwritingInputs, toCsv, writeFileAtomic } from '../output.js';
import { CAUTION } from '../caution.js';

interface VacfCliOptions extends TrajectoryOptions, SiteCliOptions, PlateauCliOptions {
  csv?: string;
  spectrumCsv?: string;
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
  cmd.option('--csv <file>', 'write the VACF and running integral to this CSV file').option('--spectrum-csv <file>', 'write the spectra to this CSV file');
  addTrajectoryOptions(cmd).action(async (file: string, opts: VacfCliOptions) => {
    const warnings: string[] = [];
    const po = plateauOptions(opts);
    for (const f of [opts.csv, opts.spectrumCsv]) if (f) refuseOverwritingInputs(f, [file]);
    const pass = vacfPass({ ...siteOptions(opts), ...po });
    const run = await runOnTrajectory(file, opts, [pass], warnings);
    const results = finishPasses([pass], run.partials, run.ctx).vacf as VacfResult;
    if (opts.csv) await writeFileAtomic(opts.csv, vacfCsv(results));
    if (opts.spectrumCsv) await writeFileAtomic(opts.spectrumCsv, spectrumCsv(results));
    emit('vacf', opts, [run.input], { ...opts }, results, warnings, () => renderVacf(file, results));
  });
}
