/**
 * The report model: the joins between analyses (finite-size-corrected diffusion, Stokes–Einstein
 * radii, Nernst–Einstein against Einstein–Helfand conductivity, the Walden product), the summary
 * table, one CSV file per curve, one SVG file per plot, the HTML model and results.json.
 *
 * Everything here is pure: analyses run in src/commands/report.ts, files are written by
 * src/report/write.ts.
 *
 * Uncertainties of joined numbers are propagated to first order (JCGM 100:2008, "GUM", §5.1.2:
 * u²(y) = Σ (∂f/∂x_i)² u²(x_i) for independent inputs); where two inputs of a join are not
 * independent the derivation is written at the function. Every joined number lists its inputs
 * with the windows they came from.
 */
import { CORRELATION_SAMPLING_RATIO, trapezoidExponentialBias } from '../fit.js';
import type { Quantity } from '../types.js';
import { quantity } from '../types.js';
import { ANGSTROM } from '../units.js';
import {
  YEH_HUMMER_XI,
  productUncertainty,
  stokesEinsteinRadius,
  stokesFactor,
  waldenProduct,
  waldenToConventional,
  yehHummerCorrection,
  type Boundary,
} from '../transport.js';
import { crystalRadius } from '../radii.js';
import { CAUTION } from '../caution.js';
import { formatSig, formatTable, formatValue, toCsv, toJson, type InputRecord } from '../output.js';
import { barPlot, blockingPlot, linePlot, type Band, type PlotMarkers } from './svg.js';
import { renderReportHtml, type ConvergenceVerdict, type ReportFigure, type ReportModel, type ReportSection, type SummaryRow } from './html.js';
import { compareEstimates, DISAGREEMENT_FACTOR, type Agreement } from '../commands/diffusion.js';
import type { OverviewResult } from '../../analyses/overview.js';
import type { RdfPairResult, RdfResult } from '../../analyses/rdf.js';
import type { ShellResult } from '../../analyses/shell.js';
import type { MsdResult } from '../../analyses/msd.js';
import type { VacfResult } from '../../analyses/vacf.js';
import type { ConductivityResult } from '../../analyses/conductivity.js';
import type { ViscosityResult } from '../../analyses/viscosity.js';
import type { SeriesReport } from '../../analyses/converge.js';

/** How the joined uncertainties are obtained (written into results.json and the report). */
export const PROPAGATION_RULE =
  'first-order (linear) propagation of one-standard-error uncertainties, u²(y) = Σ (∂y/∂x_i)² u²(x_i) ' +
  '(JCGM 100:2008, GUM §5.1.2); inputs from different analyses are treated as independent; ' +
  'the temperature and the box length are taken as exact';

export { ALL_PAIRS_MAX_LABELS, MAX_RDF_PAIRS, labelSelection, labelCounts, chooseRdfPairs, chargeLayoutOnStore, type RdfPairChoice } from './choose.js';
import type { RdfPairChoice } from './choose.js';


/**
 * Ion name for the crystal-radius table from a label and its charge ("Na", +1 → "Na+";
 * "Mg", +2 → "Mg2+"); null when the charge is unknown, zero or not a whole number.
 */
export function ionName(label: string, charge: number | null): string | null {
  if (charge === null || charge === 0 || !Number.isInteger(charge)) return null;
  const z = Math.abs(charge);
  return `${label}${z === 1 ? '' : z}${charge > 0 ? '+' : '-'}`;
}

// ---------------------------------------------------------------------------------------------
// Joins
// ---------------------------------------------------------------------------------------------

/** One input of a joined number: what it is, its value and the data window it came from. */
export interface JoinInput {
  name: string;
  value: Quantity;
  window: string;
  converged: boolean;
}

/**
 * Uncertainty √(Σ u_i²) of independent contributions (GUM eq. 10 with the sensitivities already
 * applied). A null contribution means "unknown" (its input's uncertainty could not be estimated),
 * never "exact" — an exact input is passed as 0 or left out — so one null makes the result null:
 * a total from the other contributions alone would look precise without being so.
 */
export function rootSumSquares(parts: ReadonlyArray<number | null>): number | null {
  if (parts.some((p) => p === null)) return null;
  return Math.sqrt(parts.reduce<number>((s, p) => s + p! ** 2, 0));
}

/** Names of the inputs of a join whose uncertainty is unknown (null). */
export function inputsWithoutUncertainty(inputs: readonly JoinInput[]): string[] {
  return inputs.filter((i) => i.value.uncertainty === null).map((i) => i.name);
}

/**
 * Verdict of a joined number from its inputs: 'inputs converged' when every input converged and
 * has an uncertainty; otherwise which inputs did not converge and which have no uncertainty (so
 * the joined number has none either, see `rootSumSquares`). ok only in the first case: a number
 * without an error bar, or built on an unconverged input, is not one to rely on.
 */
export function joinVerdict(inputs: readonly JoinInput[]): { verdict: string; ok: boolean } {
  const notConverged = inputs.filter((i) => !i.converged).map((i) => i.name);
  const unknown = inputsWithoutUncertainty(inputs);
  if (notConverged.length === 0 && unknown.length === 0) return { verdict: 'inputs converged', ok: true };
  const parts: string[] = [];
  if (notConverged.length) parts.push(`inputs not converged: ${notConverged.join(', ')}`);
  if (unknown.length) parts.push(`no uncertainty, because ${unknown.join(' and ')} ${unknown.length > 1 ? 'have' : 'has'} none`);
  return { verdict: parts.join('; '), ok: false };
}

/**
 * Ratio a/b of two independent quantities (ionicity σ_EH/σ_NE, Haven ratio σ_NE/σ_EH) with the
 * first-order uncertainty |a/b|·√((u_a/a)² + (u_b/b)²) (GUM eq. 12), null when either input's
 * uncertainty is unknown (null).
 */
export function ratioJoin(a: Quantity, b: Quantity, unit: string): Quantity {
  const r = a.value / b.value;
  return quantity(r, productUncertainty(r, [{ value: a.value, uncertainty: a.uncertainty }, { value: b.value, uncertainty: b.uncertainty, power: -1 }]), unit);
}

/**
 * Finite-size-corrected self-diffusion coefficient D∞ = D_PBC + ΔD, ΔD = k_B T ξ/(6π η L),
 * ξ = 2.837297 (Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004); src/transport.ts). First-order
 * uncertainty with T and L exact: u²(D∞) = u²(D_PBC) + (ΔD · u(η)/η)², since ∂ΔD/∂η = −ΔD/η.
 * A null (unknown) uncertainty of D or η makes u(D∞) null; a null u(η) also makes u(ΔD) null.
 * D in m²/s, η in Pa s, T in K, L in Å.
 */
export function yehHummerJoin(diffusion: Quantity, viscosity: Quantity, temperatureK: number, boxLengthA: number): { corrected: Quantity; correction: Quantity } {
  const dd = yehHummerCorrection(temperatureK, viscosity.value, boxLengthA);
  const uCorr = viscosity.uncertainty === null ? null : (dd * viscosity.uncertainty) / Math.abs(viscosity.value);
  return {
    correction: quantity(dd, uCorr, 'm^2/s'),
    corrected: quantity(diffusion.value + dd, rootSumSquares([diffusion.uncertainty, uCorr]), 'm^2/s'),
  };
}

/**
 * Stokes–Einstein hydrodynamic radius r = k_B T/(c π η D∞) (c = 6 stick, 4 slip; Einstein 1905;
 * src/transport.ts) from the finite-size-corrected D∞ = D + k_B T ξ/(6π η L) (Yeh & Hummer 2004),
 * or from D itself when `boxLengthA` is null. D∞ depends on η, so the two are not independent:
 * with X = η D∞ = η D + k_B T ξ/(6π L), r = k_B T/(c π X) and, to first order with T and L exact,
 * u(X)² = (D u(η))² + (η u(D))², u(r) = r · u(X)/X. Without the correction u(r)/r =
 * √((u(D)/D)² + (u(η)/η)²). A null (unknown) uncertainty of either input gives a null u(r).
 * D in m²/s, η in Pa s; returns Å.
 */
export function stokesRadiusJoin(diffusion: Quantity, viscosity: Quantity, temperatureK: number, boxLengthA: number | null, boundary: Boundary): Quantity {
  const eta = viscosity.value;
  const D = diffusion.value;
  const dInf = boxLengthA === null ? D : D + yehHummerCorrection(temperatureK, eta, boxLengthA);
  const r = stokesEinsteinRadius(dInf, eta, temperatureK, boundary) / ANGSTROM;
  let u: number | null;
  if (boxLengthA === null) {
    u = productUncertainty(r, [{ value: D, uncertainty: diffusion.uncertainty, power: -1 }, { value: eta, uncertainty: viscosity.uncertainty, power: -1 }]);
  } else {
    const X = eta * dInf;
    const uX = rootSumSquares([viscosity.uncertainty === null ? null : D * viscosity.uncertainty, diffusion.uncertainty === null ? null : eta * diffusion.uncertainty]);
    u = uX === null ? null : (Math.abs(r) * uX) / Math.abs(X);
  }
  return quantity(r, u, 'A');
}

/**
 * Walden product W = Λ η (Walden 1906; src/transport.ts) in S m² Pa s/mol and in the
 * conventional S cm² P/mol (× 10⁵), with u(W)/W = √((u(Λ)/Λ)² + (u(η)/η)²) to first order; null
 * when either input's uncertainty is unknown (null).
 */
export function waldenJoin(molarConductivity: Quantity, viscosity: Quantity): { si: Quantity; conventional: Quantity } {
  const w = waldenProduct(molarConductivity.value, viscosity.value);
  const u = productUncertainty(w, [
    { value: molarConductivity.value, uncertainty: molarConductivity.uncertainty },
    { value: viscosity.value, uncertainty: viscosity.uncertainty },
  ]);
  return {
    si: quantity(w, u, 'S m^2 Pa s/mol'),
    conventional: quantity(waldenToConventional(w), u === null ? null : waldenToConventional(u), 'S cm^2 P/mol'),
  };
}

/** Smallest C(Δt)/C(0) of a VACF sampled every Δt that the report integrates without a flag. */
export const VACF_SAMPLING_RATIO = CORRELATION_SAMPLING_RATIO;

/** Relative trapezoid overestimate for an exponential decay (see src/fit.ts). */
export { trapezoidExponentialBias };

/**
 * Whether a VACF sampled every `dt` ps can be integrated by the trapezoid rule: null when
 * C(dt)/C(0) ≥ VACF_SAMPLING_RATIO, otherwise the reason (with the overestimate the first
 * interval would have for an exponential decay). A VACF that has lost most of its value within
 * one frame interval is mostly inside the first trapezoid, whose area depends on the unseen shape.
 */
export function vacfSamplingProblem(normalized: ArrayLike<number>, dt: number): string | null {
  if (normalized.length < 2 || !Number.isFinite(normalized[1])) return null;
  const r = normalized[1];
  if (r >= VACF_SAMPLING_RATIO) return null;
  const head = `the VACF falls to ${formatSig(100 * r, 2)} % of C(0) within one frame interval (${formatSig(dt, 4)} ps), too coarse to integrate`;
  if (!(r > 0)) return `${head}; the MSD value does not depend on this sampling`;
  return `${head} (for an exponential decay the first trapezoid would be ${formatSig(100 * trapezoidExponentialBias(r), 2)} % too large); the MSD value does not depend on this sampling`;
}

// ---------------------------------------------------------------------------------------------
// The data a report is built from
// ---------------------------------------------------------------------------------------------

/** Everything the command measured, handed to `buildReport`. */
export interface ReportData {
  title: string;
  version: string;
  /** Program name and every argument as given. */
  commandLine: string[];
  options: Record<string, unknown>;
  started: Date;
  inputs: InputRecord[];
  trajectoryPath: string;
  temperatureK: number;
  boundary: Boundary;
  overview: OverviewResult;
  /** Charge of each label (e), when charges are known and uniform per label. */
  labelCharges: Map<string, number>;
  structure: { result: RdfResult; pairs: RdfPairChoice[]; rule: string } | null;
  shells: Array<{ text: string; result: ShellResult }>;
  msd: MsdResult | null;
  /** ⟨V⟩^(1/3) for Yeh–Hummer, with the note (cubic or not). */
  boxLength: { length: number; note: string } | null;
  vacf: VacfResult | null;
  conductivity: ConductivityResult | null;
  viscosity: { result: ViscosityResult; volumeA3: number; pressureUnit: string; columns: Record<string, string> } | null;
  series: Array<{ source: 'energy table' | 'pressure table' | 'trajectory'; report: SeriesReport; dt: number | null }>;
  /** Analyses not run, with the reason. */
  skipped: Record<string, string>;
  warnings: string[];
}

/** One row of the summary: the quantity in JSON units and how to show it. */
export interface SummaryEntry {
  key: string;
  quantity: string;
  /** JSON units (Å, ps, m²/s, Pa s, S/m, K, …); null = not available. */
  value: Quantity | null;
  /** Display: shown value = value × scale, in `unit`. */
  scale: number;
  unit: string;
  method: string;
  window: string;
  verdict: string;
  ok: boolean;
}

/** A file of the report. */
export interface ReportFile {
  name: string;
  data: string;
}

/** How one SVG relates to its CSV (results.json "figures"; the tests read it). */
export interface FigureRecord {
  svg: string;
  csv: string;
  title: string;
  section: string;
  kind: 'line' | 'bar';
  logX: boolean;
  logY: boolean;
  /** CSV data rows. */
  rows: number;
  /** Plotted every row (false when a long curve was thinned to MAX_PLOT_POINTS). */
  complete: boolean;
  /** Series drawn from the CSV: path data-name, CSV columns, points drawn. */
  series: Array<{ name: string; x: string; y: string; points: number }>;
}

/** What `buildReport` returns. */
export interface BuiltReport {
  /** results.json document (envelope). */
  document: Record<string, unknown>;
  /** CSV and SVG files, then report.html and results.json, in writing order. */
  files: ReportFile[];
  model: ReportModel;
  summary: SummaryEntry[];
  figures: FigureRecord[];
}

// ---------------------------------------------------------------------------------------------
// Small helpers
// ---------------------------------------------------------------------------------------------

/** Longest curve plotted point for point; longer curves are thinned (the CSV keeps every row). */
export const MAX_PLOT_POINTS = 2000;

const range = (from: number, to: number, unit = 'ps') => `${formatSig(from, 4)}–${formatSig(to, 4)} ${unit}`;

function firstReason(notes: readonly string[], fallback: string): string {
  const n = notes.find((x) => x.startsWith('not converged')) ?? notes[0];
  return n ? n.replace(/^not converged:\s*/, '') : fallback;
}

function verdictOf(ok: boolean, notes: readonly string[], good = 'converged'): string {
  return ok ? good : `not converged: ${firstReason(notes, 'see the section')}`;
}

/** Replace quantity-like objects whose value is not finite by null; non-finite uncertainties by null. */
export function finiteQuantities(x: unknown): unknown {
  if (Array.isArray(x)) return x.map(finiteQuantities);
  if (x === null || typeof x !== 'object' || ArrayBuffer.isView(x)) return x;
  if (x instanceof Map) return finiteQuantities(Object.fromEntries(x));
  const o = x as Record<string, unknown>;
  const looksLikeQuantity = ('value' in o && 'unit' in o) || 'uncertainty' in o;
  if (looksLikeQuantity) {
    if (typeof o.value !== 'number' || !Number.isFinite(o.value)) return null;
    if (typeof o.uncertainty === 'number' && !(Number.isFinite(o.uncertainty) && o.uncertainty >= 0)) o.uncertainty = null;
  }
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(o)) out[k] = finiteQuantities(v);
  return out;
}

/** Object without the given keys (curves that go to CSV files instead of results.json). */
function omit<T extends object>(o: T, keys: string[]): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(o)) if (!keys.includes(k)) out[k] = v;
  return out;
}

/** Quote a command-line argument for display (POSIX shell single quotes when needed). */
export function shellQuote(arg: string): string {
  return /^[A-Za-z0-9_./:=,+@%^-]+$/.test(arg) ? arg : `'${arg.replace(/'/g, `'\\''`)}'`;
}

/** File names: safe characters only, unique case-insensitively. */
class Names {
  private used = new Set<string>();
  /** A new file name from a stem and an extension. */
  take(stem: string, ext: string): string {
    const base = stem.replace(/[^A-Za-z0-9._+-]+/g, '_').replace(/^[._]+/, '') || 'file';
    let name = `${base}.${ext}`;
    for (let k = 2; this.used.has(name.toLowerCase()); k++) name = `${base}-${k}.${ext}`;
    this.used.add(name.toLowerCase());
    return name;
  }
}

/** Indices to plot: all rows, or at most MAX_PLOT_POINTS (log-spaced for a log x axis). */
function plotIndices(n: number, logX: boolean): number[] {
  const all = Array.from({ length: n }, (_, i) => i);
  if (n <= MAX_PLOT_POINTS) return all;
  if (!logX) {
    const stride = Math.ceil(n / MAX_PLOT_POINTS);
    const idx = all.filter((i) => i % stride === 0);
    if (idx[idx.length - 1] !== n - 1) idx.push(n - 1);
    return idx;
  }
  const set = new Set<number>([0]);
  const per = MAX_PLOT_POINTS - 1;
  for (let k = 0; k <= per; k++) set.add(Math.min(n - 1, Math.round(Math.pow(n - 1, k / per))));
  return [...set].sort((a, b) => a - b);
}

function countPoints(x: ArrayLike<number>, y: ArrayLike<number>, logX: boolean, logY: boolean): number {
  let c = 0;
  for (let i = 0; i < x.length; i++) {
    if (!Number.isFinite(x[i]) || !Number.isFinite(y[i])) continue;
    if ((logX && !(x[i] > 0)) || (logY && !(y[i] > 0))) continue;
    c++;
  }
  return c;
}

interface CurveSeries {
  name: string;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** CSV columns the series is drawn from. */
  xCol: string;
  yCol: string;
  band?: { lower: ArrayLike<number>; upper: ArrayLike<number>; label: string };
  dashed?: boolean;
  markers?: boolean;
}

/** Collects files and figures while the sections are built. */
class Collector {
  readonly names = new Names();
  readonly files: ReportFile[] = [];
  readonly figures: FigureRecord[] = [];

  csv(stem: string, columns: string[], data: ArrayLike<number>[]): { name: string; rows: number } {
    const name = this.names.take(stem, 'csv');
    this.files.push({ name, data: toCsv(columns, data) });
    return { name, rows: data.length ? data[0].length : 0 };
  }

  /** A line plot of CSV data (same rows), thinned to MAX_PLOT_POINTS when longer. */
  line(
    stem: string,
    section: string,
    csv: { name: string; rows: number },
    spec: { title: string; caption: string; xLabel: string; yLabel: string; logX?: boolean; logY?: boolean; markers?: PlotMarkers; xRange?: [number, number]; yRange?: [number, number] },
    series: CurveSeries[],
    extra: Array<{ name: string; x: ArrayLike<number>; y: ArrayLike<number>; dashed?: boolean }> = [],
  ): ReportFigure {
    const logX = spec.logX === true;
    const logY = spec.logY === true;
    const idx = plotIndices(csv.rows, logX);
    const pick = (a: ArrayLike<number>) => (idx.length === a.length ? Array.from(a) : idx.map((i) => a[i]));
    const plotted = series.map((s) => {
      const x = pick(s.x);
      const y = pick(s.y);
      const band: Band | undefined = s.band ? { lower: pick(s.band.lower), upper: pick(s.band.upper), label: s.band.label } : undefined;
      return { name: s.name, x, y, band, dashed: s.dashed, markers: s.markers };
    });
    const name = this.names.take(stem, 'svg');
    const svg = linePlot({
      title: spec.title,
      xLabel: spec.xLabel,
      yLabel: spec.yLabel,
      logX,
      logY,
      markers: spec.markers,
      xRange: spec.xRange,
      yRange: spec.yRange,
      id: name.replace(/\.svg$/, ''),
      series: [...plotted, ...extra.map((e) => ({ name: e.name, x: e.x, y: e.y, dashed: e.dashed, markers: false }))],
    });
    this.files.push({ name, data: svg });
    this.figures.push({
      svg: name,
      csv: csv.name,
      title: spec.title,
      section,
      kind: 'line',
      logX,
      logY,
      rows: csv.rows,
      complete: idx.length === csv.rows,
      series: series.map((s, i) => ({ name: s.name, x: s.xCol, y: s.yCol, points: countPoints(plotted[i].x, plotted[i].y, logX, logY) })),
    });
    return { svg, caption: `${spec.caption} (files ${name}, ${csv.name})` };
  }

  bar(stem: string, section: string, csv: { name: string; rows: number }, title: string, caption: string, xLabel: string, yLabel: string, bars: Array<{ label: string; value: number }>, cols: [string, string]): ReportFigure {
    const name = this.names.take(stem, 'svg');
    const svg = barPlot({ title, xLabel, yLabel, bars, id: name.replace(/\.svg$/, '') });
    this.files.push({ name, data: svg });
    this.figures.push({
      svg: name, csv: csv.name, title, section, kind: 'bar', logX: false, logY: false, rows: csv.rows, complete: bars.length === csv.rows,
      series: [{ name: 'bars', x: cols[0], y: cols[1], points: bars.filter((b) => Number.isFinite(b.value)).length }],
    });
    return { svg, caption: `${caption} (files ${name}, ${csv.name})` };
  }

  blocking(stem: string, section: string, r: SeriesReport, dt: number | null, label: string): ReportFigure {
    const b = r.blocking;
    const lengths = b.sizes.map((s) => (dt === null ? s : s * dt));
    const tUnit = dt === null ? 'samples' : 'ps';
    const csv = this.csv(stem, ['block_samples', `block_length_${tUnit}`, 'standard_error', 'error_of_standard_error'], [b.sizes, lengths, b.standardErrors, b.errorsOfStandardErrors]);
    const unit = r.mean.unit ? ` (${r.mean.unit})` : ' (unit not given)';
    const name = this.names.take(stem, 'svg');
    const svg = blockingPlot({
      title: `Block averaging: ${label}`,
      xLabel: `block length (${tUnit})`,
      yLabel: `s.e. of the mean${unit}`,
      blockLengths: lengths,
      standardErrors: b.standardErrors,
      standardErrorErrors: b.errorsOfStandardErrors,
      plateau: b.plateau ? { value: b.plateau.standardError, from: dt === null ? b.plateau.size : b.plateau.size * dt, label: `plateau ${formatSig(b.plateau.standardError, 3)}` } : undefined,
      id: name.replace(/\.svg$/, ''),
    });
    this.files.push({ name, data: svg });
    this.figures.push({
      svg: name, csv: csv.name, title: `Block averaging: ${label}`, section, kind: 'line', logX: true, logY: false, rows: csv.rows, complete: true,
      series: [{ name: 'standard error from blocks', x: `block_length_${tUnit}`, y: 'standard_error', points: countPoints(lengths, b.standardErrors, true, false) }],
    });
    return {
      svg,
      caption:
        `Standard error of the mean of ${label} from blocks of increasing length (Flyvbjerg & Petersen 1989), production region only; ` +
        `${b.plateau ? 'the plateau is marked' : 'no plateau was found'} (files ${name}, ${csv.name})`,
    };
  }
}

// ---------------------------------------------------------------------------------------------
// Building
// ---------------------------------------------------------------------------------------------

const D_SCALE = 1e9;
const D_UNIT = '10⁻⁹ m²/s';

/** Build the summary, the joins, every CSV and SVG, the HTML and results.json from measured data. */
export function buildReport(data: ReportData, durationSeconds: number): BuiltReport {
  const c = new Collector();
  const summary: SummaryEntry[] = [];
  const sections: ReportSection[] = [];
  const convergence: ConvergenceVerdict[] = [];
  const joins: Record<string, unknown> = { propagation: PROPAGATION_RULE };
  const T = data.temperatureK;
  const ov = data.overview;

  // --- System ---------------------------------------------------------------------------------
  {
    const rows: string[][] = [
      ['trajectory', data.trajectoryPath],
      ['frames used', String(ov.frames)],
      ['atoms', String(ov.atoms)],
      ['species (label: atoms)', Object.entries(ov.species).map(([k, v]) => `${k}: ${v}`).join(', ')],
      ['time between frames', ov.frameInterval ? `${formatSig(ov.frameInterval.value, 6)} ps` : 'unknown'],
      ['time span', ov.timeSpan ? `${formatSig(ov.timeSpan.value, 6)} ps` : 'unknown'],
      ['cell', ov.cell ? `${ov.cell.lengths.map((x) => formatSig(x, 6)).join(' × ')} Å; ${ov.cell.angles.map((x) => formatSig(x, 5)).join(', ')}°${ov.cellVaries ? ' (first frame; the cell varies)' : ''}` : 'none'],
      ['mean volume', ov.meanVolume ? `${formatSig(ov.meanVolume.value, 7)} Å³` : '—'],
      ['mass density', ov.massDensity ? `${formatSig(ov.massDensity.value, 5)} g/cm³` : 'unknown (some masses unknown: give --masses)'],
      ['velocities in the file', ov.hasVelocities ? 'yes' : 'no'],
      ['temperature (given)', `${formatSig(T, 6)} K`],
      ['kinetic temperature', ov.kineticTemperature ? `${formatSig(ov.kineticTemperature.value, 4)} K (equipartition over 3N degrees of freedom, from the velocities and masses)` : '—'],
      ...ov.atomKinds.map((k) => [`mass of ${k.label}`, `${k.mass !== null ? `${formatSig(k.mass, 6)} g/mol` : 'unknown'} (${k.from}); element ${k.element === 'X' ? 'none' : k.element}${k.elementFrom !== k.from ? ` (${k.elementFrom})` : ''}`]),
      ...Object.entries(data.inputs[0]?.fileUnits ?? {}).map(([what, u]) => [`${what} read in`, `${u.unit.replace(/^A/, 'Å')} (${u.from})`]),
    ];
    for (const [l, q] of data.labelCharges) rows.push([`charge of ${l}`, `${q > 0 ? '+' : ''}${q} e`]);
    sections.push({ id: 'system', title: 'System', text: 'What was read, and the settings every number below depends on.', figures: [], tables: [{ headers: ['property', 'value'], rows }] });
    if (ov.massDensity && !ov.cellVaries) {
      summary.push({ key: 'system.massDensity', quantity: 'mass density', value: ov.massDensity, scale: 1, unit: 'g/cm³', method: 'total mass / cell volume', window: 'fixed cell', verdict: 'exact for the cell given', ok: true });
    }
  }

  // --- Structure ----------------------------------------------------------------------------------
  const rdfJson: Record<string, unknown>[] = [];
  if (data.structure) {
    const { result, pairs, rule } = data.structure;
    const figures: ReportFigure[] = [];
    const rows: string[][] = [];
    result.pairs.forEach((p: RdfPairResult, i: number) => {
      const ch = pairs[i];
      const tag = `${ch.labelA}–${ch.labelB}`;
      const csv = c.csv(`rdf-${ch.labelA}-${ch.labelB}`, ['r_A', 'g', 'n', 'g_error'], [p.r, p.g, p.n, p.gError.map((x) => (x === null ? NaN : x))]);
      const lower = p.g.map((g, k) => (p.gError[k] === null ? NaN : g - p.gError[k]!));
      const upper = p.g.map((g, k) => (p.gError[k] === null ? NaN : g + p.gError[k]!));
      const vmarks = [];
      if (p.firstPeak) vmarks.push({ x: p.firstPeak.r, label: `first peak ${formatSig(p.firstPeak.r, 4)} Å` });
      if (p.firstMinimum) vmarks.push({ x: p.firstMinimum.r, label: `first minimum ${formatSig(p.firstMinimum.r, 4)} Å` });
      figures.push(
        c.line(`rdf-${ch.labelA}-${ch.labelB}`, 'structure', csv, {
          title: `g(r), ${tag}`,
          caption: `Pair distribution g(r) of ${tag} with ±1 s.e. over ${p.blocks} time blocks; first peak and first minimum marked`,
          xLabel: 'r (Å)',
          yLabel: 'g(r) (dimensionless)',
          xRange: [0, result.rMax.value],
          markers: { vertical: vmarks, horizontal: [{ y: 1, label: 'g = 1' }] },
        }, [{ name: `g(r) ${tag}`, x: p.r, y: p.g, xCol: 'r_A', yCol: 'g', band: { lower, upper, label: '±1 s.e.' } }]),
      );
      const cn = p.coordinationNumber;
      figures.push(
        c.line(`coordination-${ch.labelA}-${ch.labelB}`, 'structure', csv, {
          title: `n(r), ${tag}`,
          caption: `Running coordination number n(r): mean number of ${ch.labelB} atoms within r of a ${ch.labelA} atom${cn ? `; ${formatValue(cn.value, cn.uncertainty)} at the first minimum` : ''}`,
          xLabel: 'r (Å)',
          yLabel: `n(r) (${ch.labelB} atoms)`,
          xRange: [0, result.rMax.value],
          markers: {
            vertical: p.firstMinimum ? [{ x: p.firstMinimum.r, label: `first minimum ${formatSig(p.firstMinimum.r, 4)} Å` }] : [],
            horizontal: cn ? [{ y: cn.value, label: `n = ${formatSig(cn.value, 4)}` }] : [],
          },
        }, [{ name: `n(r) ${tag}`, x: p.r, y: p.n, xCol: 'r_A', yCol: 'n' }]),
      );
      rows.push([
        tag,
        `${p.nA} / ${p.nB}`,
        p.firstPeak ? `${formatSig(p.firstPeak.r, 4)} Å (g = ${formatSig(p.firstPeak.g, 4)})` : '—',
        p.firstMinimum ? `${formatSig(p.firstMinimum.r, 4)} Å (g = ${formatSig(p.firstMinimum.g, 3)})` : '—',
        cn ? formatValue(cn.value, cn.uncertainty) : '—',
        String(p.blocks),
        p.converged ? 'ok' : p.notes.join('; '),
      ]);
      summary.push({
        key: `structure.coordination.${tag}`,
        quantity: `coordination number ${ch.labelB} around ${ch.labelA}`,
        value: cn,
        scale: 1,
        unit: '1',
        method: 'n(r) at the first minimum of g(r)',
        window: p.firstMinimum ? `r ≤ ${formatSig(p.firstMinimum.r, 4)} Å` : 'no first minimum',
        verdict: p.converged ? `converged (${p.blocks} blocks)${p.notes.length ? `; ${p.notes[0]}` : ''}` : `not converged: ${p.notes[0] ?? 'see structure section'}`,
        ok: p.converged && cn !== null,
      });
      rdfJson.push({ ...omit(p, ['r', 'g', 'n', 'gError']), labelA: ch.labelA, labelB: ch.labelB, csv: csv.name });
    });
    sections.push({
      id: 'structure',
      title: 'Structure: pair distribution functions',
      text:
        `Pairs: ${rule}. Bins of ${formatSig(result.binWidth.value, 4)} Å up to ${formatSig(result.rMax.value, 5)} Å (half the smallest cell width at most), ${result.frames} frames. ` +
        `n(r) = 4πρ∫g r² dr is the mean number of B atoms within r of an A atom; the coordination number is n at the first minimum of g smoothed by ${result.pairs[0]?.smoothing ?? 'Savitzky–Golay'}. ` +
        'Uncertainties: one standard error over contiguous time blocks.',
      figures,
      tables: [{ caption: 'First shells', headers: ['pair A–B', 'atoms A / B', 'first peak', 'first minimum', 'coordination number', 'blocks', 'notes'], rows }],
    });
  }

  // --- Neighbour counts (shell) ----------------------------------------------------------------
  const shellJson: Record<string, unknown>[] = [];
  if (data.shells.length) {
    const figures: ReportFigure[] = [];
    const rows: string[][] = [];
    for (const { text, result: r } of data.shells) {
      const tag = `${r.center} around ${r.around}`;
      const stem = `neighbours-${r.center}-${r.around}`;
      const csv = c.csv(stem, ['neighbours', 'fraction'], [r.counts.values, r.counts.fractions]);
      figures.push(
        c.bar(stem, 'shells', csv, `Neighbour counts: ${r.around} within ${formatSig(r.cutoff.value, 4)} Å of ${r.center}`,
          `Fraction of (centre, frame) samples with n neighbours inside the cutoff, ${tag}`, `neighbours within ${formatSig(r.cutoff.value, 4)} Å`, 'fraction of samples (dimensionless)',
          r.counts.values.map((v, i) => ({ label: String(v), value: r.counts.fractions[i] })), ['neighbours', 'fraction']),
      );
      rows.push([text, formatValue(r.meanCount.value, r.meanCount.uncertainty), r.residenceTime ? `${formatValue(r.residenceTime.value, r.residenceTime.uncertainty)} ps` : 'not determined', r.converged ? 'ok' : r.notes.join('; ')]);
      summary.push({
        key: `shell.mean.${text}`, quantity: `mean neighbour count, ${tag}`, value: r.meanCount, scale: 1, unit: '1', method: `count within ${formatSig(r.cutoff.value, 4)} Å`, window: `${r.frames} frames`,
        verdict: r.converged ? 'converged' : `not converged: ${r.notes[0] ?? ''}`, ok: r.converged,
      });
      if (r.residenceTime) {
        summary.push({
          key: `shell.residence.${text}`, quantity: `residence time, ${tag}`, value: r.residenceTime, scale: 1, unit: 'ps', method: 'survival correlation, exponential fit',
          window: r.fitWindow ? range(r.fitWindow.from, r.fitWindow.to) : '—', verdict: r.converged ? 'converged' : `not converged: ${r.notes[0] ?? ''}`, ok: r.converged,
        });
      }
      shellJson.push({ ...omit(r, ['survival']), csv: csv.name });
    }
    sections.push({ id: 'shells', title: 'Neighbour counts', text: 'Shells requested with --shell.', figures, tables: [{ headers: ['shell', 'mean count ± s.e.', 'residence time', 'notes'], rows }] });
  }

  // --- Viscosity (needed by the joins) ------------------------------------------------------------
  const eta = data.viscosity?.result.viscosity;
  const etaUsable = eta !== undefined && Number.isFinite(eta.value) && eta.value > 0;
  const etaOk = data.viscosity?.result.converged === true;
  // The fit window of η ends at the cut-off time.
  const etaWindow = data.viscosity ? `fit ${range(data.viscosity.result.fitWindow.from, data.viscosity.result.fitWindow.to)}` : '';
  const etaInput = (): JoinInput => ({ name: 'shear viscosity η (Green–Kubo)', value: eta!, window: etaWindow, converged: etaOk });
  let viscosityJson: Record<string, unknown> | null = null;
  let viscositySection: ReportSection | null = null;
  if (data.viscosity) {
    const v = data.viscosity.result;
    const ri = v.runningIntegral;
    const csv = c.csv('viscosity-running-integral', ['time_ps', 'eta_Pa_s', 'sigma_Pa_s', 'fit_Pa_s'], [ri.time, ri.eta, ri.sigma, ri.fit]);
    const mPa = (a: ArrayLike<number>) => Array.from(a, (x) => x * 1e3);
    const fig = c.line('viscosity-green-kubo', 'viscosity', csv, {
      title: 'Green–Kubo running integral η(t)',
      caption: `Running integral of the shear-stress autocorrelation, mean over ${v.segments} segments × ${v.components.length} components, band ±σ(t) (spread of one segment); dashed: fitted ${v.fit.model}; the cut-off is where σ(t) exceeds ${Math.round(v.cutoffFraction * 100)} % of η(t)`,
      xLabel: 'lag time (ps)',
      yLabel: 'η(t) (mPa·s)',
      markers: {
        vertical: [{ x: v.cutoffTime.value, label: `cut-off ${formatSig(v.cutoffTime.value, 4)} ps` }],
        horizontal: Number.isFinite(v.viscosity.value) ? [{ y: v.viscosity.value * 1e3, label: `η = ${formatSig(v.viscosity.value * 1e3, 4)} mPa·s` }] : [],
        spans: [{ from: v.fitWindow.from, to: v.fitWindow.to, label: 'fit window' }],
      },
    }, [{
      name: 'η(t), mean of segments', x: ri.time, y: mPa(ri.eta), xCol: 'time_ps', yCol: 'eta_Pa_s',
      band: { lower: Array.from(ri.eta, (e, k) => (e - ri.sigma[k]) * 1e3), upper: Array.from(ri.eta, (e, k) => (e + ri.sigma[k]) * 1e3), label: '±σ(t)' },
    }, { name: `fitted ${v.fit.model}`, x: ri.time, y: mPa(ri.fit), xCol: 'time_ps', yCol: 'fit_Pa_s', dashed: true, markers: false }]);
    const reasons = v.reasons.length ? v.reasons : [];
    summary.push({
      key: 'viscosity.greenKubo', quantity: 'shear viscosity η', value: Number.isFinite(v.viscosity.value) ? v.viscosity : null, scale: 1e3, unit: 'mPa·s',
      method: 'Green–Kubo, time decomposition', window: etaWindow, verdict: v.converged ? 'converged' : `not converged: ${reasons[0] ?? 'no uncertainty'}`, ok: v.converged,
    });
    if (v.helfand && v.helfandWindow) {
      summary.push({
        key: 'viscosity.helfand', quantity: 'shear viscosity η (cross-check)', value: v.helfand, scale: 1e3, unit: 'mPa·s', method: 'Einstein–Helfand moment',
        window: `fit ${range(v.helfandWindow.from, v.helfandWindow.to)}`, verdict: 'cross-check only', ok: true,
      });
    }
    convergence.push({
      name: 'shear viscosity (Green–Kubo)',
      verdict: v.converged ? `converged; ${etaWindow}, ${v.segments} segments × ${v.components.length} components` : v.reasons.join('; '),
      reliable: v.converged,
    });
    viscosityJson = { ...omit(v, ['runningIntegral']), csv: csv.name, volume: quantity(data.viscosity.volumeA3, null, 'A^3'), temperature: quantity(T, null, 'K'), pressureUnit: data.viscosity.pressureUnit, columns: data.viscosity.columns };
    viscositySection = {
      id: 'viscosity',
      title: 'Shear viscosity',
      text:
        `${v.method}. Volume: mean cell volume of the trajectory, ${formatSig(data.viscosity.volumeA3, 7)} Å³; temperature ${formatSig(T, 6)} K; pressure in ${data.viscosity.pressureUnit}. ` +
        `Weighting: ${v.weighting}.` +
        (v.reasons.length ? `\n\nNot converged: ${v.reasons.join('; ')}.` : '') +
        (v.notes.length ? `\n\nNotes: ${v.notes.join('; ')}.` : ''),
      figures: [fig],
      tables: [{
        headers: ['quantity', 'value'],
        rows: [
          ['η (Green–Kubo)', Number.isFinite(v.viscosity.value) ? `${formatValue(v.viscosity.value * 1e3, v.viscosity.uncertainty === null ? null : v.viscosity.uncertainty * 1e3)} mPa·s` : 'not available'],
          ['η (Einstein–Helfand cross-check)', v.helfand ? `${formatValue(v.helfand.value * 1e3, v.helfand.uncertainty === null ? null : v.helfand.uncertainty * 1e3)} mPa·s` : '—'],
          ['segments', `${v.segments} × ${formatSig(v.segmentLength.value, 4)} ps`],
          ['stress correlation time', `${formatSig(v.correlationTime.value, 3)} ps`],
          ...v.components.map((k) => [`η at the cut-off, component ${k.name}`, `${formatValue(k.runningIntegralEnd.value * 1e3, k.runningIntegralEnd.uncertainty === null ? null : k.runningIntegralEnd.uncertainty * 1e3)} mPa·s`]),
        ],
      }],
    };
  }

  // --- Self-diffusion, with Yeh–Hummer and Stokes–Einstein joins ------------------------------------
  let diffusionJson: Record<string, unknown> | null = null;
  if (data.msd || data.vacf) {
    const figures: ReportFigure[] = [];
    const rows: string[][] = [];
    const msdGroups: Record<string, unknown>[] = [];
    const vacfGroups: Record<string, unknown>[] = [];
    const yhSpecies: Record<string, unknown>[] = [];
    const seSpecies: Record<string, unknown>[] = [];
    const comparisons: Array<{ label: string } & Agreement> = [];
    const samplingNotes: string[] = [];
    const L = data.boxLength?.length ?? null;
    const labels = (data.msd?.groups ?? data.vacf?.groups ?? []).map((g) => g.label);
    for (const label of labels) {
      const g = data.msd?.groups.find((x) => x.label === label) ?? null;
      const v = data.vacf?.groups.find((x) => x.label === label) ?? null;
      const row = [label, String(g?.count ?? v?.count ?? '')];
      if (g) {
        const csv = c.csv(`msd-${label}`, ['time_ps', 'msd_A2', 'msd_x_A2', 'msd_y_A2', 'msd_z_A2'], [g.time, g.msd, g.msdXYZ[0], g.msdXYZ[1], g.msdXYZ[2]]);
        const w = `fit ${range(g.fit.from, g.fit.to)}${g.fit.automatic ? '' : ' (user)'}`;
        // A line ∝ t through the MSD at the middle of the window: on log-log axes, slope 1 = diffusive.
        const mid = Math.round((g.fit.from + g.fit.to) / 2 / (data.msd!.frameInterval));
        const ref = g.msd[mid] / g.time[mid];
        const refX: number[] = [];
        const refY: number[] = [];
        for (let k = 0; k < g.time.length; k++) if (g.time[k] >= g.fit.from && g.time[k] <= g.fit.to) { refX.push(g.time[k]); refY.push(ref * g.time[k]); }
        figures.push(
          c.line(`msd-${label}`, 'diffusion', csv, {
            title: `MSD of ${label}`,
            caption: `Mean-squared displacement of ${label} (${g.count} sites, all time origins, drift removed) on logarithmic axes; shaded: the fit window of the slope; dashed: slope 1 (diffusive) through the window`,
            xLabel: 'lag time (ps)', yLabel: 'MSD (Å²)', logX: true, logY: true,
            markers: { spans: [{ from: g.fit.from, to: g.fit.to, label: `fit window ${range(g.fit.from, g.fit.to)}` }] },
          }, [{ name: `MSD ${label}`, x: g.time, y: g.msd, xCol: 'time_ps', yCol: 'msd_A2' }], Number.isFinite(ref) && ref > 0 ? [{ name: 'slope 1 (diffusive)', x: refX, y: refY, dashed: true }] : []),
        );
        summary.push({
          key: `diffusion.msd.${label}`, quantity: `D(${label}), periodic box`, value: g.diffusion, scale: D_SCALE, unit: D_UNIT, method: 'MSD slope (Einstein)', window: w,
          verdict: verdictOf(g.converged, g.notes), ok: g.converged,
        });
        convergence.push({ name: `D(${label}) from the MSD`, verdict: verdictOf(g.converged, g.notes, `converged; fit ${range(g.fit.from, g.fit.to)}, ${g.segmentDiffusion.length} segments`), reliable: g.converged });
        row.push(`${formatValue(g.diffusion.value * D_SCALE, g.diffusion.uncertainty === null ? null : g.diffusion.uncertainty * D_SCALE)}`, range(g.fit.from, g.fit.to));
        msdGroups.push({ ...omit(g, ['time', 'msd', 'msdXYZ']), csv: csv.name });
        // Joins that need η.
        if (etaUsable && L !== null) {
          const yh = yehHummerJoin(g.diffusion, eta!, T, L);
          const inputs: JoinInput[] = [{ name: `D(${label}), MSD`, value: g.diffusion, window: w, converged: g.converged }, etaInput()];
          const { verdict: joinText, ok } = joinVerdict(inputs);
          const joinWindow = `D ${range(g.fit.from, g.fit.to)}; η ${etaWindow}`;
          summary.push({
            key: `joins.yehHummer.${label}`, quantity: `D(${label}), infinite system`, value: yh.corrected, scale: D_SCALE, unit: D_UNIT, method: `Yeh–Hummer, ξ = ${YEH_HUMMER_XI}`,
            window: joinWindow, verdict: joinText, ok,
          });
          yhSpecies.push({ label, diffusionPeriodic: g.diffusion, correction: yh.correction, diffusion: yh.corrected, inputs });
          row.push(formatValue(yh.corrected.value * D_SCALE, yh.corrected.uncertainty === null ? null : yh.corrected.uncertainty * D_SCALE));
          const r = stokesRadiusJoin(g.diffusion, eta!, T, L, data.boundary);
          const z = data.labelCharges.get(label) ?? null;
          const ion = ionName(label, z);
          const cr = ion ? crystalRadius(ion) : null;
          const ratio = cr ? quantity(r.value / cr.radiusA, r.uncertainty === null ? null : r.uncertainty / cr.radiusA, '1') : null;
          summary.push({
            key: `joins.stokesEinstein.${label}`, quantity: `hydrodynamic radius of ${label}`, value: r, scale: 1, unit: 'Å', method: `Stokes–Einstein (${data.boundary}, c = ${stokesFactor(data.boundary)}) with D∞`,
            window: joinWindow, verdict: joinText, ok,
          });
          if (ratio && cr) {
            summary.push({
              key: `joins.radiusRatio.${label}`, quantity: `hydrodynamic / crystal radius of ${label}`, value: ratio, scale: 1, unit: '1', method: `r_H / Shannon r(${cr.name}) = ${cr.radiusA} Å`,
              window: joinWindow, verdict: joinText, ok,
            });
          }
          seSpecies.push({
            label, radius: r, boundary: data.boundary, diffusionUsed: yh.corrected, ion, crystalRadius: cr ? quantity(cr.radiusA, null, 'A') : null,
            crystalRadiusSource: cr?.note ?? null, radiusRatio: ratio, inputs,
          });
          row.push(formatValue(r.value, r.uncertainty), cr ? `${cr.radiusA} Å (${cr.name})` : '—', ratio ? formatValue(ratio.value, ratio.uncertainty) : '—');
        } else {
          row.push('—', '—', '—', '—');
        }
      } else {
        row.push('—', '—', '—', '—', '—', '—');
      }
      if (v) {
        const csv = c.csv(`vacf-${label}`, ['time_ps', 'vacf_A2_per_ps2', 'vacf_normalised', 'running_D_m2_per_s'], [v.time, v.vacf, v.normalized, v.runningIntegral]);
        const w = `plateau ${range(v.plateau.from, v.plateau.to)}`;
        figures.push(
          c.line(`vacf-running-D-${label}`, 'diffusion', csv, {
            title: `VACF running integral D(t) of ${label}`,
            caption: `D(t) = (1/3)∫⟨v(0)·v(t)⟩dt for ${label} (velocities from the ${data.vacf!.velocitySource}); shaded: the plateau window, line: D`,
            xLabel: 'lag time (ps)', yLabel: `D(t) (${D_UNIT})`,
            markers: {
              spans: [{ from: v.plateau.from, to: v.plateau.to, label: v.plateau.found ? 'plateau' : 'no plateau: window shown' }],
              horizontal: Number.isFinite(v.diffusion.value) ? [{ y: v.diffusion.value * D_SCALE, label: `D = ${formatSig(v.diffusion.value * D_SCALE, 4)}` }] : [],
            },
          }, [{ name: `D(t) ${label}`, x: v.time, y: Array.from(v.runningIntegral, (x) => x * D_SCALE), xCol: 'time_ps', yCol: 'running_D_m2_per_s' }]),
        );
        const sampling = vacfSamplingProblem(v.normalized, data.vacf!.frameInterval);
        const vOk = v.converged && sampling === null;
        // The VACF analysis itself flags coarse sampling (src/fit.ts correlationSamplingProblem):
        // then its own notes carry the reason and it is not repeated here.
        const flaggedByAnalysis = !v.converged && v.notes.some((n) => n.includes('coarsely sampled'));
        const vVerdict = sampling && !flaggedByAnalysis ? `not reliable: ${sampling}` : verdictOf(v.converged, v.notes);
        summary.push({
          key: `diffusion.vacf.${label}`, quantity: `D(${label}), periodic box`, value: v.diffusion, scale: D_SCALE, unit: D_UNIT, method: 'VACF integral (Green–Kubo)', window: w,
          verdict: vVerdict, ok: vOk,
        });
        convergence.push({ name: `D(${label}) from the VACF`, verdict: sampling ? vVerdict : verdictOf(v.converged, v.notes, `converged; plateau ${range(v.plateau.from, v.plateau.to)}`), reliable: vOk });
        if (sampling) samplingNotes.push(`${label}: ${sampling}`);
        row.push(formatValue(v.diffusion.value * D_SCALE, v.diffusion.uncertainty === null ? null : v.diffusion.uncertainty * D_SCALE), range(v.plateau.from, v.plateau.to));
        if (g) {
          // Two routes to one number: flag a disagreement (src/commands/diffusion.ts rule).
          const cmp = compareEstimates(g.diffusion, v.diffusion);
          comparisons.push({ label, ...cmp });
          convergence.push({
            name: `D(${label}): MSD against VACF`,
            verdict:
              cmp.agree === null
                ? 'no comparison: an uncertainty is missing'
                : `${cmp.agree ? 'agree' : 'DISAGREE'}: difference ${formatValue(cmp.difference.value * D_SCALE, cmp.difference.uncertainty === null ? null : cmp.difference.uncertainty * D_SCALE)} ${D_UNIT}, ${formatSig(cmp.sigmas!, 2)} combined standard errors (flagged above ${DISAGREEMENT_FACTOR})`,
            reliable: cmp.agree === true,
          });
        }
        vacfGroups.push({ ...omit(v, ['time', 'vacf', 'normalized', 'runningIntegral', 'spectrum']), csv: csv.name });
      } else row.push('—', '—');
      rows.push(row);
    }
    if (yhSpecies.length) {
      joins.yehHummer = {
        xi: YEH_HUMMER_XI, boxLength: quantity(L!, null, 'A'), temperature: quantity(T, null, 'K'), note: data.boxLength!.note,
        formula: 'D_inf = D_PBC + k_B T ξ/(6π η L) (Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004)); u² = u²(D_PBC) + (ΔD u(η)/η)²',
        species: yhSpecies,
      };
      joins.stokesEinstein = {
        boundary: data.boundary, factor: stokesFactor(data.boundary),
        formula: 'r_H = k_B T/(c π η D_inf), c = 6 stick / 4 slip; η D_inf = η D_PBC + k_B T ξ/(6π L), so u(r)/r = √((D_PBC u(η))² + (η u(D_PBC))²)/(η D_inf)',
        crystalRadii: 'Shannon, Acta Cryst. A32, 751 (1976), six-coordinate (src/radii.ts); looked up only for labels with a known whole-number charge',
        species: seSpecies,
      };
    }
    const notes: string[] = [];
    if (data.msd) notes.push(`MSD: ${data.msd.rules.window}; uncertainty: ${data.msd.rules.uncertainty}; ${data.msd.driftNote}.`);
    // MSD-type analyses hold whole time series: say how much (and how many reads, when batched).
    if (data.msd) notes.push(`Memory: ${data.msd.memoryNote ?? `${formatSig(data.msd.bytesHeld / 2 ** 20, 3)} MiB of coordinates held in one read`}.`);
    if (data.vacf) notes.push(`VACF: ${data.vacf.rules.plateau}; uncertainty: ${data.vacf.rules.uncertainty}.`);
    if (samplingNotes.length) notes.push(`VACF sampling: ${samplingNotes.join('; ')}.`);
    if (data.skipped.vacf) notes.push(`VACF not computed: ${data.skipped.vacf}.`);
    if (yhSpecies.length) {
      notes.push(
        `Infinite-system D: Yeh–Hummer correction k_B T ξ/(6π η L) with ξ = ${YEH_HUMMER_XI}, η from the pressure table, L = ${formatSig(L!, 6)} Å (${data.boxLength!.note}). ` +
          `Hydrodynamic radius r_H = k_B T/(${stokesFactor(data.boundary)}π η D∞) (${data.boundary} boundary), compared with Shannon's six-coordinate crystal radius where the ion is tabulated. ` +
          `Uncertainties: ${PROPAGATION_RULE}; for r_H the dependence of D∞ on η is included.`,
      );
    } else if (data.msd) {
      notes.push(etaUsable ? 'No cell volume: no finite-size correction.' : `No finite-size correction or hydrodynamic radius: ${data.viscosity ? 'the viscosity is not a positive number' : 'needs the viscosity (give --pressure)'}.`);
    }
    sections.push({
      id: 'diffusion',
      title: 'Self-diffusion',
      text: notes.join('\n\n'),
      figures,
      tables: [{
        caption: `Per species (D in ${D_UNIT})`,
        headers: ['species', 'sites', 'D (MSD)', 'fit window', 'D∞ (Yeh–Hummer)', 'r_H (Å)', 'crystal radius', 'r_H / r_crystal', 'D (VACF)', 'plateau'],
        rows: rows.map((r) => [r[0], r[1], r[2], r[3], r[4], r[5], r[6], r[7], r[8], r[9]]),
      }],
    });
    diffusionJson = {
      msd: data.msd ? { ...omit(data.msd, ['groups']), groups: msdGroups } : null,
      vacf: data.vacf ? { ...omit(data.vacf, ['groups']), groups: vacfGroups } : null,
      vacfSampling: { rule: `C(Δt)/C(0) must be at least ${VACF_SAMPLING_RATIO}: for an exponential decay the trapezoid area of the first interval is then at most ${(100 * trapezoidExponentialBias(VACF_SAMPLING_RATIO)).toFixed(1)} % too large`, problems: samplingNotes },
      msdAgainstVacf: { rule: `flagged when |D_MSD − D_VACF| > ${DISAGREEMENT_FACTOR}·√(σ_MSD² + σ_VACF²)`, species: comparisons },
    };
  }

  // --- Conductivity, with the Walden join ----------------------------------------------------------
  let conductivityJson: Record<string, unknown> | null = null;
  if (data.conductivity) {
    const k = data.conductivity;
    const figures: ReportFigure[] = [];
    const gk = k.curves.greenKuboRunning;
    const cols = ['time_ps', 'collective_msd_e2A2', ...(gk ? ['green_kubo_S_per_m'] : [])];
    const csv = c.csv('conductivity', cols, [k.curves.time, k.curves.collectiveMsd, ...(gk ? [gk] : [])]);
    const ehWindow = `fit ${range(k.fit.from, k.fit.to)}${k.fit.automatic ? '' : ' (user)'}`;
    figures.push(
      c.line('conductivity-collective-msd', 'conductivity', csv, {
        title: 'Collective translational dipole ⟨|ΔM(t)|²⟩',
        caption: 'Mean-squared displacement of M = Σ q_i r_i (Einstein–Helfand); its slope over the shaded window gives σ = slope/(6 V k_B T)',
        xLabel: 'lag time (ps)', yLabel: '⟨|ΔM|²⟩ (e²Å²)',
        markers: { spans: [{ from: k.fit.from, to: k.fit.to, label: 'fit window' }] },
      }, [{ name: '⟨|ΔM|²⟩', x: k.curves.time, y: k.curves.collectiveMsd, xCol: 'time_ps', yCol: 'collective_msd_e2A2' }]),
    );
    if (gk && k.greenKuboPlateau && k.greenKubo) {
      figures.push(
        c.line('conductivity-green-kubo', 'conductivity', csv, {
          title: 'Green–Kubo running conductivity σ(t)',
          caption: 'σ(t) = (1/(3 V k_B T))∫⟨J(0)·J(t)⟩dt with J = Σ q_i v_i; shaded: the plateau window',
          xLabel: 'lag time (ps)', yLabel: 'σ(t) (S/m)',
          markers: {
            spans: [{ from: k.greenKuboPlateau.from, to: k.greenKuboPlateau.to, label: k.greenKuboPlateau.found ? 'plateau' : 'no plateau: window shown' }],
            horizontal: Number.isFinite(k.greenKubo.value) ? [{ y: k.greenKubo.value, label: `σ = ${formatSig(k.greenKubo.value, 4)} S/m` }] : [],
          },
        }, [{ name: 'σ(t)', x: k.curves.time, y: gk, xCol: 'time_ps', yCol: 'green_kubo_S_per_m' }]),
      );
    }
    const speciesWindows = k.species.map((s) => `${s.label}: fit ${range(s.fit.from, s.fit.to)}`).join('; ');
    const ehNotes = k.notes.filter((n) => n.startsWith('Einstein–Helfand'));
    const ehOk = !ehNotes.some((n) => n.includes('not converged')) && k.einsteinHelfand.uncertainty !== null;
    const inputsNE: JoinInput[] = k.species.map((s) => ({ name: `D(${s.label}), MSD`, value: s.diffusion, window: `fit ${range(s.fit.from, s.fit.to)}`, converged: s.converged }));
    const inputEH: JoinInput = { name: 'σ, Einstein–Helfand', value: k.einsteinHelfand, window: ehWindow, converged: ehOk };
    const neJoin = joinVerdict(inputsNE);
    const ionicityJoin = joinVerdict([inputEH, ...inputsNE]);
    const molarJoin = joinVerdict([inputEH]);
    // Ionicity and Haven ratio again here, so that an input without an uncertainty leaves them
    // without one (rather than with the other input's alone).
    const ionicity = ratioJoin(k.einsteinHelfand, k.nernstEinstein, '1');
    const havenRatio = k.havenRatio ? ratioJoin(k.nernstEinstein, k.einsteinHelfand, '1') : null;
    summary.push({ key: 'conductivity.nernstEinstein', quantity: 'conductivity σ, ions independent', value: k.nernstEinstein, scale: 1, unit: 'S/m', method: 'Nernst–Einstein from D(MSD)', window: speciesWindows, verdict: neJoin.verdict, ok: neJoin.ok });
    summary.push({ key: 'conductivity.einsteinHelfand', quantity: 'conductivity σ, collective', value: k.einsteinHelfand, scale: 1, unit: 'S/m', method: 'Einstein–Helfand', window: ehWindow, verdict: ehOk ? 'converged' : `not converged: ${firstReason(ehNotes.map((n) => n.replace(/^Einstein–Helfand:\s*/, '')), 'no uncertainty')}`, ok: ehOk });
    let gkOk = false;
    if (k.greenKubo && k.greenKuboPlateau) {
      const gkNotes = k.notes.filter((n) => n.startsWith('Green–Kubo')).map((n) => n.replace(/^Green–Kubo:\s*/, ''));
      gkOk = k.greenKuboPlateau.found && k.greenKubo.uncertainty !== null && !gkNotes.some((n) => n.startsWith('not converged'));
      summary.push({ key: 'conductivity.greenKubo', quantity: 'conductivity σ, collective', value: k.greenKubo, scale: 1, unit: 'S/m', method: 'Green–Kubo (charge current)', window: `plateau ${range(k.greenKuboPlateau.from, k.greenKuboPlateau.to)}`, verdict: gkOk ? 'converged' : `not converged: ${firstReason(gkNotes, 'no plateau')}`, ok: gkOk });
    }
    summary.push({ key: 'conductivity.ionicity', quantity: 'ionicity σ_EH/σ_NE', value: ionicity, scale: 1, unit: '1', method: 'ratio of the two above', window: `σ_EH ${range(k.fit.from, k.fit.to)}; D as above`, verdict: ionicityJoin.verdict, ok: ionicityJoin.ok });
    if (k.molarConductivity) {
      summary.push({ key: 'conductivity.molar', quantity: 'molar conductivity Λ = σ_EH/c', value: k.molarConductivity, scale: 1e4, unit: 'S cm²/mol', method: `c = ${formatSig(k.concentration!.value, 4)} mol/L (cations)`, window: ehWindow, verdict: molarJoin.verdict, ok: molarJoin.ok });
    }
    convergence.push({ name: 'conductivity (Einstein–Helfand)', verdict: ehOk ? `converged; ${ehWindow}` : ehNotes.join('; ') || 'no uncertainty', reliable: ehOk });
    if (k.greenKubo) convergence.push({ name: 'conductivity (Green–Kubo)', verdict: gkOk ? 'converged' : k.notes.filter((n) => n.startsWith('Green–Kubo')).join('; ') || 'not converged', reliable: gkOk });
    joins.conductivity = {
      nernstEinstein: { value: k.nernstEinstein, inputs: inputsNE, formula: 'σ_NE = e²/(V k_B T) Σ N_i z_i² D_i (src/transport.ts)' },
      einsteinHelfand: { value: k.einsteinHelfand, window: ehWindow },
      greenKubo: k.greenKubo ? { value: k.greenKubo, window: k.greenKuboPlateau ? `plateau ${range(k.greenKuboPlateau.from, k.greenKuboPlateau.to)}` : null } : null,
      ionicity: { value: ionicity, inputs: [inputEH, ...inputsNE], formula: 'σ_EH/σ_NE; first order, σ_EH and σ_NE treated as independent (they are positively correlated, so the uncertainty is an upper estimate); none when either has none' },
      havenRatio,
    };
    const wRows: string[][] = [];
    if (k.molarConductivity && etaUsable) {
      const w = waldenJoin(k.molarConductivity, eta!);
      const inputs: JoinInput[] = [{ name: 'molar conductivity Λ = σ_EH/c', value: k.molarConductivity, window: ehWindow, converged: ehOk }, etaInput()];
      const { verdict: waldenText, ok } = joinVerdict(inputs);
      summary.push({
        key: 'joins.walden', quantity: 'Walden product Λη', value: w.si, scale: 1e5, unit: 'S cm² P/mol', method: 'Λ (Einstein–Helfand) × η (Green–Kubo)', window: `Λ ${range(k.fit.from, k.fit.to)}; η ${etaWindow}`,
        verdict: waldenText, ok,
      });
      joins.walden = { product: w.si, productConventional: w.conventional, inputs, formula: 'W = Λ η (Walden 1906); 1 S m² Pa s/mol = 10⁵ S cm² P/mol; first order, Λ and η independent' };
      wRows.push(['Walden product Λη', `${formatValue(w.conventional.value, w.conventional.uncertainty)} S cm² P/mol`]);
    }
    const q = (x: Quantity | null, s = 1, u = '') => (x ? `${formatValue(x.value * s, x.uncertainty === null ? null : x.uncertainty * s)}${u ? ' ' + u : ''}` : '—');
    sections.push({
      id: 'conductivity',
      title: 'Ionic conductivity',
      text:
        `Charges: ${k.species.map((s) => `${s.label} ${s.charge > 0 ? '+' : ''}${s.charge}`).join(', ')}; ⟨V⟩ = ${formatSig(k.volume.value, 7)} Å³; T = ${formatSig(T, 6)} K. ` +
        `Nernst–Einstein treats the ions as independent (from each species' MSD); Einstein–Helfand and Green–Kubo are collective and include ion–ion correlations. ` +
        `The ionicity σ_EH/σ_NE is below 1 when ions move together. ${k.rules.ratios}. ${k.rules.concentration}.` +
        (k.notes.length ? `\n\nNotes: ${k.notes.join('; ')}.` : ''),
      figures,
      tables: [{
        headers: ['quantity', 'value', 'window'],
        rows: [
          ['σ Nernst–Einstein', q(k.nernstEinstein, 1, 'S/m'), speciesWindows],
          ['σ Einstein–Helfand', q(k.einsteinHelfand, 1, 'S/m'), ehWindow],
          ['σ Green–Kubo', q(k.greenKubo, 1, 'S/m'), k.greenKuboPlateau ? `plateau ${range(k.greenKuboPlateau.from, k.greenKuboPlateau.to)}` : 'no velocities'],
          ['ionicity σ_EH/σ_NE', q(ionicity), ''],
          ['Haven ratio σ_NE/σ_EH', q(havenRatio), ''],
          ['concentration', q(k.concentration, 1, 'mol/L'), 'cations'],
          ['molar conductivity Λ', q(k.molarConductivity, 1e4, 'S cm²/mol'), ehWindow],
          ...wRows.map((r) => [...r, `η: ${etaWindow}`]),
        ],
      }],
    });
    conductivityJson = { ...omit(k, ['curves']), ionicity, havenRatio, csv: csv.name };
  }
  if (viscositySection) sections.push(viscositySection);

  // --- Joins section --------------------------------------------------------------------------------
  {
    const rows: string[][] = [];
    const add = (what: string, value: Quantity | null, s: number, unit: string, inputs: JoinInput[]) => {
      if (!value) return;
      rows.push([
        what,
        `${formatValue(value.value * s, value.uncertainty === null ? null : value.uncertainty * s)}${value.uncertainty === null ? ' (no uncertainty)' : ''} ${unit}`,
        inputs.map((i) => `${i.name}: ${formatValue(i.value.value, i.value.uncertainty)} ${i.value.unit} (${i.window}${i.converged ? '' : ', NOT CONVERGED'}${i.value.uncertainty === null ? ', NO UNCERTAINTY' : ''})`).join('; '),
      ]);
    };
    const yh = joins.yehHummer as { species: Array<{ label: string; diffusion: Quantity; inputs: JoinInput[] }> } | undefined;
    for (const s of yh?.species ?? []) add(`D∞(${s.label})`, s.diffusion, D_SCALE, D_UNIT, s.inputs);
    const se = joins.stokesEinstein as { species: Array<{ label: string; radius: Quantity; inputs: JoinInput[] }> } | undefined;
    for (const s of se?.species ?? []) add(`r_H(${s.label})`, s.radius, 1, 'Å', s.inputs);
    const cj = joins.conductivity as { ionicity: { value: Quantity; inputs: JoinInput[] } } | undefined;
    if (cj) add('ionicity σ_EH/σ_NE', cj.ionicity.value, 1, '', cj.ionicity.inputs);
    const wj = joins.walden as { productConventional: Quantity; inputs: JoinInput[] } | undefined;
    if (wj) add('Walden product Λη', wj.productConventional, 1, 'S cm² P/mol', wj.inputs);
    if (rows.length) {
      sections.push({
        id: 'joins',
        title: 'Joined quantities',
        text: `Numbers that combine two analyses. Uncertainties: ${PROPAGATION_RULE}. An input whose uncertainty could not be estimated leaves the joined number without one (it is not treated as exact). Each input is listed with the window it came from; a joined number is only as reliable as its least reliable input.`,
        figures: [],
        tables: [{ caption: 'Joined numbers, each with its inputs (JSON units) and their windows', headers: ['quantity', 'value ± uncertainty', 'inputs (value, window)'], rows }],
      });
    }
  }

  // --- Time series and their convergence ------------------------------------------------------------
  let convergenceJson: Record<string, unknown>[] = [];
  if (data.series.length) {
    const figures: ReportFigure[] = [];
    const rows: string[][] = [];
    for (const { source, report: r, dt } of data.series) {
      const label = `${r.name} (${source})`;
      figures.push(c.blocking(`blocking-${source.split(' ')[0]}-${r.name}`, 'series', r, dt, label));
      const unitShown = r.mean.unit || '(unit not given)';
      const window = `${r.equilibrationTime ? `${formatSig(r.equilibrationTime.value, 5)} ps on` : `sample ${r.equilibrationIndex} on`}, ${r.samples - r.equilibrationIndex} samples`;
      summary.push({
        key: `series.${source}.${r.name}`, quantity: `⟨${r.name}⟩ (${source})`, value: r.mean, scale: 1, unit: unitShown, method: 'mean after equilibration',
        window, verdict: r.reliable ? 'reliable' : r.verdict.replace(/^.*?not reliable:\s*/, 'not reliable: '), ok: r.reliable,
      });
      convergence.push({ name: label, verdict: r.verdict, reliable: r.reliable });
      rows.push([label, String(r.samples), window, formatSig(r.statisticalInefficiency, 3), String(Math.round(r.effectiveSamples)), `${formatValue(r.mean.value, r.standardError)} ${unitShown}`, r.reliable ? 'yes' : 'no']);
    }
    convergenceJson = data.series.map((s) => ({ source: s.source, ...s.report }));
    sections.push({
      id: 'series',
      title: 'Time series: equilibration and error bars',
      text:
        'For every column of the tables (and the per-frame volume and density when the cell varies): the equilibration point, the statistical inefficiency g, ' +
        'the effective number of samples, the mean with its standard error, and block averaging as a second estimate of the error. The verdicts are collected under Convergence.',
      figures,
      tables: [{ headers: ['series', 'samples', 'production window', 'g', 'N_eff', 'mean ± s.e.', 'reliable'], rows }],
    });
  }

  const skippedText = Object.entries(data.skipped).map(([k, v]) => `${k}: ${v}`);
  if (skippedText.length) {
    sections.push({ id: 'not-run', title: 'Analyses not run', text: skippedText.join('\n\n'), figures: [] });
  }

  // Summary order: system, structure, shells, diffusion (with its joins), conductivity (with
  // Walden), viscosity, time series (Array.prototype.sort is stable, ECMAScript 2019).
  const rank = (key: string) => ['system.', 'structure.', 'shell.', 'diffusion.', 'joins.yehHummer', 'joins.stokes', 'joins.radius', 'conductivity.', 'joins.walden', 'viscosity.', 'series.']
    .findIndex((p) => key.startsWith(p));
  const group = (key: string) => { const r = rank(key); return r >= 3 && r <= 6 ? 3 : r >= 7 && r <= 8 ? 7 : r; };
  summary.sort((a, b) => group(a.key) - group(b.key));

  // --- HTML model and results.json --------------------------------------------------------------------
  const commandText = data.commandLine.map(shellQuote).join(' ');
  const model: ReportModel = {
    title: data.title,
    generated: data.started.toISOString(),
    version: data.version,
    command: commandText,
    inputs: data.inputs,
    options: data.options,
    summary: summary.map(toSummaryRow),
    sections,
    convergence,
    warnings: data.warnings,
  };
  const html = renderReportHtml(model);
  c.files.push({ name: 'report.html', data: html });

  const results: Record<string, unknown> = {
    system: ov,
    structure: data.structure
      ? { pairRule: data.structure.rule, binWidth: data.structure.result.binWidth, rMax: data.structure.result.rMax, frames: data.structure.result.frames, search: data.structure.result.search, pairs: rdfJson, shells: shellJson }
      : { shells: shellJson },
    diffusion: diffusionJson ?? {},
    conductivity: conductivityJson ?? {},
    viscosity: viscosityJson ?? {},
    convergence: convergenceJson,
    joins,
    summary: summary.map((e) =>
      e.value === null || !Number.isFinite(e.value.value)
        ? { key: e.key, quantity: e.quantity, available: false, method: e.method, window: e.window, verdict: e.verdict, ok: false }
        : { key: e.key, quantity: e.quantity, value: e.value.value, uncertainty: e.value.uncertainty, unit: e.value.unit, method: e.method, window: e.window, verdict: e.verdict, ok: e.ok },
    ),
    skipped: data.skipped,
    figures: c.figures,
    files: [...c.files.map((f) => f.name), 'results.json'],
    caution: CAUTION,
  };
  const document: Record<string, unknown> = {
    tool: 'sojourn',
    version: data.version,
    command: 'report',
    commandLine: data.commandLine,
    inputs: data.inputs,
    options: Object.fromEntries(Object.entries(data.options).filter(([, v]) => v !== undefined)),
    started: data.started.toISOString(),
    durationSeconds: Math.max(0, durationSeconds),
    results: finiteQuantities(JSON.parse(toJson(results, 0))),
    warnings: data.warnings,
  };
  c.files.push({ name: 'results.json', data: toJson(document) + '\n' });
  return { document, files: c.files, model, summary, figures: c.figures };
}

/** A summary entry as a row of the HTML summary table (value scaled into its display unit). */
export function toSummaryRow(e: SummaryEntry): SummaryRow {
  const v = e.value;
  return {
    quantity: e.quantity,
    value: v === null ? NaN : v.value * e.scale,
    uncertainty: v === null || v.uncertainty === null ? null : v.uncertainty * e.scale,
    unit: e.unit,
    method: e.method,
    window: e.window,
    verdict: e.verdict,
    ok: e.ok,
  };
}

/**
 * The terminal summary: the table (quantity, value ± uncertainty, unit, method, window, verdict),
 * the reasons behind every flagged row, the report's path and the caution.
 */
export function renderTerminalSummary(summary: SummaryEntry[], reportHtml: string, warningsCount: number): string {
  const flagged: string[] = [];
  const rows = summary.map((e) => {
    const r = toSummaryRow(e);
    // Verdicts that fit a column are shown as they are; long ones (and every flagged one) as a note.
    let status = e.verdict.length <= 24 ? e.verdict : e.verdict.replace(/[;(].*$/, '').trim();
    if (!e.ok) {
      flagged.push(`${e.quantity}: ${e.verdict}`);
      status = `NOT RELIABLE, note ${flagged.length}`;
    }
    const value = Number.isFinite(r.value) ? formatValue(r.value, r.uncertainty) + (r.uncertainty === null ? ' (no s.e.)' : '') : 'not available';
    return [e.quantity, value, r.unit === '1' || r.unit === '' ? '—' : r.unit, e.method, e.window, status];
  });
  const out = rows.length
    ? [formatTable(['quantity', 'value ± s.e.', 'unit', 'method', 'window', 'verdict'], rows)]
    : ['No quantity could be computed from these inputs; the warnings say what is missing.'];
  if (flagged.length) {
    out.push('');
    flagged.forEach((f, i) => out.push(`note ${i + 1}: ${f}`));
  }
  out.push('');
  out.push('Uncertainties are one standard error; joined numbers propagate them to first order.');
  if (warningsCount) out.push(`${warningsCount} warning${warningsCount === 1 ? '' : 's'}: see the report (and stderr).`);
  out.push(`report: ${reportHtml}`);
  out.push('');
  out.push(CAUTION);
  return out.join('\n');
}
