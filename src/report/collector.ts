/**
 * The report's files while its sections are built: one CSV per curve, one SVG per plot (from
 * src/report/svg.ts), each figure recorded with the CSV it was drawn from (results.json
 * "figures"; the tests read it), file names unique and safe.
 */
import { formatSig, toCsv } from '../output.js';
import type { SeriesReport } from '../../analyses/converge.js';
import { barPlot, blockingPlot, linePlot, type Band, type PlotMarkers } from './svg.js';
import type { ReportFigure } from './html.js';

/** A file of the report. */
export interface ReportFile {
  name: string;
  data: string;
}

/** How one SVG relates to its CSV (results.json "figures"; the tests read it). */
export interface FigureRecord {
  svg: string;
  csv: string;
  title: string;
  section: string;
  kind: 'line' | 'bar';
  logX: boolean;
  logY: boolean;
  /** CSV data rows. */
  rows: number;
  /** Plotted every row (false when a long curve was thinned to MAX_PLOT_POINTS). */
  complete: boolean;
  /** Series drawn from the CSV: path data-name, CSV columns, points drawn. */
  series: Array<{ name: string; x: string; y: string; points: number }>;
}

/** Longest curve plotted point for point; longer curves are thinned (the CSV keeps every row). */
export const MAX_PLOT_POINTS = 2000;

/** File names: safe characters only, unique case-insensitively. */
class Names {
  private used = new Set<string>();
  /** A new file name from a stem and an extension. */
  take(stem: string, ext: string): string {
    const base = stem.replace(/[^A-Za-z0-9._+-]+/g, '_').replace(/^[._]+/, '') || 'file';
    let name = `${base}.${ext}`;
    for (let k = 2; this.used.has(name.toLowerCase()); k++) name = `${base}-${k}.${ext}`;
    this.used.add(name.toLowerCase());
    return name;
  }
}

/** Indices to plot: all rows, or at most MAX_PLOT_POINTS (log-spaced for a log x axis). */
function plotIndices(n: number, logX: boolean): number[] {
  const all = Array.from({ length: n }, (_, i) => i);
  if (n <= MAX_PLOT_POINTS) return all;
  if (!logX) {
    const stride = Math.ceil(n / MAX_PLOT_POINTS);
    const idx = all.filter((i) => i % stride === 0);
    if (idx[idx.length - 1] !== n - 1) idx.push(n - 1);
    return idx;
  }
  const set = new Set<number>([0]);
  const per = MAX_PLOT_POINTS - 1;
  for (let k = 0; k <= per; k++) set.add(Math.min(n - 1, Math.round(Math.pow(n - 1, k / per))));
  return [...set].sort((a, b) => a - b);
}

function countPoints(x: ArrayLike<number>, y: ArrayLike<number>, logX: boolean, logY: boolean): number {
  let c = 0;
  for (let i = 0; i < x.length; i++) {
    if (!Number.isFinite(x[i]) || !Number.isFinite(y[i])) continue;
    if ((logX && !(x[i] > 0)) || (logY && !(y[i] > 0))) continue;
    c++;
  }
  return c;
}

/** One series of a line plot, drawn from two CSV columns. */
export interface CurveSeries {
  name: string;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  /** CSV columns the series is drawn from. */
  xCol: string;
  yCol: string;
  band?: { lower: ArrayLike<number>; upper: ArrayLike<number>; label: string };
  dashed?: boolean;
  markers?: boolean;
}

/** Collects files and figures while the sections are built. */
export class Collector {
  readonly names = new Names();
  readonly files: ReportFile[] = [];
  readonly figures: FigureRecord[] = [];

  /** A CSV file of equally long columns (src/output.ts `toCsv`); returns its name and row count. */
  csv(stem: string, columns: string[], data: ArrayLike<number>[]): { name: string; rows: number } {
    const name = this.names.take(stem, 'csv');
    this.files.push({ name, data: toCsv(columns, data) });
    return { name, rows: data.length ? data[0].length : 0 };
  }

  /** A line plot of CSV data (same rows), thinned to MAX_PLOT_POINTS when longer. */
  line(
    stem: string,
    section: string,
    csv: { name: string; rows: number },
    spec: { title: string; caption: string; xLabel: string; yLabel: string; logX?: boolean; logY?: boolean; markers?: PlotMarkers; xRange?: [number, number]; yRange?: [number, number] },
    series: CurveSeries[],
    extra: Array<{ name: string; x: ArrayLike<number>; y: ArrayLike<number>; dashed?: boolean }> = [],
  ): ReportFigure {
    const logX = spec.logX === true;
    const logY = spec.logY === true;
    const idx = plotIndices(csv.rows, logX);
    const pick = (a: ArrayLike<number>) => (idx.length === a.length ? Array.from(a) : idx.map((i) => a[i]));
    const plotted = series.map((s) => {
      const x = pick(s.x);
      const y = pick(s.y);
      const band: Band | undefined = s.band ? { lower: pick(s.band.lower), upper: pick(s.band.upper), label: s.band.label } : undefined;
      return { name: s.name, x, y, band, dashed: s.dashed, markers: s.markers };
    });
    const name = this.names.take(stem, 'svg');
    const svg = linePlot({
      title: spec.title,
      xLabel: spec.xLabel,
      yLabel: spec.yLabel,
      logX,
      logY,
      markers: spec.markers,
      xRange: spec.xRange,
      yRange: spec.yRange,
      id: name.replace(/\.svg$/, ''),
      series: [...plotted, ...extra.map((e) => ({ name: e.name, x: e.x, y: e.y, dashed: e.dashed, markers: false }))],
    });
    this.files.push({ name, data: svg });
    this.figures.push({
      svg: name,
      csv: csv.name,
      title: spec.title,
      section,
      kind: 'line',
      logX,
      logY,
      rows: csv.rows,
      complete: idx.length === csv.rows,
      series: series.map((s, i) => ({ name: s.name, x: s.xCol, y: s.yCol, points: countPoints(plotted[i].x, plotted[i].y, logX, logY) })),
    });
    return { svg, caption: `${spec.caption} (files ${name}, ${csv.name})` };
  }

  /** A bar plot of one CSV's two columns (a distribution). */
  bar(stem: string, section: string, csv: { name: string; rows: number }, title: string, caption: string, xLabel: string, yLabel: string, bars: Array<{ label: string; value: number }>, cols: [string, string]): ReportFigure {
    const name = this.names.take(stem, 'svg');
    const svg = barPlot({ title, xLabel, yLabel, bars, id: name.replace(/\.svg$/, '') });
    this.files.push({ name, data: svg });
    this.figures.push({
      svg: name, csv: csv.name, title, section, kind: 'bar', logX: false, logY: false, rows: csv.rows, complete: bars.length === csv.rows,
      series: [{ name: 'bars', x: cols[0], y: cols[1], points: bars.filter((b) => Number.isFinite(b.value)).length }],
    });
    return { svg, caption: `${caption} (files ${name}, ${csv.name})` };
  }

  /** The block-averaging table of a series as a CSV and its plot (Flyvbjerg & Petersen 1989). */
  blocking(stem: string, section: string, r: SeriesReport, dt: number | null, label: string): ReportFigure {
    const b = r.blocking;
    const lengths = b.sizes.map((s) => (dt === null ? s : s * dt));
    const tUnit = dt === null ? 'samples' : 'ps';
    const csv = this.csv(stem, ['block_samples', `block_length_${tUnit}`, 'standard_error', 'error_of_standard_error'], [b.sizes, lengths, b.standardErrors, b.errorsOfStandardErrors]);
    const unit = r.mean.unit ? ` (${r.mean.unit})` : ' (unit not given)';
    const name = this.names.take(stem, 'svg');
    const svg = blockingPlot({
      title: `Block averaging: ${label}`,
      xLabel: `block length (${tUnit})`,
      yLabel: `s.e. of the mean${unit}`,
      blockLengths: lengths,
      standardErrors: b.standardErrors,
      standardErrorErrors: b.errorsOfStandardErrors,
      plateau: b.plateau ? { value: b.plateau.standardError, from: dt === null ? b.plateau.size : b.plateau.size * dt, label: `plateau ${formatSig(b.plateau.standardError, 3)}` } : undefined,
      id: name.replace(/\.svg$/, ''),
    });
    this.files.push({ name, data: svg });
    this.figures.push({
      svg: name, csv: csv.name, title: `Block averaging: ${label}`, section, kind: 'line', logX: true, logY: false, rows: csv.rows, complete: true,
      series: [{ name: 'standard error from blocks', x: `block_length_${tUnit}`, y: 'standard_error', points: countPoints(lengths, b.standardErrors, true, false) }],
    });
    return {
      svg,
      caption:
        `Standard error of the mean of ${label} from blocks of increasing length (Flyvbjerg & Petersen 1989), production region only; ` +
        `${b.plateau ? 'the plateau is marked' : 'no plateau was found'} (files ${name}, ${csv.name})`,
    };
  }
}
