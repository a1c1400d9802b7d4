/**
 * Axis ticks of the report's plots (src/report/svg.ts): "nice" 1-2-5 linear ticks, decade ticks
 * on logarithmic axes, and tick labels.
 */

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
