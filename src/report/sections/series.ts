/**
 * The report's time-series section (analyses/converge.ts): equilibration, statistical
 * inefficiency, effective samples, the mean with its standard error and block averaging for every
 * table column (and the per-frame volume and density when the cell varies). The verdict is the
 * mean's Estimate's.
 */
import { formatSig, formatValue } from '../../output.js';
import { isOk, type Estimate } from '../../estimate.js';
import type { ConvergenceVerdict, ReportFigure } from '../html.js';
import type { ReportContext, ReportData, SectionPart, SummaryEntry } from '../model.js';

/**
 * The verdict of a series mean in words: 'reliable', or "not reliable: " with the flags of the
 * analysis and, in brackets, its cautions.
 */
export function seriesVerdictText(mean: Estimate): string {
  if (isOk(mean)) return 'reliable';
  const flags = mean.reasons.filter((r) => r.verdict !== 'ok').map((r) => r.text);
  const cautions = mean.reasons.filter((r) => r.verdict === 'ok').map((r) => r.text);
  return `not reliable: ${flags.join('; ')}${cautions.length ? ` (caution: ${cautions.join('; ')})` : ''}`;
}

/**
 * The time-series section: per series a block-averaging CSV and figure, a table row, the mean in
 * the summary and the analysis' verdict as a convergence check; results.json gets every series
 * report with its source.
 */
export function seriesSection(series: ReportData['series'], ctx: ReportContext): SectionPart<Record<string, unknown>[]> {
  const figures: ReportFigure[] = [];
  const rows: string[][] = [];
  const summary: SummaryEntry[] = [];
  const convergence: ConvergenceVerdict[] = [];
  for (const { source, report: r, dt } of series) {
    const label = `${r.name} (${source})`;
    figures.push(ctx.files.blocking(`blocking-${source.split(' ')[0]}-${r.name}`, 'series', r, dt, label));
    const unitShown = r.mean.unit || '(unit not given)';
    const window = `${r.equilibrationTime ? `${formatSig(r.equilibrationTime.value, 5)} ps on` : `sample ${r.equilibrationIndex} on`}, ${r.samples - r.equilibrationIndex} samples`;
    summary.push({
      key: `series.${source}.${r.name}`, quantity: `⟨${r.name}⟩ (${source})`, value: r.mean, scale: 1, unit: unitShown, method: 'mean after equilibration',
      window, verdict: seriesVerdictText(r.mean), ok: isOk(r.mean),
    });
    convergence.push({ name: label, verdict: r.verdict, reliable: isOk(r.mean) });
    rows.push([label, String(r.samples), window, formatSig(r.statisticalInefficiency, 3), String(Math.round(r.effectiveSamples)), `${formatValue(r.mean.value, r.standardError)} ${unitShown}`, isOk(r.mean) ? 'yes' : 'no']);
  }
  return {
    section: {
      id: 'series',
      title: 'Time series: equilibration and error bars',
      text:
        'For every column of the tables (and the per-frame volume and density when the cell varies): the equilibration point, the statistical inefficiency g, ' +
        'the effective number of samples, the mean with its standard error, and block averaging as a second estimate of the error. The verdicts are collected under Convergence.',
      figures,
      tables: [{ headers: ['series', 'samples', 'production window', 'g', 'N_eff', 'mean ± s.e.', 'reliable'], rows }],
    },
    summary,
    convergence,
    json: series.map((s) => ({ source: s.source, ...s.report })),
  };
}
