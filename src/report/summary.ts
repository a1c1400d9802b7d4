/**
 * The report's summary: one row per reported number, as the HTML summary table, as the
 * results.json "summary" list, and as the table the command prints to the terminal.
 */
import { CAUTION } from '../caution.js';
import { formatTable, formatValue } from '../output.js';
import type { SummaryRow } from './html.js';
import type { SummaryEntry } from './model.js';

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
 * A summary entry for results.json, in JSON units: value, uncertainty and unit when the value is
 * a finite number, else `available: false` (and never ok).
 */
export function summaryJson(e: SummaryEntry): Record<string, unknown> {
  return e.value === null || !Number.isFinite(e.value.value)
    ? { key: e.key, quantity: e.quantity, available: false, method: e.method, window: e.window, verdict: e.verdict, ok: false }
    : { key: e.key, quantity: e.quantity, value: e.value.value, uncertainty: e.value.uncertainty, unit: e.value.unit, method: e.method, window: e.window, verdict: e.verdict, ok: e.ok };
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
