import { describe, expect, it } from 'vitest';
import { XMLParser, XMLValidator } from 'fast-xml-parser';
import { barPlot, blockingPlot, formatTick, linePlot, logTicks, niceTicks, ticksInRange, type LinePlotSpec } from '../src/report/svg.js';
import { DASH_PATTERNS, MARKER_SHAPES, OKABE_ITO, seriesStyle } from '../src/report/palette.js';

// ---------------------------------------------------------------------------------------------
// Helpers: parse an SVG string back (fast-xml-parser, preserveOrder) and look things up.
// ---------------------------------------------------------------------------------------------

type Node = Record<string, unknown>;
interface El {
  tag: string;
  attrs: Record<string, string>;
  children: El[];
  text: string;
}

const parser = new XMLParser({
  preserveOrder: true,
  ignoreAttributes: false,
  attributeNamePrefix: '',
  parseTagValue: false,
  parseAttributeValue: false,
  trimValues: false,
});

function toEl(n: Node): El | null {
  const tag = Object.keys(n).find((k) => k !== ':@')!;
  if (tag === '#text') return null;
  const kids = (n[tag] as Node[]) ?? [];
  const children = kids.map(toEl).filter((c): c is El => c !== null);
  const text = kids.filter((k) => '#text' in k).map((k) => String(k['#text'])).join('');
  return { tag, attrs: (n[':@'] as Record<string, string>) ?? {}, children, text };
}

/** Parse and check well-formedness (XML 1.0) with fast-xml-parser's validator. */
function parseSvg(svg: string): El {
  expect(XMLValidator.validate(svg)).toBe(true);
  const tree = parser.parse(svg) as Node[];
  const roots = tree.map(toEl).filter((e): e is El => e !== null);
  expect(roots).toHaveLength(1);
  return roots[0];
}

function all(root: El, pred: (e: El) => boolean): El[] {
  const out: El[] = [];
  const walk = (e: El) => {
    if (pred(e)) out.push(e);
    e.children.forEach(walk);
  };
  walk(root);
  return out;
}

const hasClass = (c: string) => (e: El) => (e.attrs.class ?? '').split(/\s+/).includes(c);

function allText(e: El): string {
  return e.text + e.children.map(allText).join('');
}

/** Split SVG path data made of absolute M and L commands into subpaths of [x, y] pairs. */
function subpaths(d: string): [number, number][][] {
  const tokens = d.trim().split(/\s+/);
  const out: [number, number][][] = [];
  for (let i = 0; i < tokens.length; ) {
    const cmd = tokens[i];
    expect(['M', 'L']).toContain(cmd);
    const p: [number, number] = [Number(tokens[i + 1]), Number(tokens[i + 2])];
    expect(Number.isFinite(p[0]) && Number.isFinite(p[1])).toBe(true);
    if (cmd === 'M') out.push([p]);
    else out[out.length - 1].push(p);
    i += 3;
  }
  return out;
}

function frameOf(root: El): { left: number; top: number; width: number; height: number } {
  const [f] = all(root, hasClass('plot-frame'));
  return { left: Number(f.attrs.x), top: Number(f.attrs.y), width: Number(f.attrs.width), height: Number(f.attrs.height) };
}

const basic = (over: Partial<LinePlotSpec> = {}): LinePlotSpec => ({
  title: 'Radial distribution',
  xLabel: 'r (Å)',
  yLabel: 'g(r)',
  series: [{ name: 'Na–Cl', x: [0.5, 1, 1.5, 2, 2.5, 3], y: [0, 0.1, 2.4, 1.3, 0.9, 1.0] }],
  ...over,
});

// ---------------------------------------------------------------------------------------------

describe('nice ticks (1-2-5 steps; common practice, no source — expectations worked by hand)', () => {
  it('chooses steps of 1, 2 or 5 × 10^k and widens the domain to whole steps', () => {
    // (0, 10), 5 intervals wanted: rough step 2 → step 2.
    expect(niceTicks(0, 10, 5).major).toEqual([0, 2, 4, 6, 8, 10]);
    // (0, 1): rough 0.2 → step 0.2; values must be the decimal numbers themselves, not 0.6000000000000001.
    expect(niceTicks(0, 1, 5).major).toEqual([0, 0.2, 0.4, 0.6, 0.8, 1]);
    // (−3.7, 12.2): rough 3.18 → step 5 → domain [−5, 15].
    const t = niceTicks(-3.7, 12.2, 5);
    expect(t.major).toEqual([-5, 0, 5, 10, 15]);
    expect([t.lo, t.hi]).toEqual([-5, 15]);
    // (0.0013, 0.0087): rough 0.00148 → step 0.002 → [0, 0.01].
    expect(niceTicks(0.0013, 0.0087, 5).major).toEqual([0, 0.002, 0.004, 0.006, 0.008, 0.01]);
    // (101, 104): rough 0.6 → step 1.
    expect(niceTicks(101, 104, 5).major).toEqual([101, 102, 103, 104]);
    // (2.1e-9, 9.7e-9): rough 1.52e-9 → step 2e-9.
    expect(niceTicks(2.1e-9, 9.7e-9, 5).major).toEqual([2e-9, 4e-9, 6e-9, 8e-9, 1e-8]);
  });
  it('labels ticks with the decimals the step needs, U+2212 for minus, ×10ⁿ for tiny steps', () => {
    expect(niceTicks(0, 1, 5).labels).toEqual(['0', '0.2', '0.4', '0.6', '0.8', '1.0']);
    expect(niceTicks(-3.7, 12.2, 5).labels).toEqual(['\u22125', '0', '5', '10', '15']);
    expect(niceTicks(2.1e-9, 9.7e-9, 5).labels).toEqual(['2×10⁻⁹', '4×10⁻⁹', '6×10⁻⁹', '8×10⁻⁹', '1×10⁻⁸']);
    expect(formatTick(1.5e-9, 5e-10)).toBe('1.5×10⁻⁹');
    expect(formatTick(2e-9, 5e-10)).toBe('2×10⁻⁹');
    expect(formatTick(-3e7, 1e7)).toBe('\u22123×10⁷');
    expect(formatTick(10, 2)).toBe('10');
  });
  it('handles a zero-width range and keeps fixed ranges unwidened', () => {
    const z = niceTicks(3, 3, 5); // widened by 10 % of |3| → [2.7, 3.3], step 0.2 → [2.6, 3.4]
    expect(z.major).toEqual([2.6, 2.8, 3, 3.2, 3.4]);
    const f = ticksInRange(0.3, 9.7, 5); // step 2 ticks inside [0.3, 9.7]
    expect([f.lo, f.hi]).toEqual([0.3, 9.7]);
    expect(f.major).toEqual([2, 4, 6, 8]);
  });
  it('puts log-axis major ticks on decades, with minor ticks 2…9 × 10^k', () => {
    const t = logTicks(0.013, 870);
    expect(t.major).toEqual([0.01, 0.1, 1, 10, 100, 1000]);
    expect([t.lo, t.hi]).toEqual([0.01, 1000]);
    expect(t.labels).toEqual(['0.01', '0.1', '1', '10', '100', '1000']);
    expect(t.minor.slice(0, 8)).toEqual([0.02, 0.03, 0.04, 0.05, 0.06, 0.07, 0.08, 0.09]);
    expect(t.minor).toHaveLength(5 * 8);
    // 10⁻¹² … 10⁰: 12 decades → every 2nd labelled (⌈12/8⌉ = 2), no minor ticks, superscript labels.
    const w = logTicks(3e-12, 0.5);
    expect(w.major).toHaveLength(13);
    expect(w.labels[0]).toBe('10⁻¹²');
    expect(w.labels[1]).toBe('');
    expect(w.labels[2]).toBe('10⁻¹⁰');
    expect(w.minor).toHaveLength(0);
  });
});

describe('line plot', () => {
  it('parses back as XML with an svg root, title, axes and unit-bearing axis titles', () => {
    const root = parseSvg(linePlot(basic()));
    expect(root.tag).toBe('svg');
    expect(root.attrs.xmlns).toBe('http://www.w3.org/2000/svg'); // SVG 1.1 §5.1.1 namespace
    expect(root.attrs.viewBox).toBe('0 0 640 400');
    expect(all(root, (e) => e.tag === 'title').map(allText)).toEqual(['Radial distribution']);
    const xAxis = all(root, hasClass('x-axis'));
    const yAxis = all(root, hasClass('y-axis'));
    expect(xAxis).toHaveLength(1);
    expect(yAxis).toHaveLength(1);
    expect(all(xAxis[0], hasClass('axis-title')).map(allText)).toEqual(['r (Å)']);
    expect(all(yAxis[0], hasClass('axis-title')).map(allText)).toEqual(['g(r)']);
    expect(all(xAxis[0], hasClass('tick-label')).length).toBeGreaterThanOrEqual(3);
    expect(all(root, hasClass('legend-entry')).map(allText)).toEqual(['Na–Cl']);
  });

  it('draws one path per series with exactly one coordinate pair per finite point', () => {
    const x = Array.from({ length: 50 }, (_, i) => i * 0.1);
    const y = x.map((v) => Math.sin(v));
    const root = parseSvg(linePlot(basic({ series: [{ name: 's', x, y }, { name: 't', x, y: y.map((v) => 2 * v) }] })));
    const lines = all(root, hasClass('series-line'));
    expect(lines).toHaveLength(2);
    for (const l of lines) {
      const sp = subpaths(l.attrs.d);
      expect(sp).toHaveLength(1);
      expect(sp[0]).toHaveLength(50);
    }
  });

  it('skips non-finite points by starting a new subpath', () => {
    const x = [0, 1, 2, 3, 4, 5, 6, 7];
    const y = [1, 2, NaN, 4, 5, Infinity, 7, 8];
    const root = parseSvg(linePlot(basic({ series: [{ name: 's', x, y }] })));
    const [line] = all(root, hasClass('series-line'));
    const sp = subpaths(line.attrs.d);
    expect(sp.map((s) => s.length)).toEqual([2, 2, 2]); // 6 finite points in three runs
  });

  it('maps data to pixels by the closed-form linear map (to 1e-6 px)', () => {
    // Closed form: x_px = left + (x − x_lo)/(x_hi − x_lo)·width, y_px = top + (y_hi − y)/(y_hi − y_lo)·height.
    // Tolerance 1e-6 px: the output is written with 7 decimals (rounding ≤ 5e-8 px) and the map
    // is evaluated in double precision (error ~1e-13 px).
    const x = [0, 0.37, 1.5, 2.25, 6.1, 9.99, 10];
    const y = [-1, 0.123456, 2.5, 3, -0.75, 1.0, 2.0];
    const svg = linePlot(basic({ series: [{ name: 's', x, y }], xRange: [0, 10], yRange: [-1, 3], decimals: 7 }));
    const root = parseSvg(svg);
    const fr = frameOf(root);
    const [pts] = subpaths(all(root, hasClass('series-line'))[0].attrs.d);
    expect(pts).toHaveLength(x.length);
    pts.forEach(([px, py], i) => {
      expect(Math.abs(px - (fr.left + ((x[i] - 0) / (10 - 0)) * fr.width))).toBeLessThan(1e-6);
      expect(Math.abs(py - (fr.top + ((3 - y[i]) / (3 - -1)) * fr.height))).toBeLessThan(1e-6);
    });
    expect(root.attrs['data-x-domain']).toBe('0 10');
    expect(root.attrs['data-y-domain']).toBe('-1 3');
  });

  it('with the default 3 decimals the coordinates are within 5e-4 px of the map', () => {
    // Half a unit in the third decimal; same closed form as above.
    const x = [0.1, 0.2, 0.3];
    const y = [1 / 3, 2 / 3, 1];
    const root = parseSvg(linePlot(basic({ series: [{ name: 's', x, y }], xRange: [0, 1], yRange: [0, 1] })));
    const fr = frameOf(root);
    const [pts] = subpaths(all(root, hasClass('series-line'))[0].attrs.d);
    pts.forEach(([px, py], i) => {
      expect(Math.abs(px - (fr.left + x[i] * fr.width))).toBeLessThanOrEqual(5e-4 + 1e-12);
      expect(Math.abs(py - (fr.top + (1 - y[i]) * fr.height))).toBeLessThanOrEqual(5e-4 + 1e-12);
    });
  });

  it('widens an automatic domain to nice ticks whose pixels fall on the frame edges', () => {
    const root = parseSvg(linePlot(basic({ series: [{ name: 's', x: [0.3, 7.9], y: [-3.7, 12.2] }], decimals: 7 })));
    const fr = frameOf(root);
    const [xlo, xhi] = root.attrs['data-x-domain'].split(' ').map(Number);
    const [ylo, yhi] = root.attrs['data-y-domain'].split(' ').map(Number);
    expect(xlo).toBeLessThanOrEqual(0.3);
    expect(xhi).toBeGreaterThanOrEqual(7.9);
    // A 400 px high plot aims at round((400 − 120)/60) = 5 y intervals; for [−3.7, 12.2] that is
    // step 5 and domain [−5, 15] (worked by hand in the nice-ticks test above).
    expect([ylo, yhi]).toEqual([-5, 15]);
    // Every labelled x tick sits at the closed-form position of its value.
    const xt = all(all(root, hasClass('x-axis'))[0], hasClass('tick-label'));
    expect(xt.length).toBeGreaterThanOrEqual(3);
    for (const t of xt) {
      const v = Number(t.attrs['data-value']);
      expect(Math.abs(Number(t.attrs.x) - (fr.left + ((v - xlo) / (xhi - xlo)) * fr.width))).toBeLessThan(1e-6);
    }
    const [p0, p1] = [subpaths(all(root, hasClass('series-line'))[0].attrs.d)[0][0], subpaths(all(root, hasClass('series-line'))[0].attrs.d)[0][1]];
    expect(Math.abs(p0[0] - (fr.left + ((0.3 - xlo) / (xhi - xlo)) * fr.width))).toBeLessThan(1e-6);
    expect(Math.abs(p1[1] - (fr.top + ((yhi - 12.2) / (yhi - ylo)) * fr.height))).toBeLessThan(1e-6);
  });

  it('maps a log axis by log10 and puts decade ticks on it; non-positive points are skipped', () => {
    // Closed form on a log axis: x_px = left + (log10 x − log10 x_lo)/(log10 x_hi − log10 x_lo)·width.
    const x = [0.013, 0.1, 1, 10, 0, -5, 870];
    const y = [1, 2, 3, 4, 5, 6, 7];
    const root = parseSvg(linePlot(basic({ series: [{ name: 's', x, y }], logX: true, decimals: 7 })));
    expect(root.attrs['data-x-scale']).toBe('log');
    expect(root.attrs['data-x-domain']).toBe('0.01 1000');
    const fr = frameOf(root);
    const sp = subpaths(all(root, hasClass('series-line'))[0].attrs.d);
    expect(sp.map((s) => s.length)).toEqual([4, 1]); // x = 0 and x = −5 cannot be shown
    const finiteX = [0.013, 0.1, 1, 10, 870];
    sp.flat().forEach(([px], i) => {
      const want = fr.left + ((Math.log10(finiteX[i]) - -2) / (3 - -2)) * fr.width;
      expect(Math.abs(px - want)).toBeLessThan(1e-6);
    });
    const labels = all(all(root, hasClass('x-axis'))[0], hasClass('tick-label')).map((t) => Number(t.attrs['data-value']));
    expect(labels).toEqual([0.01, 0.1, 1, 10, 100, 1000]);
    // x = 10 is at 3/5 of the width: (1 − (−2)) / (3 − (−2)).
    const ten = all(all(root, hasClass('x-axis'))[0], hasClass('tick-label')).find((t) => t.attrs['data-value'] === '10')!;
    expect(Math.abs(Number(ten.attrs.x) - (fr.left + 0.6 * fr.width))).toBeLessThan(1e-6);
  });

  it('draws bands, error bars and markers at their closed-form positions', () => {
    const x = [1, 2, 3, 4];
    const y = [2, 3, 4, 5];
    const spec = basic({
      series: [{ name: 'MSD', x, y, band: { lower: y.map((v) => v - 0.5), upper: y.map((v) => v + 0.5), label: '±1 s.e.' }, yError: [0.2, 0.2, NaN, 0.2] }],
      markers: { vertical: [{ x: 2.5, label: 'cut-off 2.5 ps' }], spans: [{ from: 1.5, to: 3.5, label: 'fit window' }], horizontal: [{ y: 4.5, label: 'plateau' }] },
      xRange: [0, 5],
      yRange: [0, 6],
      decimals: 7,
    });
    const root = parseSvg(linePlot(spec));
    const fr = frameOf(root);
    const X = (v: number) => fr.left + (v / 5) * fr.width;
    const Y = (v: number) => fr.top + ((6 - v) / 6) * fr.height;
    const [band] = all(root, hasClass('band'));
    const bandPts = band.attrs.d.replace(/ Z$/, '').replace(/[ML] /g, '').split(' ').map(Number);
    expect(bandPts).toHaveLength(2 * 8); // 4 upper + 4 lower points
    expect(Math.abs(bandPts[0] - X(1))).toBeLessThan(1e-6);
    expect(Math.abs(bandPts[1] - Y(2.5))).toBeLessThan(1e-6);
    const [err] = all(root, hasClass('error-bars'));
    expect(err.attrs.d.match(/M/g)).toHaveLength(3 * 3); // 3 bars (one NaN), each stem + 2 caps
    const [vm] = all(root, hasClass('vertical-marker'));
    const [[[vx]]] = subpaths(vm.attrs.d);
    expect(Math.abs(vx - X(2.5))).toBeLessThan(1e-6);
    const [span] = all(root, hasClass('span'));
    expect(Math.abs(Number(span.attrs.x) - X(1.5))).toBeLessThan(1e-6);
    expect(Math.abs(Number(span.attrs.width) - (X(3.5) - X(1.5)))).toBeLessThan(1e-6);
    const [hm] = all(root, hasClass('horizontal-marker'));
    expect(Math.abs(subpaths(hm.attrs.d)[0][0][1] - Y(4.5))).toBeLessThan(1e-6);
    const labels = all(root, (e) => /marker-label|span-label/.test(e.attrs.class ?? '')).map(allText).sort();
    expect(labels).toEqual(['cut-off 2.5 ps', 'fit window', 'plateau']);
    expect(all(root, hasClass('legend-entry')).map(allText)).toEqual(['MSD (band: ±1 s.e.)']);
  });

  it('escapes hostile labels (XML 1.0 §2.4) and replaces characters XML forbids (§2.2)', () => {
    const hostile = '<script>alert(1)</script> "&\'';
    const svg = linePlot(basic({ title: hostile, xLabel: `t ${hostile}`, yLabel: 'bad\u0001char', series: [{ name: hostile, x: [1, 2], y: [1, 2] }] }));
    expect(svg).not.toMatch(/<script/i);
    expect(svg).toContain('&lt;script&gt;alert(1)&lt;/script&gt; &quot;&amp;&apos;');
    const root = parseSvg(svg); // well-formed despite U+0001
    const decoded = new XMLParser({ preserveOrder: false, ignoreAttributes: false, attributeNamePrefix: '', parseTagValue: false, trimValues: false, processEntities: true });
    const obj = decoded.parse(svg) as { svg: { title: { '#text': string } } };
    expect(obj.svg.title['#text']).toBe(hostile); // entities decode back to the original text
    expect(all(root, hasClass('axis-title')).map(allText)).toContain('bad\uFFFDchar');
  });

  it('refuses series whose arrays differ in length', () => {
    expect(() => linePlot(basic({ series: [{ name: 's', x: [1, 2, 3], y: [1, 2] }] }))).toThrow(RangeError);
  });

  it('says so when there is nothing to plot', () => {
    const root = parseSvg(linePlot(basic({ series: [{ name: 's', x: [1, 2], y: [NaN, NaN] }] })));
    expect(all(root, hasClass('no-data'))).toHaveLength(1);
    expect(subpaths(all(root, hasClass('series-line'))[0].attrs.d || 'M 0 0')).toHaveLength(1);
  });

  it('gives every plot its own clipPath id', () => {
    const a = parseSvg(linePlot(basic()));
    const b = parseSvg(linePlot(basic()));
    const id = (r: El) => all(r, (e) => e.tag === 'clipPath')[0].attrs.id;
    expect(id(a)).not.toBe(id(b));
    expect(all(a, hasClass('data'))[0].attrs['clip-path']).toBe(`url(#${id(a)})`);
  });
});

describe('bar plot', () => {
  it('draws one bar per finite value with heights by the closed-form linear map', () => {
    const bars = [
      { label: '4', value: 0.05 },
      { label: '5', value: 0.3, uncertainty: 0.02 },
      { label: '6', value: 0.45, uncertainty: 0.03 },
      { label: '7', value: NaN },
      { label: '8', value: 0.2 },
    ];
    const root = parseSvg(barPlot({ title: 'Neighbour count', xLabel: 'neighbours within 3.5 Å', yLabel: 'fraction of Na', bars, yRange: [0, 0.5], decimals: 7 }));
    const fr = frameOf(root);
    const rects = all(root, hasClass('bar'));
    expect(rects.map((r) => r.attrs['data-label'])).toEqual(['4', '5', '6', '8']);
    // Height = value/(y_hi − y_lo)·height with y_lo = 0; slot i spans [left + i·w/n, left + (i+1)·w/n].
    const slot = fr.width / bars.length;
    for (const r of rects) {
      const i = bars.findIndex((b) => b.label === r.attrs['data-label']);
      expect(Math.abs(Number(r.attrs.height) - (bars[i].value / 0.5) * fr.height)).toBeLessThan(1e-6);
      expect(Math.abs(Number(r.attrs.x) - (fr.left + (i + 0.15) * slot))).toBeLessThan(1e-6);
      expect(Math.abs(Number(r.attrs.y) + Number(r.attrs.height) - (fr.top + fr.height))).toBeLessThan(1e-6);
    }
    expect(all(root, hasClass('error-bars'))[0].attrs.d.match(/M/g)).toHaveLength(2 * 3);
    const xt = all(all(root, hasClass('x-axis'))[0], hasClass('tick-label')).map(allText);
    expect(xt).toEqual(['4', '5', '6', '7', '8']);
    expect(all(root, hasClass('axis-title')).map(allText)).toEqual(['neighbours within 3.5 Å', 'fraction of Na']);
  });
  it('always includes zero on the value axis', () => {
    const root = parseSvg(barPlot({ title: 't', xLabel: 'k', yLabel: 'count', bars: [{ label: 'a', value: 50 }, { label: 'b', value: 60 }] }));
    const [lo] = root.attrs['data-y-domain'].split(' ').map(Number);
    expect(lo).toBe(0);
  });
});

describe('blocking plot', () => {
  it('is a log-x line plot with error bars and the plateau drawn', () => {
    const L = [1, 2, 4, 8, 16, 32, 64];
    const se = [0.1, 0.14, 0.18, 0.2, 0.21, 0.21, 0.2];
    const root = parseSvg(blockingPlot({ title: 'Blocking', xLabel: 'block length (ps)', yLabel: 's.e. of ⟨P⟩ (bar)', blockLengths: L, standardErrors: se, standardErrorErrors: se.map((v) => v * 0.1), plateau: { value: 0.21, from: 8, label: 'plateau 0.21 bar' } }));
    expect(root.attrs['data-x-scale']).toBe('log');
    const sp = subpaths(all(root, hasClass('series-line'))[0].attrs.d);
    expect(sp.flat()).toHaveLength(L.length);
    expect(all(root, hasClass('marker'))).toHaveLength(L.length + 1); // every point (≤ 30) + legend
    expect(all(root, hasClass('horizontal-marker'))).toHaveLength(1);
    expect(all(root, hasClass('span'))).toHaveLength(1);
  });
});

describe('palette (Okabe & Ito 2008, "Color Universal Design")', () => {
  it('uses the eight published Okabe–Ito colours', () => {
    // RGB triples as published by Okabe & Ito (2008): black 0,0,0; orange 230,159,0;
    // sky blue 86,180,233; bluish green 0,158,115; yellow 240,228,66; blue 0,114,178;
    // vermillion 213,94,0; reddish purple 204,121,167.
    const published: Record<string, [number, number, number]> = {
      black: [0, 0, 0],
      orange: [230, 159, 0],
      'sky blue': [86, 180, 233],
      'bluish green': [0, 158, 115],
      yellow: [240, 228, 66],
      blue: [0, 114, 178],
      vermillion: [213, 94, 0],
      'reddish purple': [204, 121, 167],
    };
    expect(OKABE_ITO).toHaveLength(8);
    for (const c of OKABE_ITO) {
      const rgb = [1, 3, 5].map((k) => parseInt(c.hex.slice(k, k + 2), 16));
      expect(rgb).toEqual(published[c.name]);
    }
  });
  it('gives the first eight series distinct dash patterns and marker shapes (grey-scale safe)', () => {
    const styles = Array.from({ length: 8 }, (_, i) => seriesStyle(i));
    expect(new Set(styles.map((s) => s.color)).size).toBe(8);
    expect(new Set(styles.map((s) => s.dash)).size).toBe(8);
    expect(new Set(styles.map((s) => s.marker)).size).toBe(8);
    expect(new Set(DASH_PATTERNS).size).toBe(DASH_PATTERNS.length);
    expect(new Set(MARKER_SHAPES).size).toBe(MARKER_SHAPES.length);
    expect(seriesStyle(0, true).dash).not.toBe('');
  });
});
