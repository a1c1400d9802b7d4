/**
 * The self-contained HTML report: one file with inline CSS and inline SVG figures, no scripts
 * and no external resources (a Content-Security-Policy meta element forbids loading any), that
 * reads the same on screen, on paper and in grey-scale.
 *
 * Every string in the model is treated as untrusted (it may come from an input file) and goes
 * through escapeHtml. Figure SVG must come from src/report/svg.ts; it is still parsed and
 * checked against an allow-list of elements and attributes before it is inlined (see
 * inlineSvg), so a <script>, an event handler or an external reference can never reach the page.
 */
import { XMLBuilder, XMLParser } from 'fast-xml-parser';
import { CAUTION } from '../caution.js';
import type { InputRecord } from '../output.js';
import { formatSig, formatValue } from '../output.js';
import { escapeHtml } from './escape.js';

/** One row of the summary table. */
export interface SummaryRow {
  /** What was measured, e.g. "self-diffusion coefficient D(Na)". */
  quantity: string;
  value: number;
  /** One standard error, or null when none could be estimated. */
  uncertainty: number | null;
  /** Unit of value and uncertainty ('' or '1' for dimensionless). */
  unit: string;
  /** Method and its source, e.g. "Einstein relation, linear fit of MSD". */
  method: string;
  /** The data window the number came from, e.g. "fit 20–200 ps". */
  window: string;
  /** Reliability verdict in words, e.g. "converged" or "plateau not reached". */
  verdict: string;
  /** True when the number can be relied on. */
  ok: boolean;
}

/** A figure: SVG markup from src/report/svg.ts and a caption. */
export interface ReportFigure {
  svg: string;
  caption: string;
}

/** A plain table of strings. */
export interface ReportTable {
  caption?: string;
  headers: string[];
  rows: string[][];
}

/** A report section (one analysis). */
export interface ReportSection {
  /** Anchor name; letters, digits, '-' and '_' are kept, anything else becomes '-'. */
  id: string;
  title: string;
  /** Free text; blank lines separate paragraphs. */
  text?: string;
  figures: ReportFigure[];
  tables?: ReportTable[];
}

/** A convergence check and its outcome. */
export interface ConvergenceVerdict {
  name: string;
  verdict: string;
  reliable: boolean;
}

/** Everything the HTML report shows. */
export interface ReportModel {
  title: string;
  /** When the report was generated (ISO 8601 text, shown as given). */
  generated: string;
  /** sojourn version. */
  version: string;
  /** The command line that produced the report. */
  command: string;
  inputs: InputRecord[];
  /** Options in effect (shown as a table when given). */
  options?: Record<string, unknown>;
  summary: SummaryRow[];
  sections: ReportSection[];
  convergence: ConvergenceVerdict[];
  warnings: string[];
}

const CSS = `
:root { color-scheme: light; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", Verdana, Arial, Helvetica, sans-serif; color: #1a1a1a; background: #ffffff;
  max-width: 1120px; margin: 0 auto; padding: 1.2rem 1.5rem 3rem; line-height: 1.45; font-size: 15px; }
h1 { font-size: 1.6rem; margin: 0.2rem 0 0.6rem; }
h2 { font-size: 1.3rem; margin: 2rem 0 0.6rem; padding-bottom: 0.2rem; border-bottom: 2px solid #1a1a1a; }
h3 { font-size: 1.05rem; margin: 1.2rem 0 0.4rem; }
dl.meta { display: grid; grid-template-columns: max-content 1fr; gap: 0.15rem 1rem; margin: 0 0 1rem; }
dl.meta dt { font-weight: bold; }
dl.meta dd { margin: 0; }
code, .mono { font-family: "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: 0.88em; overflow-wrap: anywhere; }
.caution { border: 3px solid #1a1a1a; border-left-width: 12px; background: #fff3cd; padding: 0.7rem 1rem;
  margin: 1rem 0 1.4rem; font-weight: bold; }
.caution .sign { font-size: 1.2em; margin-right: 0.4rem; }
.counts { margin: 0.4rem 0; }
table { border-collapse: collapse; margin: 0.5rem 0 1rem; width: 100%; }
caption { text-align: left; font-weight: bold; padding: 0.2rem 0; caption-side: top; }
th, td { border: 1px solid #8a8a8a; padding: 0.3rem 0.5rem; text-align: left; vertical-align: top; }
thead th { background: #ececec; border-bottom: 2px solid #1a1a1a; }
td.num { text-align: right; white-space: nowrap; font-variant-numeric: tabular-nums; }
td.hash { font-family: "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: 0.8em; overflow-wrap: anywhere; }
.ok { background: #e3f2e6; }
.bad { background: #fbe3da; font-weight: bold; }
.verdict-mark { font-weight: bold; margin-right: 0.3rem; }
nav ol { columns: 2; margin: 0.3rem 0 1rem; }
figure { margin: 1rem 0 1.5rem; break-inside: avoid; page-break-inside: avoid; }
figure svg { max-width: 100%; height: auto; display: block; border: 1px solid #d0d0d0; }
figcaption { margin-top: 0.4rem; font-size: 0.92em; }
ul.warnings li { margin-bottom: 0.3rem; }
footer { margin-top: 2.5rem; padding-top: 0.6rem; border-top: 1px solid #8a8a8a; font-size: 0.9em; }
@page { margin: 14mm; }
@media print {
  body { max-width: none; padding: 0; font-size: 11pt; }
  nav { display: none; }
  h2 { break-after: avoid; page-break-after: avoid; }
  table, .caution, figure { break-inside: avoid; page-break-inside: avoid; }
  .ok, .bad, .caution, thead th { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  a { color: inherit; text-decoration: none; }
}
`;

/**
 * Render the report model as one self-contained HTML5 page: header (tool version, date,
 * command, inputs with size and SHA-256), the caution, a summary table (value ± uncertainty,
 * unit, method, window, verdict), one section per analysis with figures and tables,
 * convergence verdicts, warnings and a footer that repeats the caution. Verdicts carry a text
 * symbol (✓ / ⚠) besides the colour, so they survive grey-scale printing. No <script>.
 */
export function renderReportHtml(model: ReportModel): string {
  const e = escapeHtml;
  const ids = new Set<string>();
  const sectionIds = model.sections.map((s) => uniqueId(`sec-${s.id}`, ids));
  const out: string[] = [];
  out.push('<!DOCTYPE html>');
  out.push('<html lang="en">');
  out.push('<head>');
  out.push('<meta charset="utf-8">');
  out.push(`<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">`);
  out.push('<meta name="viewport" content="width=device-width, initial-scale=1">');
  out.push(`<meta name="generator" content="sojourn ${e(model.version)}">`);
  out.push(`<title>${e(model.title)}</title>`);
  out.push(`<style>${CSS}</style>`);
  out.push('</head>');
  out.push('<body>');
  headerHtml(model, out);
  out.push(`<aside class="caution" id="caution" role="note" aria-label="Caution"><span class="sign" aria-hidden="true">⚠</span>${e(CAUTION)}</aside>`);
  // Table of contents.
  out.push('<nav aria-label="Contents"><ol>');
  out.push('<li><a href="#inputs">Inputs</a></li>');
  out.push('<li><a href="#summary">Summary</a></li>');
  model.sections.forEach((s, i) => out.push(`<li><a href="#${sectionIds[i]}">${e(s.title)}</a></li>`));
  out.push('<li><a href="#convergence">Convergence</a></li>');
  out.push('<li><a href="#warnings">Warnings</a></li>');
  out.push('</ol></nav>');
  inputsHtml(model, out);
  summaryHtml(model, out);
  sectionsHtml(model.sections, sectionIds, out);
  convergenceHtml(model, out);
  // Warnings.
  out.push('<section id="warnings">');
  out.push('<h2>Warnings</h2>');
  if (model.warnings.length === 0) out.push('<p>No warnings.</p>');
  else {
    out.push('<ul class="warnings">');
    for (const w of model.warnings) out.push(`<li>${e(w)}</li>`);
    out.push('</ul>');
  }
  out.push('</section>');
  out.push('<footer>');
  out.push(`<p>Produced by sojourn ${e(model.version)} on ${e(model.generated)}.</p>`);
  out.push(`<p class="caution-repeat"><strong>${e(CAUTION)}</strong></p>`);
  out.push('</footer>');
  out.push('</body>');
  out.push('</html>');
  return out.join('\n') + '\n';
}

/** The page header: title, tool, date, command, and the counts of concerns and warnings. */
function headerHtml(model: ReportModel, out: string[]): void {
  const e = escapeHtml;
  const bad = model.summary.filter((r) => !r.ok).length + model.convergence.filter((c) => !c.reliable).length;
  out.push('<header id="top">');
  out.push(`<h1>${e(model.title)}</h1>`);
  out.push('<dl class="meta">');
  out.push(`<dt>Tool</dt><dd>sojourn ${e(model.version)}</dd>`);
  out.push(`<dt>Generated</dt><dd>${e(model.generated)}</dd>`);
  out.push(`<dt>Command</dt><dd><code>${e(model.command)}</code></dd>`);
  out.push('</dl>');
  out.push(
    `<p class="counts">${model.summary.length} result${plural(model.summary.length)}; ` +
      `${bad === 0 ? 'no reliability concerns' : `<strong>${bad} reliability concern${plural(bad)}</strong>`}; ` +
      `${model.warnings.length === 0 ? 'no warnings' : `<a href="#warnings"><strong>${model.warnings.length} warning${plural(model.warnings.length)}</strong></a>`}.</p>`,
  );
  out.push('</header>');
}

/** The inputs (path, format, size, frames, SHA-256) and the options in effect. */
function inputsHtml(model: ReportModel, out: string[]): void {
  out.push('<section id="inputs">');
  out.push('<h2>Inputs</h2>');
  if (model.inputs.length === 0) out.push('<p>No input files.</p>');
  else {
    out.push(
      table(
        null,
        ['Path', 'Format', 'Size', 'Frames', 'SHA-256'],
        model.inputs.map((f) => [
          { text: f.path, cls: 'mono' },
          { text: f.format },
          { text: formatBytes(f.bytes), cls: 'num' },
          { text: f.frames === null ? '—' : String(f.frames), cls: 'num' },
          { text: f.sha256, cls: 'hash' },
        ]),
      ),
    );
  }
  if (model.options && Object.keys(model.options).length > 0) {
    out.push('<h3>Options</h3>');
    out.push(
      table(
        null,
        ['Option', 'Value'],
        Object.entries(model.options).map(([k, v]) => [{ text: k, cls: 'mono' }, { text: optionText(v), cls: 'mono' }]),
      ),
    );
  }
  out.push('</section>');
}

/** The summary table: quantity, value ± uncertainty, unit, method, window, verdict. */
function summaryHtml(model: ReportModel, out: string[]): void {
  const e = escapeHtml;
  out.push('<section id="summary">');
  out.push('<h2>Summary</h2>');
  if (model.summary.length === 0) out.push('<p>No results.</p>');
  else {
    out.push('<table class="summary">');
    out.push('<thead><tr><th scope="col">Quantity</th><th scope="col">Value ± uncertainty</th><th scope="col">Unit</th><th scope="col">Method</th><th scope="col">Window</th><th scope="col">Verdict</th></tr></thead>');
    out.push('<tbody>');
    for (const r of model.summary) {
      out.push(
        `<tr class="${r.ok ? 'ok' : 'bad'}"><th scope="row">${e(r.quantity)}</th>` +
          `<td class="num">${e(valueText(r.value, r.uncertainty))}</td>` +
          `<td>${e(unitText(r.unit))}</td><td>${e(r.method)}</td><td>${e(r.window)}</td>` +
          `<td>${verdictHtml(r.ok, r.verdict)}</td></tr>`,
      );
    }
    out.push('</tbody></table>');
    out.push('<p>Uncertainties are one standard error. ✓ marks a result judged reliable; ⚠ marks one that is not — read its section before using it.</p>');
  }
  out.push('</section>');
}

/** One <section> per analysis: paragraphs, numbered figures with captions, numbered tables. */
function sectionsHtml(sections: ReportSection[], sectionIds: string[], out: string[]): void {
  const e = escapeHtml;
  let figureNo = 0;
  let tableNo = 0;
  sections.forEach((s, i) => {
    out.push(`<section id="${sectionIds[i]}">`);
    out.push(`<h2>${e(s.title)}</h2>`);
    for (const para of (s.text ?? '').split(/\n\s*\n/)) {
      if (para.trim()) out.push(`<p>${e(para.trim())}</p>`);
    }
    for (const f of s.figures) {
      figureNo += 1;
      out.push(`<figure id="figure-${figureNo}">`);
      out.push(inlineSvg(f.svg));
      out.push(`<figcaption><strong>Figure ${figureNo}.</strong> ${e(f.caption)}</figcaption>`);
      out.push('</figure>');
    }
    for (const t of s.tables ?? []) {
      tableNo += 1;
      const cap = `Table ${tableNo}.${t.caption ? ' ' + t.caption : ''}`;
      out.push(table(cap, t.headers, t.rows.map((row) => row.map((c) => ({ text: c })))));
    }
    out.push('</section>');
  });
}

/** The convergence table: check, verdict, reliable. */
function convergenceHtml(model: ReportModel, out: string[]): void {
  const e = escapeHtml;
  out.push('<section id="convergence">');
  out.push('<h2>Convergence</h2>');
  if (model.convergence.length === 0) out.push('<p>No convergence checks were run.</p>');
  else {
    out.push('<table class="convergence">');
    out.push('<thead><tr><th scope="col">Check</th><th scope="col">Verdict</th><th scope="col">Reliable</th></tr></thead><tbody>');
    for (const c of model.convergence) {
      out.push(
        `<tr class="${c.reliable ? 'ok' : 'bad'}"><th scope="row">${e(c.name)}</th><td>${e(c.verdict)}</td>` +
          `<td>${c.reliable ? '<span class="verdict-mark">✓</span>yes' : '<span class="verdict-mark">⚠</span>no'}</td></tr>`,
      );
    }
    out.push('</tbody></table>');
  }
  out.push('</section>');
}

// ---------------------------------------------------------------------------------------------
// Helpers
// ---------------------------------------------------------------------------------------------

function plural(k: number): string {
  return k === 1 ? '' : 's';
}

function uniqueId(raw: string, used: Set<string>): string {
  const base = raw.replace(/[^A-Za-z0-9_-]/g, '-');
  let id = base;
  for (let k = 2; used.has(id); k++) id = `${base}-${k}`;
  used.add(id);
  return id;
}

function valueText(value: number, uncertainty: number | null): string {
  if (!Number.isFinite(value)) return 'not available';
  if (uncertainty === null || !Number.isFinite(uncertainty)) return `${formatSig(value)} (no uncertainty estimate)`;
  return formatValue(value, uncertainty);
}

function unitText(unit: string): string {
  return unit === '' || unit === '1' ? 'dimensionless' : unit;
}

function verdictHtml(ok: boolean, verdict: string): string {
  return `<span class="verdict-mark" aria-hidden="true">${ok ? '✓' : '⚠'}</span>${escapeHtml(verdict)}`;
}

function optionText(v: unknown): string {
  if (typeof v === 'string') return v;
  try {
    return JSON.stringify(v) ?? String(v);
  } catch {
    return String(v);
  }
}

/**
 * "1 234 567 bytes (1.18 MiB)": exact count with thin-space grouping, then IEC binary prefix
 * (IEC 80000-13: KiB = 1024 B).
 */
function formatBytes(bytes: number): string {
  const exact = `${String(bytes).replace(/\B(?=(\d{3})+(?!\d))/g, '\u202F')} bytes`;
  const units = ['KiB', 'MiB', 'GiB', 'TiB'];
  let v = bytes;
  let u = -1;
  while (v >= 1024 && u < units.length - 1) {
    v /= 1024;
    u += 1;
  }
  return u < 0 ? exact : `${exact} (${Number(v.toPrecision(3))} ${units[u]})`;
}

interface Cell {
  text: string;
  cls?: string;
}

function table(caption: string | null, headers: string[], rows: Cell[][]): string {
  const e = escapeHtml;
  const parts: string[] = ['<table>'];
  if (caption) parts.push(`<caption>${e(caption)}</caption>`);
  parts.push(`<thead><tr>${headers.map((h) => `<th scope="col">${e(h)}</th>`).join('')}</tr></thead>`);
  parts.push('<tbody>');
  for (const r of rows) parts.push(`<tr>${r.map((c) => `<td${c.cls ? ` class="${c.cls}"` : ''}>${e(c.text)}</td>`).join('')}</tr>`);
  parts.push('</tbody></table>');
  return parts.join('');
}

// ---------------------------------------------------------------------------------------------
// Inline SVG check
// ---------------------------------------------------------------------------------------------

/** SVG elements our plots use; anything else is refused. */
const SVG_ELEMENTS = new Set([
  'svg', 'title', 'desc', 'defs', 'clipPath', 'g', 'rect', 'path', 'line', 'polyline', 'polygon', 'circle', 'ellipse', 'text', 'tspan',
]);

const SVG_PARSER = new XMLParser({
  preserveOrder: true,
  ignoreAttributes: false,
  attributeNamePrefix: '@_',
  parseTagValue: false,
  parseAttributeValue: false,
  trimValues: false,
  processEntities: true,
  htmlEntities: false,
  ignoreDeclaration: true,
  ignorePiTags: true,
});

const SVG_BUILDER = new XMLBuilder({
  preserveOrder: true,
  ignoreAttributes: false,
  attributeNamePrefix: '@_',
  suppressEmptyNode: true,
  suppressBooleanAttributes: false,
  processEntities: true,
  format: false,
});

/**
 * Check SVG markup and re-serialise it for inlining into HTML: the root must be one <svg>;
 * only the elements in SVG_ELEMENTS are allowed; attributes whose names start with "on"
 * (event handlers), href/xlink:href, and any url(…) or @import that does not point inside the
 * document (#id) are refused with a TypeError. Comments, processing instructions and DOCTYPEs
 * are refused or dropped. The root's xmlns attribute is removed: the HTML parser puts <svg> in
 * the SVG namespace by itself (WHATWG HTML, "Parsing HTML documents", foreign content), and the
 * page then contains no URL at all.
 */
export function inlineSvg(svg: string): string {
  if (/<!DOCTYPE|<!ENTITY/i.test(svg)) throw new TypeError('figure SVG must not contain a DOCTYPE or entity declarations');
  const tree = SVG_PARSER.parse(svg) as Record<string, unknown>[];
  const roots = tree.filter((n) => !('#text' in n && String(n['#text']).trim() === ''));
  if (roots.length !== 1 || tagOf(roots[0]) !== 'svg') throw new TypeError('figure SVG must have exactly one <svg> root element');
  const root = roots[0];
  checkNode(root);
  const attrs = root[':@'] as Record<string, string> | undefined;
  if (attrs) {
    delete attrs['@_xmlns'];
    delete attrs['@_xmlns:xlink'];
  }
  return SVG_BUILDER.build([root]) as string;
}

function tagOf(node: Record<string, unknown>): string {
  for (const k of Object.keys(node)) if (k !== ':@') return k;
  return '';
}

function checkNode(node: Record<string, unknown>): void {
  const tag = tagOf(node);
  if (tag === '#text') return;
  if (!SVG_ELEMENTS.has(tag)) throw new TypeError(`figure SVG contains a <${tag}> element, which reports do not allow`);
  const attrs = (node[':@'] ?? {}) as Record<string, unknown>;
  for (const [k, raw] of Object.entries(attrs)) {
    const name = k.slice(2);
    const v = String(raw);
    const lname = name.toLowerCase();
    if (lname.startsWith('on')) throw new TypeError(`figure SVG has an event-handler attribute "${name}"`);
    if (lname === 'href' || lname.endsWith(':href')) throw new TypeError(`figure SVG has a link attribute "${name}"`);
    if (/@import/i.test(v)) throw new TypeError(`figure SVG attribute "${name}" contains @import`);
    for (const m of v.matchAll(/url\(\s*(['"]?)([^'")]*)\1\s*\)/gi)) {
      if (!m[2].startsWith('#')) throw new TypeError(`figure SVG attribute "${name}" refers outside the document: ${m[0]}`);
    }
    if (/url\(/i.test(v) && !/url\(\s*['"]?#/i.test(v)) throw new TypeError(`figure SVG attribute "${name}" has a url() that is not a fragment`);
    if (lname === 'xmlns' && v !== 'http://www.w3.org/2000/svg') throw new TypeError(`figure SVG has an unexpected namespace ${v}`);
    if (lname.startsWith('xmlns:') && lname !== 'xmlns:xlink') throw new TypeError(`figure SVG declares namespace "${name}"`);
  }
  for (const child of (node[tag] ?? []) as Record<string, unknown>[]) checkNode(child);
}
