/**
 * The report's self-diffusion section: D from the MSD (analyses/msd.ts) and from the VACF
 * (analyses/vacf.ts) per species, with the joins of D and the viscosity handed over by the
 * joins step (src/report/joins.ts: D∞, r_H, r_H/r_crystal). Verdicts come with the Estimates.
 */
import { formatSig, formatValue } from '../../output.js';
import { hasReason, isOk } from '../../estimate.js';
import { CORRELATION_SAMPLING_RATIO } from '../../plateau.js';
import { trapezoidExponentialBias } from '../../numerics/trapezoid.js';
import { stokesFactor, PROPAGATION_RULE, YEH_HUMMER_XI } from '../../transport.js';
import { compareEstimates, DISAGREEMENT_FACTOR, type Agreement } from '../../numerics/compare.js';
import type { MsdGroupResult, MsdResult } from '../../../analyses/msd.js';
import type { VacfGroupResult, VacfResult } from '../../../analyses/vacf.js';
import type { ConvergenceVerdict, ReportFigure } from '../html.js';
import { msdWindowText, type ReportJoins, type SpeciesJoin } from '../joins.js';
import { D_SCALE, D_UNIT, joinedText, omit, range, scaledValue, verdictText, type ReportContext, type SectionPart, type SummaryEntry } from '../model.js';

/** Smallest C(Δt)/C(0) of a VACF sampled every Δt that the report integrates without a flag. */
export const VACF_SAMPLING_RATIO = CORRELATION_SAMPLING_RATIO;

/**
 * The report's short wording of a VACF sampled too coarsely for the trapezoid rule (the VACF
 * analysis flags it with code 'vacf.coarse-sampling'): null when C(dt)/C(0) ≥ VACF_SAMPLING_RATIO
 * (or not finite), otherwise the fall within one frame interval and the overestimate the first
 * trapezoid would have for an exponential decay, x·coth x − 1 with x = −ln(r)/2 (src/fit.ts
 * `trapezoidExponentialBias`). A VACF that has lost most of its value within one frame interval is
 * mostly inside the first trapezoid, whose area depends on the unseen shape.
 */
export function vacfSamplingProblem(normalized: ArrayLike<number>, dt: number): string | null {
  if (normalized.length < 2 || !Number.isFinite(normalized[1])) return null;
  const r = normalized[1];
  if (r >= VACF_SAMPLING_RATIO) return null;
  const head = `the VACF falls to ${formatSig(100 * r, 2)} % of C(0) within one frame interval (${formatSig(dt, 4)} ps), too coarse to integrate`;
  if (!(r > 0)) return `${head}; the MSD value does not depend on this sampling`;
  return `${head} (for an exponential decay the first trapezoid would be ${formatSig(100 * trapezoidExponentialBias(r), 2)} % too large); the MSD value does not depend on this sampling`;
}

/** What the section collects while it goes through the species. */
interface DiffusionParts {
  figures: ReportFigure[];
  rows: string[][];
  summary: SummaryEntry[];
  convergence: ConvergenceVerdict[];
  msdGroups: Record<string, unknown>[];
  vacfGroups: Record<string, unknown>[];
  comparisons: Array<{ label: string } & Agreement>;
  samplingNotes: string[];
}

/** The MSD of one species: CSV, log-log figure, summary row, convergence check; the table cells. */
function msdPart(g: MsdGroupResult, dt: number, out: DiffusionParts, ctx: ReportContext): string[] {
  const label = g.label;
  const c = ctx.files;
  const csv = c.csv(`msd-${label}`, ['time_ps', 'msd_A2', 'msd_x_A2', 'msd_y_A2', 'msd_z_A2'], [g.time, g.msd, g.msdXYZ[0], g.msdXYZ[1], g.msdXYZ[2]]);
  // A line ∝ t through the MSD at the middle of the window: on log-log axes, slope 1 = diffusive.
  const mid = Math.round((g.fit.from + g.fit.to) / 2 / dt);
  const ref = g.msd[mid] / g.time[mid];
  const refX: number[] = [];
  const refY: number[] = [];
  for (let k = 0; k < g.time.length; k++) if (g.time[k] >= g.fit.from && g.time[k] <= g.fit.to) { refX.push(g.time[k]); refY.push(ref * g.time[k]); }
  out.figures.push(
    c.line(`msd-${label}`, 'diffusion', csv, {
      title: `MSD of ${label}`,
      caption: `Mean-squared displacement of ${label} (${g.count} sites, all time origins, drift removed) on logarithmic axes; shaded: the fit window of the slope; dashed: slope 1 (diffusive) through the window`,
      xLabel: 'lag time (ps)', yLabel: 'MSD (Å²)', logX: true, logY: true,
      markers: { spans: [{ from: g.fit.from, to: g.fit.to, label: `fit window ${range(g.fit.from, g.fit.to)}` }] },
    }, [{ name: `MSD ${label}`, x: g.time, y: g.msd, xCol: 'time_ps', yCol: 'msd_A2' }], Number.isFinite(ref) && ref > 0 ? [{ name: 'slope 1 (diffusive)', x: refX, y: refY, dashed: true }] : []),
  );
  const ok = isOk(g.diffusion);
  out.summary.push({
    key: `diffusion.msd.${label}`, quantity: `D(${label}), periodic box`, value: g.diffusion, scale: D_SCALE, unit: D_UNIT, method: 'MSD slope (Einstein)', window: msdWindowText(g),
    verdict: verdictText(g.diffusion, 'converged', 'see the section'), ok,
  });
  out.convergence.push({ name: `D(${label}) from the MSD`, verdict: verdictText(g.diffusion, `converged; fit ${range(g.fit.from, g.fit.to)}, ${g.segmentDiffusion.length} segments`, 'see the section'), reliable: ok });
  out.msdGroups.push({ ...omit(g, ['time', 'msd', 'msdXYZ']), csv: csv.name });
  return [scaledValue(g.diffusion, D_SCALE), range(g.fit.from, g.fit.to)];
}

/** The joins of one species' D (from the joins step): summary rows and the table cells. */
function joinPart(j: SpeciesJoin, boundary: ReportContext['boundary'], out: DiffusionParts): string[] {
  const label = j.label;
  out.summary.push({
    key: `joins.yehHummer.${label}`, quantity: `D(${label}), infinite system`, value: j.corrected, scale: D_SCALE, unit: D_UNIT, method: `Yeh–Hummer, ξ = ${YEH_HUMMER_XI}`,
    window: j.window, verdict: joinedText(j.corrected), ok: isOk(j.corrected),
  });
  out.summary.push({
    key: `joins.stokesEinstein.${label}`, quantity: `hydrodynamic radius of ${label}`, value: j.radius, scale: 1, unit: 'Å', method: `Stokes–Einstein (${boundary}, c = ${stokesFactor(boundary)}) with D∞`,
    window: j.window, verdict: joinedText(j.radius), ok: isOk(j.radius),
  });
  if (j.ratio && j.crystal) {
    out.summary.push({
      key: `joins.radiusRatio.${label}`, quantity: `hydrodynamic / crystal radius of ${label}`, value: j.ratio, scale: 1, unit: '1', method: `r_H / Shannon r(${j.crystal.name}) = ${j.crystal.radiusA} Å`,
      window: j.window, verdict: joinedText(j.ratio), ok: isOk(j.ratio),
    });
  }
  return [
    scaledValue(j.corrected, D_SCALE),
    formatValue(j.radius.value, j.radius.uncertainty),
    j.crystal ? `${j.crystal.radiusA} Å (${j.crystal.name})` : '—',
    j.ratio ? formatValue(j.ratio.value, j.ratio.uncertainty) : '—',
  ];
}

/** The VACF of one species: CSV, running-integral figure, summary row, checks; the table cells. */
function vacfPart(v: VacfGroupResult, g: MsdGroupResult | null, vacf: VacfResult, out: DiffusionParts, ctx: ReportContext): string[] {
  const label = v.label;
  const csv = ctx.files.csv(`vacf-${label}`, ['time_ps', 'vacf_A2_per_ps2', 'vacf_normalised', 'running_D_m2_per_s'], [v.time, v.vacf, v.normalized, v.runningIntegral]);
  out.figures.push(
    ctx.files.line(`vacf-running-D-${label}`, 'diffusion', csv, {
      title: `VACF running integral D(t) of ${label}`,
      caption: `D(t) = (1/3)∫⟨v(0)·v(t)⟩dt for ${label} (velocities from the ${vacf.velocitySource}); shaded: the plateau window, line: D`,
      xLabel: 'lag time (ps)', yLabel: `D(t) (${D_UNIT})`,
      markers: {
        spans: [{ from: v.plateau.from, to: v.plateau.to, label: v.plateau.found ? 'plateau' : 'no plateau: window shown' }],
        horizontal: Number.isFinite(v.diffusion.value) ? [{ y: v.diffusion.value * D_SCALE, label: `D = ${formatSig(v.diffusion.value * D_SCALE, 4)}` }] : [],
      },
    }, [{ name: `D(t) ${label}`, x: v.time, y: Array.from(v.runningIntegral, (x) => x * D_SCALE), xCol: 'time_ps', yCol: 'running_D_m2_per_s' }]),
  );
  const ok = isOk(v.diffusion);
  out.summary.push({
    key: `diffusion.vacf.${label}`, quantity: `D(${label}), periodic box`, value: v.diffusion, scale: D_SCALE, unit: D_UNIT, method: 'VACF integral (Green–Kubo)', window: `plateau ${range(v.plateau.from, v.plateau.to)}`,
    verdict: verdictText(v.diffusion, 'converged', 'see the section'), ok,
  });
  out.convergence.push({ name: `D(${label}) from the VACF`, verdict: verdictText(v.diffusion, `converged; plateau ${range(v.plateau.from, v.plateau.to)}`, 'see the section'), reliable: ok });
  // The analysis flags coarse sampling; the report repeats it in its own short words.
  const sampling = hasReason(v.diffusion, 'vacf.coarse-sampling') ? vacfSamplingProblem(v.normalized, vacf.frameInterval) : null;
  if (sampling) out.samplingNotes.push(`${label}: ${sampling}`);
  if (g) out.convergence.push(comparison(label, g, v, out));
  out.vacfGroups.push({ ...omit(v, ['time', 'vacf', 'normalized', 'runningIntegral', 'spectrum']), csv: csv.name });
  return [scaledValue(v.diffusion, D_SCALE), range(v.plateau.from, v.plateau.to)];
}

/** Two routes to one number: MSD against VACF, flagged by the src/commands/diffusion.ts rule. */
function comparison(label: string, g: MsdGroupResult, v: VacfGroupResult, out: DiffusionParts): ConvergenceVerdict {
  const cmp = compareEstimates(g.diffusion, v.diffusion);
  out.comparisons.push({ label, ...cmp });
  return {
    name: `D(${label}): MSD against VACF`,
    verdict:
      cmp.agree === null
        ? 'no comparison: an uncertainty is missing'
        : `${cmp.agree ? 'agree' : 'DISAGREE'}: difference ${scaledValue(cmp.difference, D_SCALE)} ${D_UNIT}, ${formatSig(cmp.sigmas!, 2)} combined standard errors (flagged above ${DISAGREEMENT_FACTOR})`,
    reliable: cmp.agree === true,
  };
}

/** The section's paragraphs: the rules of both routes, memory, sampling and the joins' terms. */
function diffusionNotes(msd: MsdResult | null, vacf: VacfResult | null, skippedVacf: string | undefined, joins: ReportJoins, samplingNotes: string[], ctx: ReportContext): string[] {
  const notes: string[] = [];
  if (msd) notes.push(`MSD: ${msd.rules.window}; uncertainty: ${msd.rules.uncertainty}; ${msd.driftNote}.`);
  // MSD-type analyses hold whole time series: say how much (and how many reads, when batched).
  if (msd) notes.push(`Memory: ${msd.memoryNote ?? `${formatSig(msd.bytesHeld / 2 ** 20, 3)} MiB of coordinates held in one read`}.`);
  if (vacf) notes.push(`VACF: ${vacf.rules.plateau}; uncertainty: ${vacf.rules.uncertainty}.`);
  if (samplingNotes.length) notes.push(`VACF sampling: ${samplingNotes.join('; ')}.`);
  if (skippedVacf) notes.push(`VACF not computed: ${skippedVacf}.`);
  if (joins.species.size && joins.box) {
    notes.push(
      `Infinite-system D: Yeh–Hummer correction k_B T ξ/(6π η L) with ξ = ${YEH_HUMMER_XI}, η from the pressure table, L = ${formatSig(joins.box.length, 6)} Å (${joins.box.note}). ` +
        `Hydrodynamic radius r_H = k_B T/(${stokesFactor(ctx.boundary)}π η D∞) (${ctx.boundary} boundary), compared with Shannon's six-coordinate crystal radius where the ion is tabulated. ` +
        `Uncertainties: ${PROPAGATION_RULE}; for r_H the dependence of D∞ on η is included.`,
    );
  } else if (joins.missing) notes.push(joins.missing);
  return notes;
}

/**
 * The self-diffusion section: per species the MSD (CSV, figure, D), the joins of D with η, the
 * VACF (CSV, figure, D) and the MSD–VACF comparison; one table row per species; summary rows in
 * that order; results.json gets both analyses without their curves, the sampling rule and
 * problems, and the comparisons.
 */
export function diffusionSection(msd: MsdResult | null, vacf: VacfResult | null, skippedVacf: string | undefined, joins: ReportJoins, ctx: ReportContext): SectionPart<Record<string, unknown>> {
  const out: DiffusionParts = { figures: [], rows: [], summary: [], convergence: [], msdGroups: [], vacfGroups: [], comparisons: [], samplingNotes: [] };
  const labels = (msd?.groups ?? vacf?.groups ?? []).map((g) => g.label);
  for (const label of labels) {
    const g = msd?.groups.find((x) => x.label === label) ?? null;
    const v = vacf?.groups.find((x) => x.label === label) ?? null;
    const row = [label, String(g?.count ?? v?.count ?? '')];
    if (g) {
      row.push(...msdPart(g, msd!.frameInterval, out, ctx));
      const j = joins.species.get(label);
      row.push(...(j ? joinPart(j, ctx.boundary, out) : ['—', '—', '—', '—']));
    } else row.push('—', '—', '—', '—', '—', '—');
    row.push(...(v ? vacfPart(v, g, vacf!, out, ctx) : ['—', '—']));
    out.rows.push(row);
  }
  return {
    section: {
      id: 'diffusion',
      title: 'Self-diffusion',
      text: diffusionNotes(msd, vacf, skippedVacf, joins, out.samplingNotes, ctx).join('\n\n'),
      figures: out.figures,
      tables: [{
        caption: `Per species (D in ${D_UNIT})`,
        headers: ['species', 'sites', 'D (MSD)', 'fit window', 'D∞ (Yeh–Hummer)', 'r_H (Å)', 'crystal radius', 'r_H / r_crystal', 'D (VACF)', 'plateau'],
        rows: out.rows,
      }],
    },
    summary: out.summary,
    convergence: out.convergence,
    json: {
      msd: msd ? { ...omit(msd, ['groups']), groups: out.msdGroups } : null,
      vacf: vacf ? { ...omit(vacf, ['groups']), groups: out.vacfGroups } : null,
      vacfSampling: { rule: `C(Δt)/C(0) must be at least ${VACF_SAMPLING_RATIO}: for an exponential decay the trapezoid area of the first interval is then at most ${(100 * trapezoidExponentialBias(VACF_SAMPLING_RATIO)).toFixed(1)} % too large`, problems: out.samplingNotes },
      msdAgainstVacf: { rule: `flagged when |D_MSD − D_VACF| > ${DISAGREEMENT_FACTOR}·√(σ_MSD² + σ_VACF²)`, species: out.comparisons },
    },
  };
}
