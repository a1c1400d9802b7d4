/**
 * Renders a sample report in headless Chromium (Debian package, /usr/bin/chromium) and checks
 * what a reader would see. Skipped, with a message, when Chromium is not installed.
 *
 * What is checked:
 * 1. `--screenshot`: the PNG exists, starts with the PNG signature, its IHDR chunk (at byte 8:
 *    length, then "IHDR" at bytes 12–15, width at 16–19, height at 20–23, big-endian) gives
 *    exactly the window size 1200 × 2000 (PNG spec, W3C Recommendation / ISO/IEC 15948, §11.2.2);
 *    the file is larger than 10 KB; decoding it (zlib inflate + the five scanline filters of
 *    PNG §9) shows ink — more than 1 % of pixels not white — and pixels in the first series'
 *    colour (Okabe–Ito blue, #0072B2), so the plots were drawn.
 * 2. `--dump-dom`: the DOM after parsing holds one <svg> element per figure, each figure's
 *    title, the caution, and no <script> element; hostile labels arrive as text.
 * 3. Console: with `--enable-logging=stderr --v=0` Chromium copies page console messages to
 *    stderr. Chromium 156 tags every page console message "INFO:CONSOLE", errors included (an
 *    uncaught exception appears as `INFO:CONSOLE:1] "Uncaught Error: …"`, a blocked load as
 *    `… violates the following Content Security Policy directive …`), so any line with
 *    ":CONSOLE", "Uncaught", "Content Security Policy" or "Refused to" fails: the report has no
 *    script, so a console message can only mean an error. A canary page that loads an external
 *    image under the report's CSP must produce such a line, which proves the check is live with
 *    the installed Chromium.
 */
import { describe, expect, it } from 'vitest';
import { execFile } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { inflateSync } from 'node:zlib';
import { renderReportHtml, type ReportModel } from '../src/report/html.js';
import { barPlot, blockingPlot, linePlot } from '../src/report/svg.js';
import { CAUTION } from '../src/caution.js';
import { writeFileAtomic } from '../src/output.js';

/** Debian's Chromium; SOJOURN_CHROMIUM may name another binary (e.g. a missing one, to see the skip). */
const CHROMIUM = process.env.SOJOURN_CHROMIUM ?? '/usr/bin/chromium';
const HAVE_CHROMIUM = existsSync(CHROMIUM);
const WIDTH = 1200;
const HEIGHT = 2000;

if (!HAVE_CHROMIUM) {
  console.warn(`report-browser.test.ts: skipped — ${CHROMIUM} not found (install it with: apt-get install -y chromium)`);
}

function sampleModel(): { model: ReportModel; figureTitles: string[] } {
  const t = Array.from({ length: 200 }, (_, i) => 0.1 * (i + 1));
  const msd = t.map((v) => 6 * 0.12 * v + 0.3 * (1 - Math.exp(-v)));
  const r = Array.from({ length: 300 }, (_, i) => 0.02 * (i + 1));
  const g = r.map((x) => (x < 2 ? 0 : 1 + 1.6 * Math.exp(-((x - 2.8) ** 2) / 0.05) - 0.3 * Math.exp(-((x - 3.6) ** 2) / 0.1)));
  const eta = t.map((v) => 0.9 * (1 - Math.exp(-v / 2)));
  const figureTitles = ['Mean-squared displacement <Na> "&\'', 'Radial distribution Na–Cl', 'Running Green–Kubo integral', 'Blocking of ⟨P_xy⟩', 'Neighbours of Na'];
  const figs = [
    linePlot({
      title: figureTitles[0],
      xLabel: 't (ps)',
      yLabel: 'MSD (Å²)',
      series: [
        { name: 'Na', x: t, y: msd, band: { lower: msd.map((v) => v * 0.95), upper: msd.map((v) => v * 1.05), label: '±1 s.e.' } },
        { name: 'Cl', x: t, y: msd.map((v) => v * 0.8) },
        { name: 'linear fit (Na)', x: [2, 20], y: [6 * 0.12 * 2 + 0.3, 6 * 0.12 * 20 + 0.3], dashed: true, markers: false },
      ],
      markers: { spans: [{ from: 2, to: 15, label: 'fit window 2–15 ps' }], vertical: [{ x: 1, label: 'ballistic regime ends' }] },
    }),
    linePlot({ title: figureTitles[1], xLabel: 'r (Å)', yLabel: 'g(r)', series: [{ name: 'Na–Cl', x: r, y: g }], markers: { vertical: [{ x: 3.2, label: 'first minimum 3.2 Å' }] } }),
    linePlot({ title: figureTitles[2], xLabel: 't (ps)', yLabel: 'η(t) (mPa·s)', logX: true, series: [{ name: 'η(t)', x: t, y: eta }], markers: { horizontal: [{ y: 0.9, label: 'plateau 0.90 mPa·s' }] } }),
    blockingPlot({ title: figureTitles[3], xLabel: 'block length (ps)', yLabel: 's.e. of ⟨P_xy⟩ (bar)', blockLengths: [1, 2, 4, 8, 16, 32, 64], standardErrors: [3, 4.1, 5, 5.6, 5.9, 6, 6.1], standardErrorErrors: [0.1, 0.2, 0.3, 0.4, 0.6, 0.9, 1.4], plateau: { value: 6, from: 16, label: 'plateau 6.0 bar' } }),
    barPlot({ title: figureTitles[4], xLabel: 'Cl neighbours within 3.2 Å', yLabel: 'fraction of Na', bars: [4, 5, 6, 7].map((k, i) => ({ label: String(k), value: [0.1, 0.35, 0.45, 0.1][i], uncertainty: 0.02 })) }),
  ];
  const model: ReportModel = {
    title: 'sojourn report: brine <test> "&\'',
    generated: '2025-01-02T03:04:05Z',
    version: '0.1.0',
    command: 'sojourn report brine.xyz.gz --charges Na=+1,Cl=-1',
    inputs: [{ path: 'brine.xyz.gz', sha256: 'ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad', bytes: 52_428_800, format: 'xyz', frames: 5000 }],
    summary: [
      { quantity: 'D(Na)', value: 1.234, uncertainty: 0.056, unit: '10⁻⁹ m²/s', method: 'Einstein relation, MSD fit', window: '2–15 ps', verdict: 'converged', ok: true },
      { quantity: 'η', value: 0.9, uncertainty: 0.12, unit: 'mPa·s', method: 'Green–Kubo', window: '0–20 ps', verdict: 'plateau short', ok: false },
    ],
    sections: [
      { id: 'diffusion', title: 'Diffusion', text: 'Self-diffusion from the Einstein relation.', figures: [{ svg: figs[0], caption: 'MSD with fit window.' }] },
      { id: 'structure', title: 'Structure', figures: [{ svg: figs[1], caption: 'g(r).' }, { svg: figs[4], caption: 'Neighbour counts.' }] },
      { id: 'viscosity', title: 'Viscosity', figures: [{ svg: figs[2], caption: 'Running integral.' }, { svg: figs[3], caption: 'Blocking.' }], tables: [{ headers: ['component', 'η (mPa·s)'], rows: [['xy', '0.91'], ['xz', '0.88']] }] },
    ],
    convergence: [{ name: 'Green–Kubo plateau', verdict: 'plateau shorter than 5 correlation times', reliable: false }],
    warnings: ['frame 12: cell missing, previous cell used <script>alert(1)</script>'],
  };
  return { model, figureTitles };
}

function run(args: string[]): Promise<{ code: number | null; stdout: string; stderr: string }> {
  return new Promise((resolve) => {
    execFile(CHROMIUM, args, { timeout: 120_000, maxBuffer: 64 * 1024 * 1024 }, (err, stdout, stderr) => {
      const code = err ? ((err as NodeJS.ErrnoException & { code?: number }).code as number | null) ?? 1 : 0;
      resolve({ code: typeof code === 'number' ? code : 1, stdout: String(stdout), stderr: String(stderr) });
    });
  });
}

function chromiumArgs(profile: string): string[] {
  return [
    '--headless',
    '--no-sandbox',
    '--disable-gpu',
    '--disable-quic',
    '--no-first-run',
    '--disable-background-networking',
    '--disable-component-update',
    '--disable-sync',
    '--force-device-scale-factor=1',
    '--hide-scrollbars',
    `--user-data-dir=${profile}`,
    '--enable-logging=stderr',
    '--v=0',
  ];
}

/** Lines of Chromium's stderr that report a page error (see the file comment, item 3). */
function consoleProblems(stderr: string): string[] {
  return stderr.split('\n').filter((l) => /:CONSOLE|Uncaught|Content Security Policy|Refused to/.test(l));
}

/**
 * Decode an 8-bit RGB or RGBA, non-interlaced PNG into RGBA pixels: concatenate IDAT chunks,
 * inflate (zlib), undo the per-scanline filters None/Sub/Up/Average/Paeth (PNG spec §9.2, §9.4).
 */
function decodePng(buf: Buffer): { width: number; height: number; rgba: Uint8Array } {
  const width = buf.readUInt32BE(16);
  const height = buf.readUInt32BE(20);
  const depth = buf[24];
  const colourType = buf[25];
  const interlace = buf[28];
  if (depth !== 8 || (colourType !== 2 && colourType !== 6) || interlace !== 0) throw new Error(`unsupported PNG: depth ${depth}, colour type ${colourType}, interlace ${interlace}`);
  const bpp = colourType === 6 ? 4 : 3;
  const idat: Buffer[] = [];
  for (let off = 8; off < buf.length; ) {
    const len = buf.readUInt32BE(off);
    const type = buf.toString('latin1', off + 4, off + 8);
    if (type === 'IDAT') idat.push(buf.subarray(off + 8, off + 8 + len));
    if (type === 'IEND') break;
    off += 12 + len;
  }
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * bpp;
  const cur = new Uint8Array(stride);
  let prev = new Uint8Array(stride);
  const rgba = new Uint8Array(width * height * 4);
  for (let y = 0; y < height; y++) {
    const base = y * (stride + 1);
    const filter = raw[base];
    for (let i = 0; i < stride; i++) {
      const x = raw[base + 1 + i];
      const a = i >= bpp ? cur[i - bpp] : 0;
      const b = prev[i];
      const c = i >= bpp ? prev[i - bpp] : 0;
      let v: number;
      switch (filter) {
        case 0: v = x; break;
        case 1: v = x + a; break;
        case 2: v = x + b; break;
        case 3: v = x + ((a + b) >> 1); break;
        case 4: {
          const p = a + b - c;
          const pa = Math.abs(p - a);
          const pb = Math.abs(p - b);
          const pc = Math.abs(p - c);
          v = x + (pa <= pb && pa <= pc ? a : pb <= pc ? b : c);
          break;
        }
        default: throw new Error(`bad PNG filter ${filter} on row ${y}`);
      }
      cur[i] = v & 0xff;
    }
    for (let px = 0; px < width; px++) {
      rgba[(y * width + px) * 4] = cur[px * bpp];
      rgba[(y * width + px) * 4 + 1] = cur[px * bpp + 1];
      rgba[(y * width + px) * 4 + 2] = cur[px * bpp + 2];
      rgba[(y * width + px) * 4 + 3] = bpp === 4 ? cur[px * bpp + 3] : 255;
    }
    prev = Uint8Array.from(cur);
  }
  return { width, height, rgba };
}

describe('report in a real browser (headless Chromium)', () => {
  if (!HAVE_CHROMIUM) {
    it.skip(`skipped: ${CHROMIUM} not found — install Chromium (apt-get install -y chromium) to run this test`, () => {});
    return;
  }

  it('renders the page: screenshot of the right size with plots drawn, full DOM, no console errors', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'sojourn-browser-'));
    try {
      const { model, figureTitles } = sampleModel();
      const page = join(dir, 'report.html');
      await writeFileAtomic(page, renderReportHtml(model));
      const url = pathToFileURL(page).href;

      // 0. Canary: the console check must see a blocked external load (CSP as in the report).
      const canary = join(dir, 'canary.html');
      await writeFileAtomic(
        canary,
        `<!DOCTYPE html><html><head><meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src data:"></head>` +
          `<body><img alt="" src="https://example.invalid/x.png"></body></html>`,
      );
      const c = await run([...chromiumArgs(join(dir, 'profile-0')), '--dump-dom', pathToFileURL(canary).href]);
      expect(consoleProblems(c.stderr).length, `canary produced no console line; stderr:\n${c.stderr.slice(-2000)}`).toBeGreaterThan(0);

      // 1. Screenshot.
      const shot = join(dir, 'shot.png');
      const s = await run([...chromiumArgs(join(dir, 'profile-1')), `--screenshot=${shot}`, `--window-size=${WIDTH},${HEIGHT}`, url]);
      expect(existsSync(shot), `no screenshot; chromium exit ${s.code}\n${s.stderr.slice(-3000)}`).toBe(true);
      expect(consoleProblems(s.stderr)).toEqual([]);
      // A blank 1200×2000 page deflates to well under 10 KB; a page of text and plots does not.
      expect(statSync(shot).size).toBeGreaterThan(10 * 1024);
      const png = readFileSync(shot);
      expect([...png.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]); // PNG signature, §5.2
      expect(png.toString('latin1', 12, 16)).toBe('IHDR'); // first chunk, §5.6 / §11.2.2
      expect(png.readUInt32BE(16)).toBe(WIDTH);
      expect(png.readUInt32BE(20)).toBe(HEIGHT);
      const img = decodePng(png);
      let ink = 0;
      let blue = 0;
      for (let p = 0; p < img.width * img.height; p++) {
        const [r, g, b] = [img.rgba[4 * p], img.rgba[4 * p + 1], img.rgba[4 * p + 2]];
        if (r < 240 || g < 240 || b < 240) ink++;
        // Okabe–Ito blue (0, 114, 178) ± 40 per channel, allowing for anti-aliasing.
        if (r <= 40 && Math.abs(g - 114) <= 40 && Math.abs(b - 178) <= 40) blue++;
      }
      expect(ink / (img.width * img.height)).toBeGreaterThan(0.01);
      expect(blue).toBeGreaterThan(200);

      // 2. DOM after parsing.
      const d = await run([...chromiumArgs(join(dir, 'profile-2')), '--dump-dom', url]);
      expect(d.code, d.stderr.slice(-3000)).toBe(0);
      expect(consoleProblems(d.stderr)).toEqual([]);
      const dom = d.stdout;
      expect(dom.match(/<svg\b/g) ?? []).toHaveLength(figureTitles.length);
      for (const title of figureTitles) {
        const escaped = title.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;');
        // DOM serialisation escapes & < > in text (WHATWG HTML, "Serializing HTML fragments").
        expect(dom).toContain(`>${escaped}</title>`);
      }
      expect(dom).toContain(CAUTION);
      expect(dom).not.toMatch(/<script/i);
      expect(dom).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }, 300_000);
});
