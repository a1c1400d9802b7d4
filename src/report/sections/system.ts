/**
 * The report's "System" section: what was read and the settings every number depends on, and
 * the mass density of a fixed cell for the summary (analyses/overview.ts).
 */
import { formatSig } from '../../output.js';
import type { OverviewResult } from '../../../analyses/overview.js';
import type { ReportContext, SectionPart, SummaryEntry } from '../model.js';

/**
 * The System section of an overview: the trajectory, frames, atoms, species, times, cell, mean
 * volume, mass density, velocities, the given temperature and the charges per label; the mass
 * density of a fixed cell (total mass / cell volume) goes into the summary. No results.json part
 * (the overview is written as it is).
 */
export function systemSection(
  ov: OverviewResult,
  trajectoryPath: string,
  labelCharges: ReadonlyMap<string, number>,
  ctx: ReportContext,
  fileUnits?: Record<string, { unit: string; from: string }>,
): SectionPart<null> {
  const rows: string[][] = [
    ['trajectory', trajectoryPath],
    ['frames used', String(ov.frames)],
    ['atoms', String(ov.atoms)],
    ['species (label: atoms)', Object.entries(ov.species).map(([k, v]) => `${k}: ${v}`).join(', ')],
    ['time between frames', ov.frameInterval ? `${formatSig(ov.frameInterval.value, 6)} ps` : 'unknown'],
    ['time span', ov.timeSpan ? `${formatSig(ov.timeSpan.value, 6)} ps` : 'unknown'],
    ['cell', ov.cell ? `${ov.cell.lengths.map((x) => formatSig(x, 6)).join(' × ')} Å; ${ov.cell.angles.map((x) => formatSig(x, 5)).join(', ')}°${ov.cellVaries ? ' (first frame; the cell varies)' : ''}` : 'none'],
    ['mean volume', ov.meanVolume ? `${formatSig(ov.meanVolume.value, 7)} Å³` : '—'],
    ['mass density', ov.massDensity ? `${formatSig(ov.massDensity.value, 5)} g/cm³` : 'unknown (some masses unknown: give --masses)'],
    ['velocities in the file', ov.hasVelocities ? 'yes' : 'no'],
    ['temperature (given)', `${formatSig(ctx.temperatureK, 6)} K`],
    ['kinetic temperature', ov.kineticTemperature ? `${formatSig(ov.kineticTemperature.value, 4)} K (equipartition over 3N degrees of freedom, from the velocities and masses)` : '—'],
    ...ov.atomKinds.map((k) => [`mass of ${k.label}`, `${k.mass !== null ? `${formatSig(k.mass, 6)} g/mol` : 'unknown'} (${k.from}); element ${k.element === 'X' ? 'none' : k.element}${k.elementFrom !== k.from ? ` (${k.elementFrom})` : ''}`]),
    ...Object.entries(fileUnits ?? {}).map(([what, u]) => [`${what} read in`, `${u.unit.replace(/^A/, 'Å')} (${u.from})`]),
  ];
  for (const [l, q] of labelCharges) rows.push([`charge of ${l}`, `${q > 0 ? '+' : ''}${q} e`]);
  const summary: SummaryEntry[] = [];
  if (ov.massDensity && !ov.cellVaries) {
    summary.push({ key: 'system.massDensity', quantity: 'mass density', value: ov.massDensity, scale: 1, unit: 'g/cm³', method: 'total mass / cell volume', window: 'fixed cell', verdict: 'exact for the cell given', ok: true });
  }
  return {
    section: { id: 'system', title: 'System', text: 'What was read, and the settings every number below depends on.', figures: [], tables: [{ headers: ['property', 'value'], rows }] },
    summary,
    convergence: [],
    json: null,
  };
}
