/**
 * The report's shear-viscosity section (analyses/viscosity.ts): the Green–Kubo running integral
 * with its fit, η and the Einstein–Helfand cross-check in the summary. The verdict is η's
 * Estimate's.
 */
import { formatSig } from '../../output.js';
import { quantity } from '../../types.js';
import { isOk } from '../../estimate.js';
import type { ViscosityResult } from '../../../analyses/viscosity.js';
import { omit, range, scaledValue, verdictText, type ReportContext, type ReportData, type SectionPart, type SummaryEntry } from '../model.js';

/** The window η came from, in words: "fit from–to ps" (the fit window ends at the cut-off). */
export function viscosityWindowText(v: ViscosityResult): string {
  return `fit ${range(v.fitWindow.from, v.fitWindow.to)}`;
}

/**
 * The viscosity section: a CSV of the running integral η(t), σ(t) and the fitted curve, its
 * figure, η (Green–Kubo) and the Helfand cross-check in the summary, the convergence check, and
 * the result (without the curve) with volume, temperature, pressure unit and columns for
 * results.json.
 */
export function viscositySection(data: NonNullable<ReportData['viscosity']>, ctx: ReportContext): SectionPart<Record<string, unknown>> {
  const v = data.result;
  const T = ctx.temperatureK;
  const ri = v.runningIntegral;
  const csv = ctx.files.csv('viscosity-running-integral', ['time_ps', 'eta_Pa_s', 'sigma_Pa_s', 'fit_Pa_s'], [ri.time, ri.eta, ri.sigma, ri.fit]);
  const mPa = (a: ArrayLike<number>) => Array.from(a, (x) => x * 1e3);
  const fig = ctx.files.line('viscosity-green-kubo', 'viscosity', csv, {
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
  const etaWindow = viscosityWindowText(v);
  const ok = isOk(v.viscosity);
  const summary: SummaryEntry[] = [{
    key: 'viscosity.greenKubo', quantity: 'shear viscosity η', value: Number.isFinite(v.viscosity.value) ? v.viscosity : null, scale: 1e3, unit: 'mPa·s',
    method: 'Green–Kubo, time decomposition', window: etaWindow, verdict: verdictText(v.viscosity, 'converged', 'no uncertainty'), ok,
  }];
  if (v.helfand && v.helfandWindow) {
    summary.push({
      key: 'viscosity.helfand', quantity: 'shear viscosity η (cross-check)', value: v.helfand, scale: 1e3, unit: 'mPa·s', method: 'Einstein–Helfand moment',
      window: `fit ${range(v.helfandWindow.from, v.helfandWindow.to)}`, verdict: 'cross-check only', ok: true,
    });
  }
  const blocking = v.viscosity.reasons.filter((r) => r.verdict !== 'ok').map((r) => r.text);
  return {
    section: {
      id: 'viscosity',
      title: 'Shear viscosity',
      text:
        `${v.method}. Volume: mean cell volume of the trajectory, ${formatSig(data.volumeA3, 7)} Å³; temperature ${formatSig(T, 6)} K; pressure in ${data.pressureUnit}. ` +
        `Weighting: ${v.weighting}.` +
        (v.reasons.length ? `\n\nNot converged: ${v.reasons.join('; ')}.` : '') +
        (v.notes.length ? `\n\nNotes: ${v.notes.join('; ')}.` : ''),
      figures: [fig],
      tables: [{
        headers: ['quantity', 'value'],
        rows: [
          ['η (Green–Kubo)', Number.isFinite(v.viscosity.value) ? `${scaledValue(v.viscosity, 1e3)} mPa·s` : 'not available'],
          ['η (Einstein–Helfand cross-check)', v.helfand ? `${scaledValue(v.helfand, 1e3)} mPa·s` : '—'],
          ['segments', `${v.segments} × ${formatSig(v.segmentLength.value, 4)} ps`],
          ['stress correlation time', `${formatSig(v.correlationTime.value, 3)} ps`],
          ...v.components.map((k) => [`η at the cut-off, component ${k.name}`, `${scaledValue(k.runningIntegralEnd, 1e3)} mPa·s`]),
        ],
      }],
    },
    summary,
    convergence: [{
      name: 'shear viscosity (Green–Kubo)',
      verdict: ok ? `converged; ${etaWindow}, ${v.segments} segments × ${v.components.length} components` : blocking.join('; '),
      reliable: ok,
    }],
    json: { ...omit(v, ['runningIntegral']), csv: csv.name, volume: quantity(data.volumeA3, null, 'A^3'), temperature: quantity(T, null, 'K'), pressureUnit: data.pressureUnit, columns: data.columns },
  };
}
