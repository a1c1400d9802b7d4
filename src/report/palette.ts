/**
 * Series styles for report plots: colour, dash pattern and marker shape.
 *
 * Colours are the Okabe–Ito colour-blind-safe palette (M. Okabe & K. Ito, "Color Universal
 * Design (CUD): How to make figures and presentations that are friendly to colorblind people",
 * 2008). Yellow comes last because it has little contrast on white paper.
 *
 * Colour alone is not enough on a grey-scale print-out, so every series also gets its own dash
 * pattern and its own marker shape; the three cycle together, so series i and i + 8 look alike.
 */

/** The eight Okabe–Ito colours, in the order series use them. */
export const OKABE_ITO = [
  { name: 'blue', hex: '#0072B2' },
  { name: 'vermillion', hex: '#D55E00' },
  { name: 'bluish green', hex: '#009E73' },
  { name: 'reddish purple', hex: '#CC79A7' },
  { name: 'orange', hex: '#E69F00' },
  { name: 'sky blue', hex: '#56B4E9' },
  { name: 'black', hex: '#000000' },
  { name: 'yellow', hex: '#F0E442' },
] as const;

/** SVG stroke-dasharray values, one per series ('' = solid line). */
export const DASH_PATTERNS: readonly string[] = [
  '',
  '7 3',
  '2 2',
  '9 3 2 3',
  '1 3',
  '12 4',
  '5 2 1 2 1 2',
  '14 3 3 3',
];

/** Marker shapes, one per series. */
export type MarkerShape =
  | 'circle'
  | 'square'
  | 'triangle-up'
  | 'diamond'
  | 'triangle-down'
  | 'cross'
  | 'plus'
  | 'star';

/** Marker shapes in series order. */
export const MARKER_SHAPES: readonly MarkerShape[] = [
  'circle',
  'square',
  'triangle-up',
  'diamond',
  'triangle-down',
  'cross',
  'plus',
  'star',
];

/** The complete look of one series. */
export interface SeriesStyle {
  /** Stroke/fill colour, "#RRGGBB". */
  color: string;
  /** SVG stroke-dasharray ('' for a solid line). */
  dash: string;
  /** Marker drawn at a few points of the line and in the legend. */
  marker: MarkerShape;
}

/**
 * Style of series number `i` (0-based): colour i mod 8 of the Okabe–Ito palette, dash pattern
 * i mod 8, marker shape i mod 8. `dashed` forces a dashed line for a series whose first style
 * would be solid (e.g. a fitted line drawn over data).
 */
export function seriesStyle(i: number, dashed = false): SeriesStyle {
  const k = ((Math.trunc(i) % 8) + 8) % 8;
  let dash = DASH_PATTERNS[k];
  if (dashed && dash === '') dash = DASH_PATTERNS[1];
  return { color: OKABE_ITO[k].hex, dash, marker: MARKER_SHAPES[k] };
}

/**
 * SVG path data of a marker of the given shape centred at (cx, cy) with half-size r (pixels).
 * Closed shapes are meant to be filled; 'cross' and 'plus' are strokes only.
 * Geometry: regular polygons with vertices at angle θ_k = θ0 + 2πk/n on a circle of radius r
 * (the circle is approximated by two arcs).
 */
export function markerPath(shape: MarkerShape, cx: number, cy: number, r: number, fmt: (v: number) => string): string {
  const p = (x: number, y: number) => `${fmt(x)} ${fmt(y)}`;
  switch (shape) {
    case 'circle':
      return `M ${p(cx - r, cy)} A ${fmt(r)} ${fmt(r)} 0 1 0 ${p(cx + r, cy)} A ${fmt(r)} ${fmt(r)} 0 1 0 ${p(cx - r, cy)} Z`;
    case 'square': {
      const s = r * 0.85;
      return `M ${p(cx - s, cy - s)} L ${p(cx + s, cy - s)} L ${p(cx + s, cy + s)} L ${p(cx - s, cy + s)} Z`;
    }
    case 'triangle-up':
    case 'triangle-down': {
      const sgn = shape === 'triangle-up' ? -1 : 1;
      const h = r * Math.sqrt(3) / 2;
      return `M ${p(cx, cy + sgn * r)} L ${p(cx + h, cy - sgn * r / 2)} L ${p(cx - h, cy - sgn * r / 2)} Z`;
    }
    case 'diamond':
      return `M ${p(cx, cy - r)} L ${p(cx + r, cy)} L ${p(cx, cy + r)} L ${p(cx - r, cy)} Z`;
    case 'cross': {
      const s = r * 0.8;
      return `M ${p(cx - s, cy - s)} L ${p(cx + s, cy + s)} M ${p(cx - s, cy + s)} L ${p(cx + s, cy - s)}`;
    }
    case 'plus':
      return `M ${p(cx - r, cy)} L ${p(cx + r, cy)} M ${p(cx, cy - r)} L ${p(cx, cy + r)}`;
    case 'star': {
      // Five-pointed star: outer radius r, inner radius 0.4 r, first point straight up.
      const pts: string[] = [];
      for (let k = 0; k < 10; k++) {
        const rad = k % 2 === 0 ? r : 0.4 * r;
        const a = -Math.PI / 2 + (k * Math.PI) / 5;
        pts.push(p(cx + rad * Math.cos(a), cy + rad * Math.sin(a)));
      }
      return `M ${pts.join(' L ')} Z`;
    }
  }
}

/** True when the marker shape is drawn as a stroke only (no fill). */
export function markerIsOpen(shape: MarkerShape): boolean {
  return shape === 'cross' || shape === 'plus';
}
