/**
 * Line plots of the report: series with optional bands, error bars and markers, fit windows
 * (spans), cut-offs (vertical lines) and reference values (horizontal lines), and a legend
 * (conventions — coordinates, gaps, clipping — in src/report/svg.ts).
 */
import { seriesStyle, type SeriesStyle } from './palette.js';
import {
  axisTicks,
  checkLength,
  drawAxes,
  drawLegend,
  el,
  INK,
  legendLayout,
  mapTo,
  markerNode,
  numberFormatter,
  plotId,
  rootSvg,
  serialise,
  textWidth,
  txt,
  yLabelWidth,
  type Frame,
  type LegendEntry,
  type Scale,
  type XNode,
} from './svg-draw.js';
import type { LinePlotSpec, LineSeries, PlotMarkers } from './svg.js';

/** The values the axes must cover (finite points, bands, error bars, markers) and whether any point can be drawn. */
function dataExtents(spec: LinePlotSpec, logX: boolean, logY: boolean): { xVals: number[]; yVals: number[]; hasData: boolean } {
  const mk = spec.markers ?? {};
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
  return { xVals, yVals, hasData };
}

/** Spans, vertical and horizontal marker lines and their labels (labels stacked from the top). */
function annotationNodes(mk: PlotMarkers, fr: Frame, xs: Scale, ys: Scale, n: (v: number) => string): { spans: XNode[]; lines: XNode[]; labels: XNode[] } {
  const spans: XNode[] = [];
  const lines: XNode[] = [];
  const labels: XNode[] = [];
  let labelRow = 0;
  const annotationLabel = (x: number, label: string, cls: string) => {
    const y = fr.top + 12 + 13 * labelRow++;
    const w = textWidth(label, 10);
    const anchorEnd = x + 4 + w > fr.left + fr.width;
    labels.push(
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
    spans.push(
      el('rect', { class: 'span', x: n(a), y: n(fr.top), width: n(b - a), height: n(fr.height), fill: '#000000', 'fill-opacity': '0.08' }),
      el('path', { class: 'span-edge', d: `M ${n(a)} ${n(fr.top)} L ${n(a)} ${n(fr.top + fr.height)} M ${n(b)} ${n(fr.top)} L ${n(b)} ${n(fr.top + fr.height)}`, stroke: '#666666', 'stroke-dasharray': '1 2', fill: 'none' }),
    );
    annotationLabel(a, sp.label, 'span-label');
  }
  for (const v of mk.vertical ?? []) {
    const px = mapTo(xs, v.x);
    if (!Number.isFinite(px) || px < fr.left - 1e-9 || px > fr.left + fr.width + 1e-9) continue;
    lines.push(el('path', { class: 'vertical-marker', d: `M ${n(px)} ${n(fr.top)} L ${n(px)} ${n(fr.top + fr.height)}`, stroke: '#555555', 'stroke-width': '1.2', 'stroke-dasharray': '5 3', fill: 'none' }));
    annotationLabel(px, v.label, 'vertical-marker-label');
  }
  for (const h of mk.horizontal ?? []) {
    const py = mapTo(ys, h.y);
    if (!Number.isFinite(py) || py < fr.top - 1e-9 || py > fr.top + fr.height + 1e-9) continue;
    lines.push(el('path', { class: 'horizontal-marker', d: `M ${n(fr.left)} ${n(py)} L ${n(fr.left + fr.width)} ${n(py)}`, stroke: '#555555', 'stroke-width': '1.2', 'stroke-dasharray': '5 3', fill: 'none' }));
    labels.push(
      el('text', { class: 'horizontal-marker-label', x: n(fr.left + fr.width - 4), y: n(py - 4), 'text-anchor': 'end', 'font-size': 10, fill: INK, stroke: '#ffffff', 'stroke-width': '3', 'paint-order': 'stroke' }, [txt(h.label)]),
    );
  }
  return { spans, lines, labels };
}

/** The band of a series as one path of closed polygons, one per run of drawable points; null when none. */
function bandNode(s: LineSeries, si: number, st: SeriesStyle, px: Float64Array, ys: Scale, n: (v: number) => string): XNode | null {
  const band = s.band!;
  const segs: string[] = [];
  let seg: number[] = [];
  const flush = () => {
    if (seg.length > 0) {
      const up = seg.map((i) => `${n(px[i])} ${n(mapTo(ys, band.upper[i]))}`);
      const lo = seg.map((i) => `${n(px[i])} ${n(mapTo(ys, band.lower[i]))}`).reverse();
      segs.push(`M ${up.join(' L ')} L ${lo.join(' L ')} Z`);
    }
    seg = [];
  };
  for (let i = 0; i < px.length; i++) {
    if (Number.isFinite(px[i]) && Number.isFinite(mapTo(ys, band.upper[i])) && Number.isFinite(mapTo(ys, band.lower[i]))) seg.push(i);
    else flush();
  }
  flush();
  return segs.length ? el('path', { class: 'band', 'data-series': String(si), d: segs.join(' '), fill: st.color, 'fill-opacity': '0.2', stroke: 'none' }) : null;
}

/** The error bars of a series as one path (capped vertical bars); null when none can be drawn. */
function errorBarNode(s: LineSeries, si: number, st: SeriesStyle, px: Float64Array, py: Float64Array, fr: Frame, ys: Scale, n: (v: number) => string): XNode | null {
  const yError = s.yError!;
  const parts: string[] = [];
  for (let i = 0; i < px.length; i++) {
    const e = yError[i];
    if (!Number.isFinite(px[i]) || !Number.isFinite(py[i]) || !Number.isFinite(e) || !(e > 0)) continue;
    let a = mapTo(ys, s.y[i] - e);
    let b = mapTo(ys, s.y[i] + e);
    if (!Number.isFinite(a)) a = fr.top + fr.height; // lower end ≤ 0 on a log axis: to the bottom edge
    if (!Number.isFinite(b)) b = fr.top;
    parts.push(`M ${n(px[i])} ${n(a)} L ${n(px[i])} ${n(b)} M ${n(px[i] - 3)} ${n(a)} L ${n(px[i] + 3)} ${n(a)} M ${n(px[i] - 3)} ${n(b)} L ${n(px[i] + 3)} ${n(b)}`);
  }
  return parts.length ? el('path', { class: 'error-bars', 'data-series': String(si), d: parts.join(' '), stroke: st.color, 'stroke-width': '1.2', fill: 'none' }) : null;
}

/**
 * Which points of a series get a marker: all of them up to 30; otherwise K = 8 spaced evenly
 * across the plot width (not by index, which crowds them on a log axis), the point nearest each
 * target pixel, series staggered by a phase.
 */
function markerPicks(finite: number[], px: Float64Array, si: number, fr: Frame): number[] {
  if (finite.length <= 30) return [...finite];
  const picks: number[] = [];
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
    if (best >= 0 && bestD <= fr.width / (2 * K) && picks.indexOf(best) < 0) picks.push(best);
  }
  return picks;
}

/** One series: its band, error bars, line (one path, gaps restart with "M") and markers. */
function seriesNodes(s: LineSeries, si: number, st: SeriesStyle, fr: Frame, xs: Scale, ys: Scale, n: (v: number) => string) {
  const len = s.x.length;
  const px = new Float64Array(len);
  const py = new Float64Array(len);
  for (let i = 0; i < len; i++) {
    px[i] = mapTo(xs, s.x[i]);
    py[i] = mapTo(ys, s.y[i]);
  }
  const band = s.band ? bandNode(s, si, st, px, ys, n) : null;
  const errors = s.yError ? errorBarNode(s, si, st, px, py, fr, ys, n) : null;
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
  const line = el('path', {
    class: 'series-line',
    'data-series': String(si),
    'data-name': s.name,
    d: d.join(' '),
    fill: 'none',
    stroke: st.color,
    'stroke-width': '2',
    'stroke-linejoin': 'round',
    'stroke-dasharray': st.dash || undefined,
  });
  const marks: XNode[] = [];
  if (s.markers !== false && finite.length > 0) {
    for (const i of markerPicks(finite, px, si, fr)) {
      if (px[i] < fr.left - 1e-9 || px[i] > fr.left + fr.width + 1e-9 || py[i] < fr.top - 1e-9 || py[i] > fr.top + fr.height + 1e-9) continue;
      marks.push(markerNode(st, px[i], py[i], n));
    }
  }
  return { band, errors, line, marks };
}

/**
 * An SVG line plot. Axes get nice 1-2-5 ticks (decades on log axes), tick labels, titles with
 * the units from the labels; series get Okabe–Ito colours, dash patterns and marker shapes
 * (src/report/palette.ts), optional shaded bands and error bars; markers draw fit windows
 * (spans), cut-offs (vertical lines) and reference values (horizontal lines); a legend under
 * the plot names the series. See src/report/svg.ts for the coordinate map and the handling of
 * non-finite points. Throws RangeError when a series' arrays differ in length.
 */
export function linePlot(spec: LinePlotSpec): string {
  const W = spec.width ?? 640;
  const H = spec.height ?? 400;
  const n = numberFormatter(spec.decimals ?? 3);
  const id = plotId(spec.id);
  const logX = spec.logX === true;
  const logY = spec.logY === true;
  const { xVals, yVals, hasData } = dataExtents(spec, logX, logY);
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

  const notes = annotationNodes(spec.markers ?? {}, fr, xs, ys, n);
  const drawn = spec.series.map((s, si) => seriesNodes(s, si, entries[si].style, fr, xs, ys, n));
  const present = (x: XNode | null): x is XNode => x !== null;
  const data: XNode[] = [
    ...drawn.map((d) => d.band).filter(present),
    ...notes.lines,
    ...drawn.map((d) => d.errors).filter(present),
    ...drawn.map((d) => d.line),
    ...drawn.flatMap((d) => d.marks),
  ];

  const { grid, axes } = drawAxes(fr, xs, ys, xt, yt, spec.xLabel, spec.yLabel, n);
  const children: XNode[] = [
    el('defs', {}, [el('clipPath', { id: `${id}-clip` }, [el('rect', { x: n(fr.left), y: n(fr.top), width: n(fr.width), height: n(fr.height) })])]),
    grid,
    el('g', { class: 'spans', 'clip-path': clipUrl }, notes.spans),
    el('g', { class: 'data', 'clip-path': clipUrl }, data),
    el('rect', { class: 'plot-frame', x: n(fr.left), y: n(fr.top), width: n(fr.width), height: n(fr.height), fill: 'none', stroke: INK, 'stroke-width': '1' }),
    ...axes,
    el('g', { class: 'annotations' }, notes.labels),
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
