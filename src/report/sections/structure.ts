/**
 * The report's structure sections: pair distribution functions g(r) with running coordination
 * numbers (analyses/rdf.ts), and the neighbour counts and residence times of the requested shells
 * (analyses/shell.ts). Verdicts come with the analyses' Estimates.
 */
import { formatSig, formatValue } from '../../output.js';
import { isOk } from '../../estimate.js';
import type { RdfPairResult } from '../../../analyses/rdf.js';
import type { ShellResult } from '../../../analyses/shell.js';
import type { ReportFigure } from '../html.js';
import { omit, range, type ReportContext, type ReportData, type SectionPart, type SummaryEntry } from '../model.js';

/** The results.json part of the g(r) analysis (without the shells, which the caller adds). */
export interface StructureJson {
  pairRule: string;
  binWidth: unknown;
  rMax: unknown;
  frames: number;
  search: unknown;
  pairs: Record<string, unknown>[];
}

/** g(r) and n(r) of one pair: CSV, two figures, the table row, the summary row and its JSON. */
function rdfPair(p: RdfPairResult, labelA: string, labelB: string, rMax: number, ctx: ReportContext) {
  const c = ctx.files;
  const tag = `${labelA}–${labelB}`;
  const csv = c.csv(`rdf-${labelA}-${labelB}`, ['r_A', 'g', 'n', 'g_error'], [p.r, p.g, p.n, p.gError.map((x) => (x === null ? NaN : x))]);
  const lower = p.g.map((g, k) => (p.gError[k] === null ? NaN : g - p.gError[k]!));
  const upper = p.g.map((g, k) => (p.gError[k] === null ? NaN : g + p.gError[k]!));
  const vmarks = [];
  if (p.firstPeak) vmarks.push({ x: p.firstPeak.r, label: `first peak ${formatSig(p.firstPeak.r, 4)} Å` });
  if (p.firstMinimum) vmarks.push({ x: p.firstMinimum.r, label: `first minimum ${formatSig(p.firstMinimum.r, 4)} Å` });
  const figures: ReportFigure[] = [
    c.line(`rdf-${labelA}-${labelB}`, 'structure', csv, {
      title: `g(r), ${tag}`,
      caption: `Pair distribution g(r) of ${tag} with ±1 s.e. over ${p.blocks} time blocks; first peak and first minimum marked`,
      xLabel: 'r (Å)',
      yLabel: 'g(r) (dimensionless)',
      xRange: [0, rMax],
      markers: { vertical: vmarks, horizontal: [{ y: 1, label: 'g = 1' }] },
    }, [{ name: `g(r) ${tag}`, x: p.r, y: p.g, xCol: 'r_A', yCol: 'g', band: { lower, upper, label: '±1 s.e.' } }]),
  ];
  const cn = p.coordinationNumber;
  figures.push(
    c.line(`coordination-${labelA}-${labelB}`, 'structure', csv, {
      title: `n(r), ${tag}`,
      caption: `Running coordination number n(r): mean number of ${labelB} atoms within r of a ${labelA} atom${cn ? `; ${formatValue(cn.value, cn.uncertainty)} at the first minimum` : ''}`,
      xLabel: 'r (Å)',
      yLabel: `n(r) (${labelB} atoms)`,
      xRange: [0, rMax],
      markers: {
        vertical: p.firstMinimum ? [{ x: p.firstMinimum.r, label: `first minimum ${formatSig(p.firstMinimum.r, 4)} Å` }] : [],
        horizontal: cn ? [{ y: cn.value, label: `n = ${formatSig(cn.value, 4)}` }] : [],
      },
    }, [{ name: `n(r) ${tag}`, x: p.r, y: p.n, xCol: 'r_A', yCol: 'n' }]),
  );
  // Without a first minimum there is no coordination number, and the pair is not converged.
  const ok = cn !== null && isOk(cn);
  const row = [
    tag,
    `${p.nA} / ${p.nB}`,
    p.firstPeak ? `${formatSig(p.firstPeak.r, 4)} Å (g = ${formatSig(p.firstPeak.g, 4)})` : '—',
    p.firstMinimum ? `${formatSig(p.firstMinimum.r, 4)} Å (g = ${formatSig(p.firstMinimum.g, 3)})` : '—',
    cn ? formatValue(cn.value, cn.uncertainty) : '—',
    String(p.blocks),
    ok ? 'ok' : p.notes.join('; '),
  ];
  const first = p.reasons[0]?.text;
  const summary: SummaryEntry = {
    key: `structure.coordination.${tag}`,
    quantity: `coordination number ${labelB} around ${labelA}`,
    value: cn,
    scale: 1,
    unit: '1',
    method: 'n(r) at the first minimum of g(r)',
    window: p.firstMinimum ? `r ≤ ${formatSig(p.firstMinimum.r, 4)} Å` : 'no first minimum',
    verdict: ok ? `converged (${p.blocks} blocks)${first !== undefined ? `; ${first}` : ''}` : `not converged: ${first ?? 'see structure section'}`,
    ok,
  };
  return { figures, row, summary, json: { ...omit(p, ['r', 'g', 'n', 'gError']), labelA, labelB, csv: csv.name } };
}

/**
 * The g(r) section: per pair a CSV (r, g, n, s.e. of g), the g(r) and n(r) figures, a row of the
 * first-shell table and the coordination number in the summary; results.json gets the pairs
 * without their curves (they are in the CSVs).
 */
export function structureSection(structure: NonNullable<ReportData['structure']>, ctx: ReportContext): SectionPart<StructureJson> {
  const { result, pairs, rule } = structure;
  const figures: ReportFigure[] = [];
  const rows: string[][] = [];
  const summary: SummaryEntry[] = [];
  const pairJson: Record<string, unknown>[] = [];
  result.pairs.forEach((p, i) => {
    const part = rdfPair(p, pairs[i].labelA, pairs[i].labelB, result.rMax.value, ctx);
    figures.push(...part.figures);
    rows.push(part.row);
    summary.push(part.summary);
    pairJson.push(part.json);
  });
  return {
    section: {
      id: 'structure',
      title: 'Structure: pair distribution functions',
      text:
        `Pairs: ${rule}. Bins of ${formatSig(result.binWidth.value, 4)} Å up to ${formatSig(result.rMax.value, 5)} Å (half the smallest cell width at most), ${result.frames} frames. ` +
        `n(r) = 4πρ∫g r² dr is the mean number of B atoms within r of an A atom; the coordination number is n at the first minimum of g smoothed by ${result.pairs[0]?.smoothing ?? 'Savitzky–Golay'}. ` +
        'Uncertainties: one standard error over contiguous time blocks.',
      figures,
      tables: [{ caption: 'First shells', headers: ['pair A–B', 'atoms A / B', 'first peak', 'first minimum', 'coordination number', 'blocks', 'notes'], rows }],
    },
    summary,
    convergence: [],
    json: { pairRule: rule, binWidth: result.binWidth, rMax: result.rMax, frames: result.frames, search: result.search, pairs: pairJson },
  };
}

/**
 * The neighbour-count section: per shell a CSV and bar plot of the count distribution, a table
 * row, and the mean count and residence time in the summary; results.json gets each shell
 * without its survival curve.
 */
export function shellSection(shells: ReportData['shells'], ctx: ReportContext): SectionPart<Record<string, unknown>[]> {
  const c = ctx.files;
  const figures: ReportFigure[] = [];
  const rows: string[][] = [];
  const summary: SummaryEntry[] = [];
  const json: Record<string, unknown>[] = [];
  for (const { text, result: r } of shells) {
    const tag = `${r.center} around ${r.around}`;
    const stem = `neighbours-${r.center}-${r.around}`;
    const csv = c.csv(stem, ['neighbours', 'fraction'], [r.counts.values, r.counts.fractions]);
    figures.push(
      c.bar(stem, 'shells', csv, `Neighbour counts: ${r.around} within ${formatSig(r.cutoff.value, 4)} Å of ${r.center}`,
        `Fraction of (centre, frame) samples with n neighbours inside the cutoff, ${tag}`, `neighbours within ${formatSig(r.cutoff.value, 4)} Å`, 'fraction of samples (dimensionless)',
        r.counts.values.map((v, i) => ({ label: String(v), value: r.counts.fractions[i] })), ['neighbours', 'fraction']),
    );
    summary.push(...shellSummary(text, r, tag));
    rows.push([text, formatValue(r.meanCount.value, r.meanCount.uncertainty), r.residenceTime ? `${formatValue(r.residenceTime.value, r.residenceTime.uncertainty)} ps` : 'not determined', isOk(r.meanCount) ? 'ok' : r.notes.join('; ')]);
    json.push({ ...omit(r, ['survival']), csv: csv.name });
  }
  return {
    section: { id: 'shells', title: 'Neighbour counts', text: 'Shells requested with --shell.', figures, tables: [{ headers: ['shell', 'mean count ± s.e.', 'residence time', 'notes'], rows }] },
    summary,
    convergence: [],
    json,
  };
}

/** Summary rows of one shell: the mean count, and the residence time when one was fitted. */
function shellSummary(text: string, r: ShellResult, tag: string): SummaryEntry[] {
  const verdictOf = (e: ShellResult['meanCount']) => (isOk(e) ? 'converged' : `not converged: ${e.reasons[0]?.text ?? ''}`);
  const out: SummaryEntry[] = [{
    key: `shell.mean.${text}`, quantity: `mean neighbour count, ${tag}`, value: r.meanCount, scale: 1, unit: '1', method: `count within ${formatSig(r.cutoff.value, 4)} Å`, window: `${r.frames} frames`,
    verdict: verdictOf(r.meanCount), ok: isOk(r.meanCount),
  }];
  if (r.residenceTime) {
    out.push({
      key: `shell.residence.${text}`, quantity: `residence time, ${tag}`, value: r.residenceTime, scale: 1, unit: 'ps', method: 'survival correlation, exponential fit',
      window: r.fitWindow ? range(r.fitWindow.from, r.fitWindow.to) : '—', verdict: verdictOf(r.residenceTime), ok: isOk(r.residenceTime),
    });
  }
  return out;
}
