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
 */
import { XMLBuilder } from 'fast-xml-parser';
import { stripXmlControls } from './escape.js';
import { markerIsOpen, markerPath, seriesStyle, type SeriesStyle } from './palette.js';

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

/** Ticks of one axis. */
export interface Ticks {
  /** Domain ends of the axis. */
  lo: number;
  hi: number;
  /** Major tick values (labelled or not, see labels). */
  major: number[];
  /** Label of each major tick ('' = unlabelled). */
  labels: string[];
  /** Minor tick values (log axes only). */
  minor: number[];
  /** Linear step between major ticks (NaN on a log axis). */
  step: number;
}

// ---------------------------------------------------------------------------------------------
// Ticks
// ---------------------------------------------------------------------------------------------

/**
 * "Nice" linear ticks covering [min, max]: the step is 1, 2 or 5 × 10^k, the smallest such
 * step not below (max − min)/target, and the domain is widened outward to multiples of the step
 * (common practice, no source). A zero-width range is widened by 10 % of |value| (or ±1 at 0);
 * non-finite input gives [0, 1].
 */
export function niceTicks(min: number, max: number, target = 5): Ticks {
  if (!Number.isFinite(min) || !Number.isFinite(max)) {
    min = 0;
    max = 1;
  }
  if (max < min) [min, max] = [max, min];
  if (max === min) {
    const d = min === 0 ? 1 : Math.abs(min) * 0.1;
    min -= d;
    max += d;
  }
  const { f, k } = niceStep((max - min) / Math.max(1, target));
  const step = scaled(f, k);
  const i0 = Math.floor(min / step + 1e-9);
  const i1 = Math.ceil(max / step - 1e-9);
  const major: number[] = [];
  for (let i = i0; i <= i1; i++) major.push(scaled(i * f, k));
  return { lo: major[0], hi: major[major.length - 1], major, labels: major.map((v) => formatTick(v, step)), minor: [], step };
}

/** Nice linear ticks inside a fixed domain [lo, hi] (the domain is not widened). */
export function ticksInRange(lo: number, hi: number, target = 5): Ticks {
  const t = niceTicks(lo, hi, target);
  const eps = 1e-9 * (hi - lo);
  const major = t.major.filter((v) => v >= lo - eps && v <= hi + eps);
  return { lo, hi, major, labels: major.map((v) => formatTick(v, t.step)), minor: [], step: t.step };
}

/**
 * Logarithmic ticks covering [min, max] (both > 0): major ticks at every power of ten
 * 10^k with floor(log10 min) ≤ k ≤ ceil(log10 max) (at least one decade), labelled every
 * ⌈decades/8⌉ decades; minor ticks at 2…9 × 10^k when the axis spans at most 5 decades
 * (common practice, no source). With `fixed` the domain is [min, max] itself and only the
 * ticks inside it are kept.
 */
export function logTicks(min: number, max: number, fixed = false): Ticks {
  if (!(min > 0) || !(max > 0) || !Number.isFinite(min) || !Number.isFinite(max)) {
    min = 1;
    max = 10;
  }
  if (max < min) [min, max] = [max, min];
  const kLo = Math.floor(Math.log10(min) + 1e-9);
  let kHi = Math.ceil(Math.log10(max) - 1e-9);
  if (kHi <= kLo) kHi = kLo + 1;
  const lo = fixed ? min : pow10(kLo);
  const hi = fixed ? max : pow10(kHi);
  const every = Math.max(1, Math.ceil((kHi - kLo) / 8));
  const inside = (v: number) => v >= lo * (1 - 1e-9) && v <= hi * (1 + 1e-9);
  const major: number[] = [];
  const labels: string[] = [];
  const minor: number[] = [];
  for (let k = kLo; k <= kHi; k++) {
    const v = pow10(k);
    if (inside(v)) {
      major.push(v);
      labels.push((k - kLo) % every === 0 ? formatPow10(k) : '');
    }
    if (kHi - kLo <= 5 && k < kHi) {
      for (let m = 2; m <= 9; m++) {
        const w = scaled(m, k);
        if (inside(w)) minor.push(w);
      }
    }
  }
  return { lo, hi, major, labels, minor, step: NaN };
}

/** Step 1, 2, 5 or 10 × 10^k not below `rough` (returned as f·10^k with integer f). */
function niceStep(rough: number): { f: number; k: number } {
  const k = Math.floor(Math.log10(rough));
  const norm = rough / pow10(k);
  const f = norm <= 1 + 1e-9 ? 1 : norm <= 2 + 1e-9 ? 2 : norm <= 5 + 1e-9 ? 5 : 10;
  return { f, k };
}

/** 10^k, exact to the last bit (decimal literal parsing is correctly rounded). */
function pow10(k: number): number {
  return Number(`1e${k}`);
}

/** m · 10^k for an integer m, correctly rounded (division by an exact power of ten for k < 0). */
function scaled(m: number, k: number): number {
  const v = k < 0 ? m / pow10(-k) : m * pow10(k);
  return v === 0 ? 0 : v; // no −0
}

const SUPERSCRIPT: Record<string, string> = {
  '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹', '-': '⁻',
};

/** "10⁻⁵"-style label of 10^k; plain decimals for −3 ≤ k ≤ 4. */
function formatPow10(k: number): string {
  if (k >= -3 && k <= 4) return String(pow10(k));
  return '10' + [...String(k)].map((c) => SUPERSCRIPT[c]).join('');
}

/**
 * Label of a linear tick value given the tick step: fixed decimals matching the step; for
 * steps below 10⁻³ or values of 10⁶ and more, "m×10ⁿ" (trailing zeros of m dropped). Negative numbers use U+2212 MINUS SIGN.
 */
export function formatTick(v: number, step: number): string {
  if (v === 0) return '0';
  const stepExp = Math.floor(Math.log10(step) + 1e-9);
  let s: string;
  if (step < 1e-3 || Math.abs(v) >= 1e6) {
    const n = Math.floor(Math.log10(Math.abs(v)) + 1e-9);
    const dec = Math.max(0, n - stepExp);
    let mant = (v / pow10(n)).toFixed(dec);
    if (mant.includes('.')) mant = mant.replace(/0+$/, '').replace(/\.$/, '');
    s = `${mant}×10${[...String(n)].map((c) => SUPERSCRIPT[c]).join('')}`;
  } else {
    s = v.toFixed(Math.max(0, -stepExp));
  }
  return s.replace(/^-/, '−');
}

// ---------------------------------------------------------------------------------------------
// XML tree helpers (fast-xml-parser preserveOrder format)
// ---------------------------------------------------------------------------------------------

/** A node in fast-xml-parser's preserveOrder format. */
type XNode = Record<string, unknown>;
type AttrValue = string | number | undefined;

const ATTR = '@_';

function el(tag: string, attrs: Record<string, AttrValue>, children: XNode[] = []): XNode {
  const node: XNode = { [tag]: children };
  const a: Record<string, string> = {};
  for (const [k, v] of Object.entries(attrs)) {
    if (v === undefined) continue;
    a[ATTR + k] = typeof v === 'number' ? String(v) : stripXmlControls(v);
  }
  if (Object.keys(a).length) node[':@'] = a;
  return node;
}

function txt(s: string): XNode {
  return { '#text': stripXmlControls(s) };
}

const builder = new XMLBuilder({
  preserveOrder: true,
  ignoreAttributes: false,
  attributeNamePrefix: ATTR,
  suppressEmptyNode: true,
  suppressBooleanAttributes: false,
  processEntities: true,
  format: false,
});

function serialise(root: XNode): string {
  return builder.build([root]) as string;
}

// ---------------------------------------------------------------------------------------------
// Layout and scales
// ---------------------------------------------------------------------------------------------

const FONT = 12;
const FONT_FAMILY = 'DejaVu Sans, Verdana, Arial, Helvetica, sans-serif';
const INK = '#222222';
const GRID = '#e3e3e3';

/** Rough rendered width of a text in px (sans-serif average advance ≈ 0.6 em; common practice). */
function textWidth(s: string, size = FONT): number {
  return 0.6 * size * [...s].length;
}

let autoId = 0;

function plotId(id: string | undefined): string {
  if (id !== undefined) {
    const clean = id.replace(/[^A-Za-z0-9_-]/g, '-');
    return /^[A-Za-z]/.test(clean) ? clean : `p-${clean}`;
  }
  autoId += 1;
  return `sojourn-plot-${autoId}`;
}

/** Maps data values to pixels along one axis. */
interface Scale {
  log: boolean;
  lo: number;
  hi: number;
  /** Pixel of lo and of hi. */
  p0: number;
  p1: number;
}

/** Pixel of v on a scale; NaN when v cannot be shown (non-finite, or ≤ 0 on a log scale). */
function mapTo(s: Scale, v: number): number {
  if (!Number.isFinite(v)) return NaN;
  if (s.log) {
    if (!(v > 0)) return NaN;
    const a = Math.log10(s.lo);
    return s.p0 + ((Math.log10(v) - a) / (Math.log10(s.hi) - a)) * (s.p1 - s.p0);
  }
  return s.p0 + ((v - s.lo) / (s.hi - s.lo)) * (s.p1 - s.p0);
}

function numberFormatter(decimals: number): (v: number) => string {
  const d = Math.max(0, Math.min(12, Math.round(decimals)));
  return (v: number) => {
    const s = String(Number(v.toFixed(d)));
    return s === '-0' ? '0' : s;
  };
}

function axisTicks(values: number[], log: boolean, range: [number, number] | undefined, target: number): Ticks {
  if (range) {
    const [lo, hi] = range[0] <= range[1] ? range : [range[1], range[0]];
    if (!Number.isFinite(lo) || !Number.isFinite(hi) || lo === hi) throw new RangeError(`plot range [${range}] must be two different finite numbers`);
    if (log) {
      if (!(lo > 0)) throw new RangeError(`a logarithmic axis needs a positive range, got [${range}]`);
      return logTicks(lo, hi, true);
    }
    return ticksInRange(lo, hi, target);
  }
  let min = Infinity;
  let max = -Infinity;
  for (const v of values) {
    if (!Number.isFinite(v) || (log && !(v > 0))) continue;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  if (min > max) return log ? logTicks(1, 10) : niceTicks(0, 1, target);
  return log ? logTicks(min, max) : niceTicks(min, max, target);
}

interface Frame {
  left: number;
  top: number;
  width: number;
  height: number;
}

interface LegendEntry {
  name: string;
  style: SeriesStyle;
  band: boolean;
  bars?: boolean;
}

/** Lay legend entries out in rows under the plot; returns positions and the number of rows. */
function legendLayout(entries: LegendEntry[], left: number, maxRight: number): { rows: number; pos: { x: number; row: number }[] } {
  const pos: { x: number; row: number }[] = [];
  let x = left;
  let row = 0;
  for (const e of entries) {
    const w = 36 + textWidth(e.name, 11) + 18;
    if (x > left && x + w > maxRight) {
      row += 1;
      x = left;
    }
    pos.push({ x, row });
    x += w;
  }
  return { rows: entries.length ? row + 1 : 0, pos };
}

function drawLegend(entries: LegendEntry[], layout: { pos: { x: number; row: number }[] }, y0: number, n: (v: number) => string): XNode {
  const items: XNode[] = [];
  entries.forEach((e, i) => {
    const { x, row } = layout.pos[i];
    const y = y0 + row * 18;
    const parts: XNode[] = [];
    if (e.bars) {
      parts.push(el('rect', { x: n(x), y: n(y - 6), width: 28, height: 12, fill: e.style.color, 'fill-opacity': '0.85', stroke: INK, 'stroke-width': '0.8' }));
    } else {
      if (e.band) parts.push(el('rect', { x: n(x), y: n(y - 6), width: 28, height: 12, fill: e.style.color, 'fill-opacity': '0.2' }));
      parts.push(el('path', { d: `M ${n(x)} ${n(y)} L ${n(x + 28)} ${n(y)}`, stroke: e.style.color, 'stroke-width': '2', 'stroke-dasharray': e.style.dash || undefined, fill: 'none' }));
      parts.push(markerNode(e.style, x + 14, y, n));
    }
    parts.push(el('text', { x: n(x + 34), y: n(y + 4), 'font-size': 11, fill: INK }, [txt(e.name)]));
    items.push(el('g', { class: 'legend-entry' }, parts));
  });
  return el('g', { class: 'legend' }, items);
}

function markerNode(style: SeriesStyle, cx: number, cy: number, n: (v: number) => string): XNode {
  const open = markerIsOpen(style.marker);
  return el('path', {
    class: 'marker',
    d: markerPath(style.marker, cx, cy, 3.5, n),
    fill: open ? 'none' : style.color,
    stroke: open ? style.color : '#ffffff',
    'stroke-width': open ? '1.6' : '0.8',
  });
}

/** Axis lines, ticks, tick labels, grid and axis titles. */
function drawAxes(
  fr: Frame,
  xs: Scale,
  ys: Scale,
  xt: Ticks,
  yt: Ticks,
  xLabel: string,
  yLabel: string,
  n: (v: number) => string,
  xCategories?: { px: number; label: string }[],
): { grid: XNode; axes: XNode[] } {
  const bottom = fr.top + fr.height;
  const right = fr.left + fr.width;
  const grid: XNode[] = [];
  const xParts: XNode[] = [];
  const yParts: XNode[] = [];
  xParts.push(el('path', { class: 'axis-line', d: `M ${n(fr.left)} ${n(bottom)} L ${n(right)} ${n(bottom)}`, stroke: INK, 'stroke-width': '1', fill: 'none' }));
  yParts.push(el('path', { class: 'axis-line', d: `M ${n(fr.left)} ${n(fr.top)} L ${n(fr.left)} ${n(bottom)}`, stroke: INK, 'stroke-width': '1', fill: 'none' }));
  if (xCategories) {
    for (const c of xCategories) {
      xParts.push(el('path', { class: 'tick', d: `M ${n(c.px)} ${n(bottom)} L ${n(c.px)} ${n(bottom + 5)}`, stroke: INK, fill: 'none' }));
      if (c.label) xParts.push(el('text', { class: 'tick-label', x: n(c.px), y: n(bottom + 17), 'text-anchor': 'middle', fill: INK }, [txt(c.label)]));
    }
  } else {
    xt.major.forEach((v, i) => {
      const px = mapTo(xs, v);
      if (!Number.isFinite(px)) return;
      grid.push(el('path', { d: `M ${n(px)} ${n(fr.top)} L ${n(px)} ${n(bottom)}`, stroke: GRID, fill: 'none' }));
      xParts.push(el('path', { class: 'tick', d: `M ${n(px)} ${n(bottom)} L ${n(px)} ${n(bottom + 5)}`, stroke: INK, fill: 'none' }));
      if (xt.labels[i]) xParts.push(el('text', { class: 'tick-label', x: n(px), y: n(bottom + 17), 'text-anchor': 'middle', fill: INK, 'data-value': String(v) }, [txt(xt.labels[i])]));
    });
    for (const v of xt.minor) {
      const px = mapTo(xs, v);
      if (Number.isFinite(px)) xParts.push(el('path', { class: 'tick minor', d: `M ${n(px)} ${n(bottom)} L ${n(px)} ${n(bottom + 3)}`, stroke: INK, fill: 'none' }));
    }
  }
  yt.major.forEach((v, i) => {
    const py = mapTo(ys, v);
    if (!Number.isFinite(py)) return;
    grid.push(el('path', { d: `M ${n(fr.left)} ${n(py)} L ${n(right)} ${n(py)}`, stroke: GRID, fill: 'none' }));
    yParts.push(el('path', { class: 'tick', d: `M ${n(fr.left - 5)} ${n(py)} L ${n(fr.left)} ${n(py)}`, stroke: INK, fill: 'none' }));
    if (yt.labels[i]) yParts.push(el('text', { class: 'tick-label', x: n(fr.left - 8), y: n(py + 4), 'text-anchor': 'end', fill: INK, 'data-value': String(v) }, [txt(yt.labels[i])]));
  });
  for (const v of yt.minor) {
    const py = mapTo(ys, v);
    if (Number.isFinite(py)) yParts.push(el('path', { class: 'tick minor', d: `M ${n(fr.left - 3)} ${n(py)} L ${n(fr.left)} ${n(py)}`, stroke: INK, fill: 'none' }));
  }
  const cx = fr.left + fr.width / 2;
  const cy = fr.top + fr.height / 2;
  xParts.push(el('text', { class: 'axis-title', x: n(cx), y: n(bottom + 38), 'text-anchor': 'middle', fill: INK, 'font-size': 13 }, [txt(xLabel)]));
  yParts.push(
    el('text', { class: 'axis-title', x: 16, y: n(cy), 'text-anchor': 'middle', fill: INK, 'font-size': 13, transform: `rotate(-90 16 ${n(cy)})` }, [txt(yLabel)]),
  );
  return {
    grid: el('g', { class: 'grid' }, grid),
    axes: [el('g', { class: 'axis x-axis' }, xParts), el('g', { class: 'axis y-axis' }, yParts)],
  };
}

function rootSvg(id: string, w: number, h: number, title: string, desc: string, extra: Record<string, string>, children: XNode[]): XNode {
  return el(
    'svg',
    {
      xmlns: 'http://www.w3.org/2000/svg',
      class: 'sojourn-plot',
      width: w,
      height: h,
      viewBox: `0 0 ${w} ${h}`,
      role: 'img',
      'aria-labelledby': `${id}-title ${id}-desc`,
      'font-family': FONT_FAMILY,
      'font-size': FONT,
      ...extra,
    },
    [
      el('title', { id: `${id}-title` }, [txt(title)]),
      el('desc', { id: `${id}-desc` }, [txt(desc)]),
      el('rect', { class: 'background', x: 0, y: 0, width: w, height: h, fill: '#ffffff' }),
      el('text', { class: 'plot-title', x: w / 2, y: 20, 'text-anchor': 'middle', 'font-size': 14, 'font-weight': 'bold', fill: INK }, [txt(title)]),
      ...children,
    ],
  );
}

function checkLength(what: string, a: ArrayLike<number>, n: number): void {
  if (a.length !== n) throw new RangeError(`${what} has ${a.length} values but x has ${n}`);
}

function yLabelWidth(t: Ticks): number {
  return Math.max(0, ...t.labels.map((s) => textWidth(s)));
}

// ---------------------------------------------------------------------------------------------
// Line plot
// ---------------------------------------------------------------------------------------------

/**
 * An SVG line plot. Axes get nice 1-2-5 ticks (decades on log axes), tick labels, titles with
 * the units from the labels; series get Okabe–Ito colours, dash patterns and marker shapes
 * (src/report/palette.ts), optional shaded bands and error bars; markers draw fit windows
 * (spans), cut-offs (vertical lines) and reference values (horizontal lines); a legend under
 * the plot names the series. See the module comment for the coordinate map and the handling of
 * non-finite points. Throws RangeError when a series' arrays differ in length.
 */
export function linePlot(spec: LinePlotSpec): string {
  const W = spec.width ?? 640;
  const H = spec.height ?? 400;
  const n = numberFormatter(spec.decimals ?? 3);
  const id = plotId(spec.id);
  const logX = spec.logX === true;
  const logY = spec.logY === true;
  const mk = spec.markers ?? {};

  // Data extents.
  const xVals: number[] = [];
  const yVals: number[] = [];
  for (const s of spec.series) {
    const len = s.x.length;
    checkLength(`series "${s.name}" y`, s.y, len);
    if (s.band) {
      checkLength(`series "${s.name}" band.lower`, s.band.lower, len);
      checkLength(`series "${s.name}" band.upper`, s.band.upper, len);
    }
    if (s.yError) checkLength(`series "${s.name}" yError`, s.yError, len);
    for (let i = 0; i < len; i++) {
      const x = s.x[i];
      const y = s.y[i];
      if (!Number.isFinite(x) || (logX && !(x > 0))) continue;
      if (Number.isFinite(y)) {
        xVals.push(x);
        yVals.push(y);
        const e = s.yError?.[i];
        if (e !== undefined && Number.isFinite(e) && e > 0) yVals.push(y - e, y + e);
      }
      if (s.band) yVals.push(s.band.lower[i], s.band.upper[i]);
    }
  }
  for (const v of mk.vertical ?? []) xVals.push(v.x);
  for (const sp of mk.spans ?? []) xVals.push(sp.from, sp.to);
  for (const h of mk.horizontal ?? []) yVals.push(h.y);
  const hasData = spec.series.some((s) => {
    for (let i = 0; i < s.x.length; i++) {
      if (Number.isFinite(s.x[i]) && Number.isFinite(s.y[i]) && (!logX || s.x[i] > 0) && (!logY || s.y[i] > 0)) return true;
    }
    return false;
  });

  const xt = axisTicks(xVals, logX, spec.xRange, Math.max(3, Math.round((W - 120) / 110)));
  const yt = axisTicks(yVals, logY, spec.yRange, Math.max(3, Math.round((H - 120) / 60)));

  // Legend rows determine the bottom margin.
  const entries: LegendEntry[] = spec.series.map((s, i) => ({
    name: s.band?.label ? `${s.name} (band: ${s.band.label})` : s.name,
    style: seriesStyle(i, s.dashed),
    band: s.band !== undefined,
  }));
  const left = Math.max(58, Math.ceil(30 + yLabelWidth(yt) + 8));
  const right = 18;
  const top = 34;
  const legend = legendLayout(entries, left, W - right);
  const bottom = 52 + legend.rows * 18;
  const fr: Frame = { left, top, width: Math.max(10, W - left - right), height: Math.max(10, H - top - bottom) };
  const xs: Scale = { log: logX, lo: xt.lo, hi: xt.hi, p0: fr.left, p1: fr.left + fr.width };
  const ys: Scale = { log: logY, lo: yt.lo, hi: yt.hi, p0: fr.top + fr.height, p1: fr.top };
  const clipUrl = `url(#${id}-clip)`;

  // Annotations behind the data.
  const spanNodes: XNode[] = [];
  const lineMarkNodes: XNode[] = [];
  const labelNodes: XNode[] = [];
  let labelRow = 0;
  const annotationLabel = (x: number, label: string, cls: string) => {
    const y = fr.top + 12 + 13 * labelRow++;
    const w = textWidth(label, 10);
    const anchorEnd = x + 4 + w > fr.left + fr.width;
    labelNodes.push(
      el('text', {
        class: cls,
        x: n(anchorEnd ? x - 4 : x + 4),
        y: n(y),
        'text-anchor': anchorEnd ? 'end' : 'start',
        'font-size': 10,
        fill: INK,
        stroke: '#ffffff',
        'stroke-width': '3',
        'paint-order': 'stroke',
      }, [txt(label)]),
    );
  };
  for (const sp of mk.spans ?? []) {
    let a = mapTo(xs, Math.min(sp.from, sp.to));
    let b = mapTo(xs, Math.max(sp.from, sp.to));
    if (!Number.isFinite(a) && !Number.isFinite(b)) continue;
    a = Math.max(fr.left, Number.isFinite(a) ? a : fr.left);
    b = Math.min(fr.left + fr.width, Number.isFinite(b) ? b : fr.left + fr.width);
    if (b < a) continue;
    spanNodes.push(
      el('rect', { class: 'span', x: n(a), y: n(fr.top), width: n(b - a), height: n(fr.height), fill: '#000000', 'fill-opacity': '0.08' }),
      el('path', { class: 'span-edge', d: `M ${n(a)} ${n(fr.top)} L ${n(a)} ${n(fr.top + fr.height)} M ${n(b)} ${n(fr.top)} L ${n(b)} ${n(fr.top + fr.height)}`, stroke: '#666666', 'stroke-dasharray': '1 2', fill: 'none' }),
    );
    annotationLabel(a, sp.label, 'span-label');
  }
  for (const v of mk.vertical ?? []) {
    const px = mapTo(xs, v.x);
    if (!Number.isFinite(px) || px < fr.left - 1e-9 || px > fr.left + fr.width + 1e-9) continue;
    lineMarkNodes.push(el('path', { class: 'vertical-marker', d: `M ${n(px)} ${n(fr.top)} L ${n(px)} ${n(fr.top + fr.height)}`, stroke: '#555555', 'stroke-width': '1.2', 'stroke-dasharray': '5 3', fill: 'none' }));
    annotationLabel(px, v.label, 'vertical-marker-label');
  }
  for (const h of mk.horizontal ?? []) {
    const py = mapTo(ys, h.y);
    if (!Number.isFinite(py) || py < fr.top - 1e-9 || py > fr.top + fr.height + 1e-9) continue;
    lineMarkNodes.push(el('path', { class: 'horizontal-marker', d: `M ${n(fr.left)} ${n(py)} L ${n(fr.left + fr.width)} ${n(py)}`, stroke: '#555555', 'stroke-width': '1.2', 'stroke-dasharray': '5 3', fill: 'none' }));
    labelNodes.push(
      el('text', { class: 'horizontal-marker-label', x: n(fr.left + fr.width - 4), y: n(py - 4), 'text-anchor': 'end', 'font-size': 10, fill: INK, stroke: '#ffffff', 'stroke-width': '3', 'paint-order': 'stroke' }, [txt(h.label)]),
    );
  }

  // Series.
  const bandNodes: XNode[] = [];
  const errNodes: XNode[] = [];
  const lineNodes: XNode[] = [];
  const markNodes: XNode[] = [];
  spec.series.forEach((s, si) => {
    const st = entries[si].style;
    const len = s.x.length;
    const px = new Float64Array(len);
    const py = new Float64Array(len);
    for (let i = 0; i < len; i++) {
      px[i] = mapTo(xs, s.x[i]);
      py[i] = mapTo(ys, s.y[i]);
    }
    if (s.band) {
      const segs: string[] = [];
      let seg: number[] = [];
      const flush = () => {
        if (seg.length > 0) {
          const up = seg.map((i) => `${n(px[i])} ${n(mapTo(ys, s.band!.upper[i]))}`);
          const lo = seg.map((i) => `${n(px[i])} ${n(mapTo(ys, s.band!.lower[i]))}`).reverse();
          segs.push(`M ${up.join(' L ')} L ${lo.join(' L ')} Z`);
        }
        seg = [];
      };
      for (let i = 0; i < len; i++) {
        if (Number.isFinite(px[i]) && Number.isFinite(mapTo(ys, s.band.upper[i])) && Number.isFinite(mapTo(ys, s.band.lower[i]))) seg.push(i);
        else flush();
      }
      flush();
      if (segs.length) bandNodes.push(el('path', { class: 'band', 'data-series': String(si), d: segs.join(' '), fill: st.color, 'fill-opacity': '0.2', stroke: 'none' }));
    }
    if (s.yError) {
      const parts: string[] = [];
      for (let i = 0; i < len; i++) {
        const e = s.yError[i];
        if (!Number.isFinite(px[i]) || !Number.isFinite(py[i]) || !Number.isFinite(e) || !(e > 0)) continue;
        let a = mapTo(ys, s.y[i] - e);
        let b = mapTo(ys, s.y[i] + e);
        if (!Number.isFinite(a)) a = fr.top + fr.height; // lower end ≤ 0 on a log axis: to the bottom edge
        if (!Number.isFinite(b)) b = fr.top;
        parts.push(`M ${n(px[i])} ${n(a)} L ${n(px[i])} ${n(b)} M ${n(px[i] - 3)} ${n(a)} L ${n(px[i] + 3)} ${n(a)} M ${n(px[i] - 3)} ${n(b)} L ${n(px[i] + 3)} ${n(b)}`);
      }
      if (parts.length) errNodes.push(el('path', { class: 'error-bars', 'data-series': String(si), d: parts.join(' '), stroke: st.color, 'stroke-width': '1.2', fill: 'none' }));
    }
    const d: string[] = [];
    const finite: number[] = [];
    let pen = false;
    for (let i = 0; i < len; i++) {
      if (Number.isFinite(px[i]) && Number.isFinite(py[i])) {
        d.push(`${pen ? 'L' : 'M'} ${n(px[i])} ${n(py[i])}`);
        finite.push(i);
        pen = true;
      } else {
        pen = false;
      }
    }
    lineNodes.push(
      el('path', {
        class: 'series-line',
        'data-series': String(si),
        'data-name': s.name,
        d: d.join(' '),
        fill: 'none',
        stroke: st.color,
        'stroke-width': '2',
        'stroke-linejoin': 'round',
        'stroke-dasharray': st.dash || undefined,
      }),
    );
    if (s.markers !== false && finite.length > 0) {
      const picks: number[] = [];
      if (finite.length <= 30) picks.push(...finite);
      else {
        // K markers spaced evenly across the plot width (not by index, which crowds them on a
        // log axis): the point nearest to each target pixel. Series are staggered by a phase.
        const K = 8;
        const phase = ((si % 4) + 1) / 5;
        for (let j = 0; j < K; j++) {
          const target = fr.left + ((j + phase) / K) * fr.width;
          let best = -1;
          let bestD = Infinity;
          for (const i of finite) {
            const dpx = Math.abs(px[i] - target);
            if (dpx < bestD) {
              bestD = dpx;
              best = i;
            }
          }
          if (best >= 0 && bestD <= fr.width / (2 * K) && !picks.includes(best)) picks.push(best);
        }
      }
      for (const i of picks) {
        if (px[i] < fr.left - 1e-9 || px[i] > fr.left + fr.width + 1e-9 || py[i] < fr.top - 1e-9 || py[i] > fr.top + fr.height + 1e-9) continue;
        markNodes.push(markerNode(st, px[i], py[i], n));
      }
    }
  });

  const { grid, axes } = drawAxes(fr, xs, ys, xt, yt, spec.xLabel, spec.yLabel, n);
  const children: XNode[] = [
    el('defs', {}, [el('clipPath', { id: `${id}-clip` }, [el('rect', { x: n(fr.left), y: n(fr.top), width: n(fr.width), height: n(fr.height) })])]),
    grid,
    el('g', { class: 'spans', 'clip-path': clipUrl }, spanNodes),
    el('g', { class: 'data', 'clip-path': clipUrl }, [...bandNodes, ...lineMarkNodes, ...errNodes, ...lineNodes, ...markNodes]),
    el('rect', { class: 'plot-frame', x: n(fr.left), y: n(fr.top), width: n(fr.width), height: n(fr.height), fill: 'none', stroke: INK, 'stroke-width': '1' }),
    ...axes,
    el('g', { class: 'annotations' }, labelNodes),
  ];
  if (!hasData) {
    children.push(el('text', { class: 'no-data', x: n(fr.left + fr.width / 2), y: n(fr.top + fr.height / 2), 'text-anchor': 'middle', fill: INK }, [txt('no finite data to plot')]));
  }
  if (entries.length) children.push(drawLegend(entries, legend, fr.top + fr.height + 62, n));

  const desc =
    `Line plot. x: ${spec.xLabel}${logX ? ' (logarithmic)' : ''} from ${xt.lo} to ${xt.hi}; ` +
    `y: ${spec.yLabel}${logY ? ' (logarithmic)' : ''} from ${yt.lo} to ${yt.hi}; series: ${spec.series.map((s) => s.name).join(', ') || 'none'}.`;
  return serialise(
    rootSvg(id, W, H, spec.title, desc, {
      'data-x-domain': `${xt.lo} ${xt.hi}`,
      'data-y-domain': `${yt.lo} ${yt.hi}`,
      'data-x-scale': logX ? 'log' : 'linear',
      'data-y-scale': logY ? 'log' : 'linear',
    }, children),
  );
}

// ---------------------------------------------------------------------------------------------
// Bar plot
// ---------------------------------------------------------------------------------------------

/**
 * An SVG bar plot over categories (e.g. a neighbour-count distribution). The y axis always
 * includes 0; bar i of n occupies the middle 70 % of the slot
 * [left + i·width/n, left + (i+1)·width/n] and its top is at the linear map of its value
 * (module comment). Optional error bars show ± uncertainty. Bars with a non-finite value are
 * left out (their category label stays).
 */
export function barPlot(spec: BarPlotSpec): string {
  const W = spec.width ?? 640;
  const H = spec.height ?? 360;
  const n = numberFormatter(spec.decimals ?? 3);
  const id = plotId(spec.id);
  const st = seriesStyle(spec.styleIndex ?? 0);
  const vals: number[] = [0];
  for (const b of spec.bars) {
    if (!Number.isFinite(b.value)) continue;
    vals.push(b.value);
    const u = b.uncertainty;
    if (u != null && Number.isFinite(u) && u > 0) vals.push(b.value - u, b.value + u);
  }
  const yt = axisTicks(vals, false, spec.yRange, Math.max(3, Math.round((H - 120) / 60)));
  const left = Math.max(58, Math.ceil(30 + yLabelWidth(yt) + 8));
  const right = 18;
  const top = 34;
  const bottom = 52;
  const fr: Frame = { left, top, width: Math.max(10, W - left - right), height: Math.max(10, H - top - bottom) };
  const ys: Scale = { log: false, lo: yt.lo, hi: yt.hi, p0: fr.top + fr.height, p1: fr.top };
  const xs: Scale = { log: false, lo: 0, hi: 1, p0: fr.left, p1: fr.left + fr.width };
  const count = spec.bars.length;
  const slot = count > 0 ? fr.width / count : fr.width;
  const labelEvery = Math.max(1, Math.ceil((count * 7 * Math.max(1, ...spec.bars.map((b) => [...b.label].length))) / fr.width));
  const cats = spec.bars.map((b, i) => ({ px: fr.left + (i + 0.5) * slot, label: i % labelEvery === 0 ? b.label : '' }));
  const base = mapTo(ys, Math.min(Math.max(0, yt.lo), yt.hi));
  const barNodes: XNode[] = [];
  const errParts: string[] = [];
  spec.bars.forEach((b, i) => {
    if (!Number.isFinite(b.value)) return;
    const py = mapTo(ys, b.value);
    const x0 = fr.left + (i + 0.15) * slot;
    const y0 = Math.min(py, base);
    barNodes.push(
      el('rect', { class: 'bar', 'data-label': b.label, 'data-value': String(b.value), x: n(x0), y: n(y0), width: n(0.7 * slot), height: n(Math.abs(base - py)), fill: st.color, 'fill-opacity': '0.85', stroke: INK, 'stroke-width': '0.8' }),
    );
    const u = b.uncertainty;
    if (u != null && Number.isFinite(u) && u > 0) {
      const cx = fr.left + (i + 0.5) * slot;
      const a = mapTo(ys, b.value - u);
      const c = mapTo(ys, b.value + u);
      const cap = Math.min(4, 0.2 * slot);
      errParts.push(`M ${n(cx)} ${n(a)} L ${n(cx)} ${n(c)} M ${n(cx - cap)} ${n(a)} L ${n(cx + cap)} ${n(a)} M ${n(cx - cap)} ${n(c)} L ${n(cx + cap)} ${n(c)}`);
    }
  });
  const { grid, axes } = drawAxes(fr, xs, ys, { lo: 0, hi: 1, major: [], labels: [], minor: [], step: NaN }, yt, spec.xLabel, spec.yLabel, n, cats);
  const clipUrl = `url(#${id}-clip)`;
  const children: XNode[] = [
    el('defs', {}, [el('clipPath', { id: `${id}-clip` }, [el('rect', { x: n(fr.left), y: n(fr.top), width: n(fr.width), height: n(fr.height) })])]),
    grid,
    el('g', { class: 'data', 'clip-path': clipUrl }, [
      ...barNodes,
      ...(errParts.length ? [el('path', { class: 'error-bars', d: errParts.join(' '), stroke: INK, 'stroke-width': '1.2', fill: 'none' })] : []),
    ]),
    el('rect', { class: 'plot-frame', x: n(fr.left), y: n(fr.top), width: n(fr.width), height: n(fr.height), fill: 'none', stroke: INK, 'stroke-width': '1' }),
    ...axes,
  ];
  if (barNodes.length === 0) {
    children.push(el('text', { class: 'no-data', x: n(fr.left + fr.width / 2), y: n(fr.top + fr.height / 2), 'text-anchor': 'middle', fill: INK }, [txt('no finite data to plot')]));
  }
  const desc = `Bar plot. categories: ${spec.xLabel}; y: ${spec.yLabel} from ${yt.lo} to ${yt.hi}; ${count} bars.`;
  return serialise(rootSvg(id, W, H, spec.title, desc, { 'data-y-domain': `${yt.lo} ${yt.hi}`, 'data-y-scale': 'linear' }, children));
}

// ---------------------------------------------------------------------------------------------
// Blocking plot
// ---------------------------------------------------------------------------------------------

/**
 * Blocking-analysis plot: the standard error of a mean estimated from blocks of increasing
 * length (logarithmic x axis), with error bars when given; the plateau value, when one was
 * found, is a horizontal line and the block lengths it was read from a shaded span.
 * (Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989) describe the method.)
 */
export function blockingPlot(spec: BlockingPlotSpec): string {
  const markers: PlotMarkers = {};
  if (spec.plateau) {
    markers.horizontal = [{ y: spec.plateau.value, label: spec.plateau.label }];
    let to = spec.plateau.to;
    if (to === undefined) {
      to = -Infinity;
      for (let i = 0; i < spec.blockLengths.length; i++) if (Number.isFinite(spec.blockLengths[i])) to = Math.max(to, spec.blockLengths[i]);
    }
    if (Number.isFinite(to)) markers.spans = [{ from: spec.plateau.from, to, label: 'plateau region' }];
  }
  return linePlot({
    title: spec.title,
    xLabel: spec.xLabel,
    yLabel: spec.yLabel,
    logX: true,
    width: spec.width,
    height: spec.height,
    id: spec.id,
    series: [{ name: 'standard error from blocks', x: spec.blockLengths, y: spec.standardErrors, yError: spec.standardErrorErrors, markers: true }],
    markers,
  });
}
