/**
 * A small SVG plotting library for the report: line plots (with error bands, error bars, fit
 * windows and cut-off markers), bar plots for distributions, and a blocking-analysis plot.
 *
 * Every plot is built as a tree and serialised with fast-xml-parser's XMLBuilder
 * (preserveOrder mode, attributes under the "@_" prefix, entity processing on), so every label
 * — which may come from an input file — is escaped by the builder (& < > " ' per XML 1.0 §2.4),
 * and characters XML 1.0 forbids (§2.2 "Char") are replaced by U+FFFD beforehand.
 *
 * Coordinates. The plot area is the rectangle `rect.plot-frame` (left, top, width, height).
 * A linear axis maps data to pixels by the closed form
 *   x_px = left + (x − x_lo)/(x_hi − x_lo) · width,   y_px = top + (y_hi − y)/(y_hi − y_lo) · height,
 * a logarithmic axis by the same formula applied to log10 of the value and of the domain ends.
 * The domain [lo, hi] is the range given in the spec, or else the data range widened to the
 * nearest ticks; it is written on the root element as data-x-domain / data-y-domain.
 *
 * Data. Each series is ONE <path class="series-line"> whose d attribute is "M x y L x y …"
 * with exactly one coordinate pair per plotted data point. A point whose x or y is not finite
 * (NaN, ±Infinity — or ≤ 0 on a logarithmic axis) is skipped and the line restarts with a new
 * "M" at the next plottable point, so a gap in the data shows as a gap in the line. Points
 * outside an explicitly given range are kept in the path and clipped by a clipPath.
 *
 * This module holds the public types and is the entry point; the work is split by what it draws:
 * src/report/svg-line.ts (line plots), svg-bar.ts (bar and blocking plots), svg-ticks.ts (axis
 * ticks) and svg-draw.ts (the XML tree, scales, axes, legends, markers).
 */

// ---------------------------------------------------------------------------------------------
// Public types
// ---------------------------------------------------------------------------------------------

/** A shaded band around a series, e.g. ± one standard error. */
export interface Band {
  lower: ArrayLike<number>;
  upper: ArrayLike<number>;
  /** What the band means, shown in the legend, e.g. "±1 s.e.". */
  label?: string;
}

/** One line of a line plot. x, y (and band/yError when given) have equal lengths. */
export interface LineSeries {
  name: string;
  x: ArrayLike<number>;
  y: ArrayLike<number>;
  band?: Band;
  /** Symmetric error-bar half-lengths (same unit as y); non-finite or ≤ 0 entries draw no bar. */
  yError?: ArrayLike<number>;
  /** Force a dashed line (useful for fits drawn over data). */
  dashed?: boolean;
  /** Draw shape markers along the line (default true; every point when ≤ 30 points). */
  markers?: boolean;
}

/** A vertical line at x, e.g. a cut-off time. */
export interface VerticalMarker {
  x: number;
  label: string;
}

/** A shaded x-interval, e.g. a fit window or a plateau. */
export interface SpanMarker {
  from: number;
  to: number;
  label: string;
}

/** A horizontal line at y, e.g. a plateau value or a reference. */
export interface HorizontalMarker {
  y: number;
  label: string;
}

/** Annotations drawn behind the data. */
export interface PlotMarkers {
  vertical?: VerticalMarker[];
  spans?: SpanMarker[];
  horizontal?: HorizontalMarker[];
}

/** Input of linePlot. Axis labels must include the unit, e.g. "r (Å)", "MSD (Å²)". */
export interface LinePlotSpec {
  title: string;
  xLabel: string;
  yLabel: string;
  series: LineSeries[];
  markers?: PlotMarkers;
  logX?: boolean;
  logY?: boolean;
  /** Pixels; default 640. */
  width?: number;
  /** Pixels; default 400. */
  height?: number;
  /** Fixed x domain [lo, hi]; default: data range widened to nice ticks. */
  xRange?: [number, number];
  /** Fixed y domain [lo, hi]; default: data range widened to nice ticks. */
  yRange?: [number, number];
  /** Decimals of pixel coordinates in the output (default 3, i.e. 0.001 px). */
  decimals?: number;
  /** Element id prefix (letters, digits, - and _); default an automatic unique id. */
  id?: string;
}

/** One bar of a bar plot. */
export interface Bar {
  label: string;
  value: number;
  /** Error-bar half-length, or null/undefined for none. */
  uncertainty?: number | null;
}

/** Input of barPlot (categorical x, e.g. a neighbour-count histogram). */
export interface BarPlotSpec {
  title: string;
  xLabel: string;
  yLabel: string;
  bars: Bar[];
  width?: number;
  height?: number;
  yRange?: [number, number];
  decimals?: number;
  id?: string;
  /** Palette index of the bar colour (default 0). */
  styleIndex?: number;
}

/** Input of blockingPlot: standard error of a mean against block length. */
export interface BlockingPlotSpec {
  title: string;
  /** Block-length axis label with unit, e.g. "block length (ps)". */
  xLabel: string;
  /** Standard-error axis label with unit, e.g. "s.e. of ⟨P_xy⟩ (bar)". */
  yLabel: string;
  blockLengths: ArrayLike<number>;
  standardErrors: ArrayLike<number>;
  /** Uncertainty of each standard-error estimate (error bars), optional. */
  standardErrorErrors?: ArrayLike<number>;
  /** Plateau read off the curve: drawn as a horizontal line and a shaded span. */
  plateau?: { value: number; from: number; to?: number; label: string };
  width?: number;
  height?: number;
  id?: string;
}

export { formatTick, logTicks, niceTicks, ticksInRange, type Ticks } from './svg-ticks.js';
export { linePlot } from './svg-line.js';
export { barPlot, blockingPlot } from './svg-bar.js';
