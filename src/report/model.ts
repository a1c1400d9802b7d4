/**
 * What the report is built from and what its parts return: the measured data (`ReportData`),
 * the context every section builder gets (`ReportContext`), one section's share of the outputs
 * (`SectionPart`), and small layout helpers shared by the sections.
 *
 * The report lays out; it decides nothing. Verdicts come with the Estimates of the analyses
 * (src/estimate.ts) and of the joins (src/transport.ts); the helpers here only put them in words.
 */
import type { Quantity } from '../types.js';
import type { Boundary } from '../transport.js';
import { firstBlockingReason, isOk, type Estimate } from '../estimate.js';
import { formatSig, formatValue, type InputRecord } from '../output.js';
import type { ConvergenceVerdict, ReportModel, ReportSection } from './html.js';
import type { Collector, FigureRecord, ReportFile } from './collector.js';
import type { RdfPairChoice } from './choose.js';
import type { OverviewResult } from '../../analyses/overview.js';
import type { RdfResult } from '../../analyses/rdf.js';
import type { ShellResult } from '../../analyses/shell.js';
import type { MsdResult } from '../../analyses/msd.js';
import type { VacfResult } from '../../analyses/vacf.js';
import type { ConductivityResult } from '../../analyses/conductivity.js';
import type { ViscosityResult } from '../../analyses/viscosity.js';
import type { SeriesReport } from '../../analyses/converge.js';

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

/** What every section builder may use besides the results of its own analysis. */
export interface ReportContext {
  /** Collects the CSV and SVG files and the figure records (file names unique across the report). */
  files: Collector;
  temperatureK: number;
  boundary: Boundary;
}

/** One section's share of the report: its HTML section, summary rows, convergence checks and JSON. */
export interface SectionPart<J = Record<string, unknown> | null> {
  section: ReportSection | null;
  summary: SummaryEntry[];
  convergence: ConvergenceVerdict[];
  json: J;
}

/** Display scale and unit of diffusion coefficients. */
export const D_SCALE = 1e9;
export const D_UNIT = '10⁻⁹ m²/s';

/** "from–to unit" with 4 significant figures. */
export function range(from: number, to: number, unit = 'ps'): string {
  return `${formatSig(from, 4)}–${formatSig(to, 4)} ${unit}`;
}

/** Object without the given keys (curves that go to CSV files instead of results.json). */
export function omit<T extends object>(o: T, keys: readonly string[]): Record<string, unknown> {
  const drop = new Set(keys);
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(o)) if (!drop.has(k)) out[k] = v;
  return out;
}

/**
 * The verdict of an analysis' number in words: `good` when its Estimate is ok, otherwise
 * "not converged: " and the first reason that bears on the verdict (or the first reason, or
 * `fallback` when there is none).
 */
export function verdictText(e: Estimate, good: string, fallback: string): string {
  if (isOk(e)) return good;
  return `not converged: ${(firstBlockingReason(e) ?? e.reasons[0])?.text ?? fallback}`;
}

/**
 * The verdict of a joined number in words: 'inputs converged' when ok, otherwise its reasons
 * (src/transport.ts `joinReasons`: the inputs not converged, the inputs without uncertainty).
 */
export function joinedText(e: Estimate): string {
  return isOk(e) ? 'inputs converged' : e.reasons.map((r) => r.text).join('; ');
}

/** value ± uncertainty of a Quantity, both multiplied by `scale` (src/output.ts `formatValue`). */
export function scaledValue(x: Quantity, scale = 1): string {
  return formatValue(x.value * scale, x.uncertainty === null ? null : x.uncertainty * scale);
}

/** A Quantity (possibly null) in its display unit: "value ± uncertainty unit", or "—". */
export function shown(x: Quantity | null, scale = 1, unit = ''): string {
  return x ? `${scaledValue(x, scale)}${unit ? ' ' + unit : ''}` : '—';
}
