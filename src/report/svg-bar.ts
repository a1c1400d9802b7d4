/**
 * Bar plots (categorical x, e.g. a neighbour-count distribution) and the block-averaging plot of
 * the report (conventions in src/report/svg.ts).
 */
import { seriesStyle } from './palette.js';
import { axisTicks, drawAxes, el, INK, mapTo, numberFormatter, plotId, rootSvg, serialise, txt, yLabelWidth, type Frame, type Scale, type XNode } from './svg-draw.js';
import { linePlot } from './svg-line.js';
import type { BarPlotSpec, BlockingPlotSpec, PlotMarkers } from './svg.js';

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
