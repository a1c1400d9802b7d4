/**
 * The report's ionic-conductivity section (analyses/conductivity.ts): Nernst–Einstein,
 * Einstein–Helfand and Green–Kubo conductivities, with the joins handed over by the joins step
 * (src/report/joins.ts: σ_NE's verdict from the species' D, the ionicity, Haven ratio, molar
 * conductivity and Walden product). Verdicts come with the Estimates.
 */
import { formatSig } from '../../output.js';
import { convergenceNote, isOk } from '../../estimate.js';
import type { ConductivityResult } from '../../../analyses/conductivity.js';
import type { ConvergenceVerdict, ReportFigure } from '../html.js';
import { einsteinHelfandWindowText, type ConductivityJoins } from '../joins.js';
import { joinedText, omit, range, shown, verdictText, type ReportContext, type SectionPart, type SummaryEntry } from '../model.js';

/** The collective-MSD figure and, with velocities, the Green–Kubo figure, from one CSV. */
function conductivityFigures(k: ConductivityResult, ctx: ReportContext): { figures: ReportFigure[]; csv: string } {
  const c = ctx.files;
  const figures: ReportFigure[] = [];
  const gk = k.curves.greenKuboRunning;
  const cols = ['time_ps', 'collective_msd_e2A2', ...(gk ? ['green_kubo_S_per_m'] : [])];
  const csv = c.csv('conductivity', cols, [k.curves.time, k.curves.collectiveMsd, ...(gk ? [gk] : [])]);
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
  return { figures, csv: csv.name };
}

/** Summary rows and convergence checks of the conductivities and their joins, in report order. */
function conductivityVerdicts(k: ConductivityResult, j: ConductivityJoins, speciesWindows: string): { summary: SummaryEntry[]; convergence: ConvergenceVerdict[] } {
  const ehWindow = einsteinHelfandWindowText(k);
  const eh = k.einsteinHelfand;
  const gk = k.greenKubo;
  const summary: SummaryEntry[] = [
    { key: 'conductivity.nernstEinstein', quantity: 'conductivity σ, ions independent', value: k.nernstEinstein, scale: 1, unit: 'S/m', method: 'Nernst–Einstein from D(MSD)', window: speciesWindows, verdict: joinedText(j.nernstEinstein), ok: isOk(j.nernstEinstein) },
    { key: 'conductivity.einsteinHelfand', quantity: 'conductivity σ, collective', value: eh, scale: 1, unit: 'S/m', method: 'Einstein–Helfand', window: ehWindow, verdict: verdictText(eh, 'converged', 'no uncertainty'), ok: isOk(eh) },
  ];
  if (gk && k.greenKuboPlateau) {
    summary.push({ key: 'conductivity.greenKubo', quantity: 'conductivity σ, collective', value: gk, scale: 1, unit: 'S/m', method: 'Green–Kubo (charge current)', window: `plateau ${range(k.greenKuboPlateau.from, k.greenKuboPlateau.to)}`, verdict: verdictText(gk, 'converged', 'no plateau'), ok: isOk(gk) });
  }
  summary.push({ key: 'conductivity.ionicity', quantity: 'ionicity σ_EH/σ_NE', value: j.ionicity, scale: 1, unit: '1', method: 'ratio of the two above', window: `σ_EH ${range(k.fit.from, k.fit.to)}; D as above`, verdict: joinedText(j.ionicity), ok: isOk(j.ionicity) });
  if (k.molarConductivity && j.molar) {
    summary.push({ key: 'conductivity.molar', quantity: 'molar conductivity Λ = σ_EH/c', value: k.molarConductivity, scale: 1e4, unit: 'S cm²/mol', method: `c = ${formatSig(k.concentration!.value, 4)} mol/L (cations)`, window: ehWindow, verdict: joinedText(j.molar), ok: isOk(j.molar) });
  }
  // The checks list each value's reasons as the analysis words them in its notes.
  const convergence: ConvergenceVerdict[] = [{
    name: 'conductivity (Einstein–Helfand)',
    verdict: isOk(eh) ? `converged; ${ehWindow}` : eh.reasons.map((r) => `Einstein–Helfand: ${convergenceNote(r)}`).join('; ') || 'no uncertainty',
    reliable: isOk(eh),
  }];
  if (gk) {
    convergence.push({ name: 'conductivity (Green–Kubo)', verdict: isOk(gk) ? 'converged' : gk.reasons.map((r) => `Green–Kubo: ${convergenceNote(r)}`).join('; ') || 'not converged', reliable: isOk(gk) });
  }
  if (j.walden) {
    const w = j.walden;
    summary.push({
      key: 'joins.walden', quantity: 'Walden product Λη', value: w.si, scale: 1e5, unit: 'S cm² P/mol', method: 'Λ (Einstein–Helfand) × η (Green–Kubo)', window: `Λ ${range(k.fit.from, k.fit.to)}; η ${w.inputs[1].window}`,
      verdict: joinedText(w.si), ok: isOk(w.si),
    });
  }
  return { summary, convergence };
}

/**
 * The conductivity section: the CSV of the collective MSD (and the Green–Kubo running integral),
 * its figures, the table of σ_NE, σ_EH, σ_GK, ionicity, Haven ratio, concentration, Λ and the
 * Walden product, their summary rows and checks; results.json gets the result without its curves,
 * with the joined ionicity and Haven ratio.
 */
export function conductivitySection(k: ConductivityResult, joins: ConductivityJoins, ctx: ReportContext): SectionPart<Record<string, unknown>> {
  const { figures, csv } = conductivityFigures(k, ctx);
  const speciesWindows = k.species.map((s) => `${s.label}: fit ${range(s.fit.from, s.fit.to)}`).join('; ');
  const ehWindow = einsteinHelfandWindowText(k);
  const { summary, convergence } = conductivityVerdicts(k, joins, speciesWindows);
  const waldenRows = joins.walden ? [['Walden product Λη', `${shown(joins.walden.conventional)} S cm² P/mol`, `η: ${joins.walden.inputs[1].window}`]] : [];
  return {
    section: {
      id: 'conductivity',
      title: 'Ionic conductivity',
      text:
        `Charges: ${k.species.map((s) => `${s.label} ${s.charge > 0 ? '+' : ''}${s.charge}`).join(', ')}; ⟨V⟩ = ${formatSig(k.volume.value, 7)} Å³; T = ${formatSig(ctx.temperatureK, 6)} K. ` +
        `Nernst–Einstein treats the ions as independent (from each species' MSD); Einstein–Helfand and Green–Kubo are collective and include ion–ion correlations. ` +
        `The ionicity σ_EH/σ_NE is below 1 when ions move together. ${k.rules.ratios}. ${k.rules.concentration}.` +
        (k.notes.length ? `\n\nNotes: ${k.notes.join('; ')}.` : ''),
      figures,
      tables: [{
        headers: ['quantity', 'value', 'window'],
        rows: [
          ['σ Nernst–Einstein', shown(k.nernstEinstein, 1, 'S/m'), speciesWindows],
          ['σ Einstein–Helfand', shown(k.einsteinHelfand, 1, 'S/m'), ehWindow],
          ['σ Green–Kubo', shown(k.greenKubo, 1, 'S/m'), k.greenKuboPlateau ? `plateau ${range(k.greenKuboPlateau.from, k.greenKuboPlateau.to)}` : 'no velocities'],
          ['ionicity σ_EH/σ_NE', shown(joins.ionicity), ''],
          ['Haven ratio σ_NE/σ_EH', shown(joins.havenRatio), ''],
          ['concentration', shown(k.concentration, 1, 'mol/L'), 'cations'],
          ['molar conductivity Λ', shown(k.molarConductivity, 1e4, 'S cm²/mol'), ehWindow],
          ...waldenRows,
        ],
      }],
    },
    summary,
    convergence,
    json: { ...omit(k, ['curves']), ionicity: joins.ionicity, havenRatio: joins.havenRatio, csv },
  };
}
