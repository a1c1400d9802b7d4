/**
 * Drawing primitives of the report's plots (src/report/svg.ts): the XML tree and its
 * serialisation, pixel scales, axes with ticks and titles, legends, markers and the root element.
 * Conventions (coordinates, escaping) are stated in src/report/svg.ts.
 */
import { XMLBuilder } from 'fast-xml-parser';
import { stripXmlControls } from './escape.js';
import { markerIsOpen, markerPath, type SeriesStyle } from './palette.js';
import { logTicks, niceTicks, ticksInRange, type Ticks } from './svg-ticks.js';

// ---------------------------------------------------------------------------------------------
// XML tree helpers (fast-xml-parser preserveOrder format)
// ---------------------------------------------------------------------------------------------

/** A node in fast-xml-parser's preserveOrder format. */
export type XNode = Record<string, unknown>;
type AttrValue = string | number | undefined;

const ATTR = '@_';

/** An element node: tag, attributes (undefined ones left out; text stripped of XML-forbidden characters) and children. */
export function el(tag: string, attrs: Record<string, AttrValue>, children: XNode[] = []): XNode {
  const node: XNode = { [tag]: children };
  const a: Record<string, string> = {};
  for (const [k, v] of Object.entries(attrs)) {
    if (v === undefined) continue;
    a[ATTR + k] = typeof v === 'number' ? String(v) : stripXmlControls(v);
  }
  if (Object.keys(a).length) node[':@'] = a;
  return node;
}

/** A text node (stripped of characters XML 1.0 forbids). */
export function txt(s: string): XNode {
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

/** The SVG text of a tree (XMLBuilder escapes & < > " ' per XML 1.0 §2.4). */
export function serialise(root: XNode): string {
  return builder.build([root]) as string;
}

// ---------------------------------------------------------------------------------------------
// Layout and scales
// ---------------------------------------------------------------------------------------------

const FONT = 12;
const FONT_FAMILY = 'DejaVu Sans, Verdana, Arial, Helvetica, sans-serif';
/** Colour of text, axes and frames. */
export const INK = '#222222';
const GRID = '#e3e3e3';

/** Rough rendered width of a text in px (sans-serif average advance ≈ 0.6 em; common practice). */
export function textWidth(s: string, size = FONT): number {
  return 0.6 * size * [...s].length;
}

let autoId = 0;

/** An element-id prefix: the given id made safe (letters, digits, - and _; starts with a letter), or a new automatic one. */
export function plotId(id: string | undefined): string {
  if (id !== undefined) {
    const clean = id.replace(/[^A-Za-z0-9_-]/g, '-');
    return /^[A-Za-z]/.test(clean) ? clean : `p-${clean}`;
  }
  autoId += 1;
  return `sojourn-plot-${autoId}`;
}

/** Maps data values to pixels along one axis. */
export interface Scale {
  log: boolean;
  lo: number;
  hi: number;
  /** Pixel of lo and of hi. */
  p0: number;
  p1: number;
}

/** Pixel of v on a scale; NaN when v cannot be shown (non-finite, or ≤ 0 on a log scale). */
export function mapTo(s: Scale, v: number): number {
  if (!Number.isFinite(v)) return NaN;
  if (s.log) {
    if (!(v > 0)) return NaN;
    const a = Math.log10(s.lo);
    return s.p0 + ((Math.log10(v) - a) / (Math.log10(s.hi) - a)) * (s.p1 - s.p0);
  }
  return s.p0 + ((v - s.lo) / (s.hi - s.lo)) * (s.p1 - s.p0);
}

/** Formatter of pixel coordinates with at most `decimals` decimals (0 to 12), never "-0". */
export function numberFormatter(decimals: number): (v: number) => string {
  const d = Math.max(0, Math.min(12, Math.round(decimals)));
  return (v: number) => {
    const s = String(Number(v.toFixed(d)));
    return s === '-0' ? '0' : s;
  };
}

/**
 * Ticks of an axis: inside the given range (checked: two different finite numbers, positive on a
 * log axis), else covering the finite (and, on a log axis, positive) values; [0, 1] or [1, 10] without any.
 */
export function axisTicks(values: number[], log: boolean, range: [number, number] | undefined, target: number): Ticks {
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

/** The plot area in pixels. */
export interface Frame {
  left: number;
  top: number;
  width: number;
  height: number;
}

/** One legend entry: name, style, and whether it shows a band or a bar. */
export interface LegendEntry {
  name: string;
  style: SeriesStyle;
  band: boolean;
  bars?: boolean;
}

/** Lay legend entries out in rows under the plot; returns positions and the number of rows. */
export function legendLayout(entries: LegendEntry[], left: number, maxRight: number): { rows: number; pos: { x: number; row: number }[] } {
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

/** The legend under the plot: per entry a line (and band) or a bar swatch, its marker and name. */
export function drawLegend(entries: LegendEntry[], layout: { pos: { x: number; row: number }[] }, y0: number, n: (v: number) => string): XNode {
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

/** A series marker (Okabe–Ito colour and shape, src/report/palette.ts) centred at (cx, cy). */
export function markerNode(style: SeriesStyle, cx: number, cy: number, n: (v: number) => string): XNode {
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
export function drawAxes(
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

/** The root <svg> with title, description (accessible names), white background and the plot title. */
export function rootSvg(id: string, w: number, h: number, title: string, desc: string, extra: Record<string, string>, children: XNode[]): XNode {
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

/** Throw RangeError unless an array has the length of the series' x. */
export function checkLength(what: string, a: ArrayLike<number>, n: number): void {
  if (a.length !== n) throw new RangeError(`${what} has ${a.length} values but x has ${n}`);
}

/** Width in px of the widest tick label of an axis. */
export function yLabelWidth(t: Ticks): number {
  return Math.max(0, ...t.labels.map((s) => textWidth(s)));
}
