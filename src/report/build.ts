/**
 * The report model: from the measured data (`ReportData`), the joins step (src/report/joins.ts),
 * then one section per analysis (src/report/sections/*), then the summary, the HTML model, every
 * CSV and SVG file and results.json.
 *
 * Everything here is pure: analyses run in src/commands/report.ts, files are written by
 * src/report/write.ts. The report lays out; it decides nothing: every verdict comes with an
 * Estimate (src/estimate.ts) of an analysis or of a join (src/transport.ts).
 *
 * Each section builder is a function (results of one analysis, report context[, its joins]) →
 * its section, summary rows, convergence checks and results.json part (`SectionPart`), so that it
 * can move into its analysis' module as that analysis' report section. Sections see each other's
 * numbers only through the joins step.
 */
import { CAUTION } from '../caution.js';
import { toJson } from '../output.js';
import { renderReportHtml, type ConvergenceVerdict, type ReportModel, type ReportSection } from './html.js';
import { Collector } from './collector.js';
import { reportJoins } from './joins.js';
import { systemSection } from './sections/system.js';
import { shellSection, structureSection } from './sections/structure.js';
import { viscositySection } from './sections/viscosity.js';
import { diffusionSection } from './sections/diffusion.js';
import { conductivitySection } from './sections/conductivity.js';
import { joinedSection } from './sections/joined.js';
import { seriesSection } from './sections/series.js';
import { summaryJson, toSummaryRow } from './summary.js';
import type { BuiltReport, ReportContext, ReportData, SectionPart, SummaryEntry } from './model.js';

export type { BuiltReport, ReportData, SummaryEntry } from './model.js';
export type { FigureRecord, ReportFile } from './collector.js';
export { MAX_PLOT_POINTS } from './collector.js';
export { renderTerminalSummary, toSummaryRow } from './summary.js';

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

/** Quote a command-line argument for display (POSIX shell single quotes when needed). */
export function shellQuote(arg: string): string {
  return /^[A-Za-z0-9_./:=,+@%^-]+$/.test(arg) ? arg : `'${arg.replace(/'/g, `'\\''`)}'`;
}

/** Every section's part, built in the order their files are written (file names stay stable). */
interface Parts {
  system: SectionPart<null>;
  structure: ReturnType<typeof structureSection> | null;
  shells: ReturnType<typeof shellSection> | null;
  viscosity: SectionPart<Record<string, unknown>> | null;
  diffusion: SectionPart<Record<string, unknown>> | null;
  conductivity: SectionPart<Record<string, unknown>> | null;
  joined: ReportSection | null;
  series: ReturnType<typeof seriesSection> | null;
}

/** Run the joins step and every section builder whose analysis ran. */
function buildParts(data: ReportData, ctx: ReportContext): { parts: Parts; joins: ReturnType<typeof reportJoins> } {
  const joins = reportJoins(data);
  const parts: Parts = {
    system: systemSection(data.overview, data.trajectoryPath, data.labelCharges, ctx, data.inputs[0]?.fileUnits),
    structure: data.structure ? structureSection(data.structure, ctx) : null,
    shells: data.shells.length ? shellSection(data.shells, ctx) : null,
    viscosity: data.viscosity ? viscositySection(data.viscosity, ctx) : null,
    diffusion: data.msd || data.vacf ? diffusionSection(data.msd, data.vacf, data.skipped.vacf, joins, ctx) : null,
    conductivity: data.conductivity && joins.conductivity ? conductivitySection(data.conductivity, joins.conductivity, ctx) : null,
    joined: joinedSection(joins),
    series: data.series.length ? seriesSection(data.series, ctx) : null,
  };
  return { parts, joins };
}

/** The results.json "results" object from the sections' parts, in the established key order. */
function resultsObject(data: ReportData, parts: Parts, joinsJson: Record<string, unknown>, summary: SummaryEntry[], c: Collector): Record<string, unknown> {
  const shells = parts.shells?.json ?? [];
  return {
    system: data.overview,
    structure: parts.structure ? { ...parts.structure.json, shells } : { shells },
    diffusion: parts.diffusion?.json ?? {},
    conductivity: parts.conductivity?.json ?? {},
    viscosity: parts.viscosity?.json ?? {},
    convergence: parts.series?.json ?? [],
    joins: joinsJson,
    summary: summary.map(summaryJson),
    skipped: data.skipped,
    figures: c.figures,
    files: [...c.files.map((f) => f.name), 'results.json'],
    caution: CAUTION,
  };
}

/** Build the summary, the joins, every CSV and SVG, the HTML and results.json from measured data. */
export function buildReport(data: ReportData, durationSeconds: number): BuiltReport {
  const c = new Collector();
  const ctx: ReportContext = { files: c, temperatureK: data.temperatureK, boundary: data.boundary };
  const { parts, joins } = buildParts(data, ctx);
  // Display order: system, structure, shells, diffusion (with its joins), conductivity (with
  // Walden), viscosity, then the joined numbers, the time series and what did not run.
  const inOrder = [parts.system, parts.structure, parts.shells, parts.diffusion, parts.conductivity, parts.viscosity];
  const sections: ReportSection[] = [];
  for (const p of inOrder) if (p?.section) sections.push(p.section);
  if (parts.joined) sections.push(parts.joined);
  if (parts.series?.section) sections.push(parts.series.section);
  const skippedText = Object.entries(data.skipped).map(([k, v]) => `${k}: ${v}`);
  if (skippedText.length) sections.push({ id: 'not-run', title: 'Analyses not run', text: skippedText.join('\n\n'), figures: [] });
  const summary: SummaryEntry[] = [...inOrder, parts.series].flatMap((p) => p?.summary ?? []);
  // Convergence checks in the order the analyses finish: viscosity, diffusion, conductivity, series.
  const convergence: ConvergenceVerdict[] = [parts.viscosity, parts.diffusion, parts.conductivity, parts.series].flatMap((p) => p?.convergence ?? []);

  const model: ReportModel = {
    title: data.title,
    generated: data.started.toISOString(),
    version: data.version,
    command: data.commandLine.map(shellQuote).join(' '),
    inputs: data.inputs,
    options: data.options,
    summary: summary.map(toSummaryRow),
    sections,
    convergence,
    warnings: data.warnings,
  };
  c.files.push({ name: 'report.html', data: renderReportHtml(model) });
  const results = resultsObject(data, parts, joins.json, summary, c);
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
