/**
 * The report's "Joined quantities" section: every number that combines two analyses (from the
 * joins step, src/report/joins.ts), with its inputs, their values and the windows they came from.
 */
import { formatValue } from '../../output.js';
import type { Estimate } from '../../estimate.js';
import { PROPAGATION_RULE, type JoinInput } from '../../transport.js';
import type { ReportSection } from '../html.js';
import type { ReportJoins } from '../joins.js';
import { D_SCALE, D_UNIT } from '../model.js';

/** One table row: the joined value (display unit) and its inputs in JSON units with their windows. */
function joinRow(what: string, value: Estimate, scale: number, unit: string, inputs: readonly JoinInput[]): string[] {
  return [
    what,
    `${formatValue(value.value * scale, value.uncertainty === null ? null : value.uncertainty * scale)}${value.uncertainty === null ? ' (no uncertainty)' : ''} ${unit}`,
    inputs.map((i) => `${i.name}: ${formatValue(i.value.value, i.value.uncertainty)} ${i.value.unit} (${i.window}${i.converged ? '' : ', NOT CONVERGED'}${i.value.uncertainty === null ? ', NO UNCERTAINTY' : ''})`).join('; '),
  ];
}

/**
 * The joined-quantities section: D∞ and r_H of every species, the ionicity and the Walden
 * product, each with its inputs; null when there is no joined number.
 */
export function joinedSection(joins: ReportJoins): ReportSection | null {
  const rows: string[][] = [];
  for (const s of joins.species.values()) rows.push(joinRow(`D∞(${s.label})`, s.corrected, D_SCALE, D_UNIT, s.inputs));
  for (const s of joins.species.values()) rows.push(joinRow(`r_H(${s.label})`, s.radius, 1, 'Å', s.inputs));
  const cj = joins.conductivity;
  if (cj) rows.push(joinRow('ionicity σ_EH/σ_NE', cj.ionicity, 1, '', [cj.inputEH, ...cj.inputsNE]));
  if (cj?.walden) rows.push(joinRow('Walden product Λη', cj.walden.conventional, 1, 'S cm² P/mol', cj.walden.inputs));
  if (!rows.length) return null;
  return {
    id: 'joins',
    title: 'Joined quantities',
    text: `Numbers that combine two analyses. Uncertainties: ${PROPAGATION_RULE}. An input whose uncertainty could not be estimated leaves the joined number without one (it is not treated as exact). Each input is listed with the window it came from; a joined number is only as reliable as its least reliable input.`,
    figures: [],
    tables: [{ caption: 'Joined numbers, each with its inputs (JSON units) and their windows', headers: ['quantity', 'value ± uncertainty', 'inputs (value, window)'], rows }],
  };
}
