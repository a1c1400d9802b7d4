/**
 * `sojourn report` end to end, through the built CLI (dist/src/cli.js; `npm test` builds first).
 *
 * Inputs are generated here from seeded streams (src/random.ts):
 * - a trajectory of independent particles whose velocities are Ornstein–Uhlenbeck processes,
 *   per component v_{n+1} = a v_n + s√(1−a²) ξ, a = e^{−Δt/τ}, positions x_{n+1} = x_n + v_n Δt.
 *   For this exact discrete model the MSD per component grows as n Δt² s² (1+a)/(1−a), so
 *   D = Δt s² (1+a)/(2(1−a)) (sum of the geometric autocovariance, e.g. Priestley, Spectral
 *   Analysis and Time Series (1981), AR(1)); the trapezoid VACF integral gives the same value.
 * - a pressure table whose three shear components are Ornstein–Uhlenbeck series of variance σ²
 *   and correlation time τ_p: Green–Kubo η = V/(k_B T) ∫⟨P(0)P(t)⟩dt = V σ² Δt (1+a)/(2(1−a))/(k_B T)
 *   with the trapezoid rule (Green 1954; Kubo 1957).
 * - an energy table of AR(1) columns.
 * One atom label is `<script>`, which must reach report.html escaped.
 */
import { describe, expect, it, beforeAll, afterAll } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import Ajv from 'ajv';
import { XMLParser, XMLValidator } from 'fast-xml-parser';
import { resultsSchema } from '../src/report/schema.js';
import { Random, ar1Series, ornsteinUhlenbeck } from '../src/random.js';

const CLI = resolve('dist/src/cli.js');
/** k_B in J/K, exact in the 2019 SI (CODATA 2018). */
const KB = 1.380649e-23;
/** Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004): ξ of the simple cubic lattice. */
const XI = 2.837297;
const HOSTILE = '<script>';

interface Traj {
  text: string;
  /** D per species from the closed form, m²/s. */
  diffusion: number;
}

/** Extended XYZ of independent particles with OU velocities (module comment), wrapped into a cubic box. */
function trajectory(o: { seed: number; counts: Array<[string, number]>; frames: number; dt: number; tau: number; s: number; box: number; velocities: boolean }): Traj {
  const rng = new Random(o.seed);
  const labels = o.counts.flatMap(([l, n]) => Array(n).fill(l) as string[]);
  const n = labels.length;
  const x = Float64Array.from({ length: 3 * n }, () => rng.uniform() * o.box);
  const a = Math.exp(-o.dt / o.tau);
  const b = o.s * Math.sqrt(1 - a * a);
  const v = Float64Array.from({ length: 3 * n }, () => o.s * rng.normal());
  const props = o.velocities ? 'species:S:1:pos:R:3:vel:R:3' : 'species:S:1:pos:R:3';
  const out: string[] = [];
  for (let f = 0; f < o.frames; f++) {
    out.push(String(n), `Lattice="${o.box} 0 0 0 ${o.box} 0 0 0 ${o.box}" Properties=${props} Time=${(f * o.dt).toFixed(6)}`);
    for (let i = 0; i < n; i++) {
      const w = (k: number) => (((x[3 * i + k] % o.box) + o.box) % o.box).toFixed(5);
      const vel = o.velocities ? ` ${v[3 * i].toFixed(5)} ${v[3 * i + 1].toFixed(5)} ${v[3 * i + 2].toFixed(5)}` : '';
      out.push(`${labels[i]} ${w(0)} ${w(1)} ${w(2)}${vel}`);
    }
    for (let k = 0; k < 3 * n; k++) {
      x[k] += v[k] * o.dt;
      v[k] = a * v[k] + b * rng.normal();
    }
  }
  return { text: out.join('\n') + '\n', diffusion: (o.dt * o.s * o.s * (1 + a)) / (2 * (1 - a)) * 1e-8 };
}

const dir = mkdtempSync(join(tmpdir(), 'sojourn-report-cmd-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const TRAJ = join(dir, 'ions.xyz');
const PRESSURE = join(dir, 'stress.tsv');
const ENERGY = join(dir, 'energy.tsv');
const BOX = 20; // Å
const TEMPERATURE = 300; // K
// Pressure table: Δt = 0.01 ps, τ_p = 0.05 ps, σ = 1000 bar = 1e8 Pa.
const P_DT = 0.01;
const P_TAU = 0.05;
const P_SIGMA_PA = 1e8;
let expected: { diffusion: number; viscosity: number };

beforeAll(() => {
  if (!existsSync(CLI)) throw new Error(`${CLI} is missing: build first (npm run build; npm test does it)`);
  const t = trajectory({ seed: 7, counts: [[HOSTILE, 80], ['Na', 10], ['Cl', 10]], frames: 400, dt: 0.1, tau: 0.3, s: 1, box: BOX, velocities: true });
  writeFileSync(TRAJ, t.text);
  const n = 20000;
  const cols = [11, 12, 13].map((seed) => ornsteinUhlenbeck(n, P_DT, P_TAU, 1000, seed));
  const rows = ['# time pxy pxz pyz'];
  for (let i = 0; i < n; i++) rows.push(`${(i * P_DT).toFixed(4)}\t${cols[0][i]}\t${cols[1][i]}\t${cols[2][i]}`);
  writeFileSync(PRESSURE, rows.join('\n') + '\n');
  const pot = ar1Series(2000, 0.9, 21);
  const temp = ar1Series(2000, 0.5, 22);
  const e = ['# time potential temperature'];
  for (let i = 0; i < 2000; i++) e.push(`${(i * 0.1).toFixed(3)}\t${-500 + pot[i]}\t${300 + temp[i]}`);
  writeFileSync(ENERGY, e.join('\n') + '\n');
  const a = Math.exp(-P_DT / P_TAU);
  const integral = P_SIGMA_PA ** 2 * P_DT * 1e-12 * (1 + a) / (2 * (1 - a)); // Pa² s, trapezoid rule
  expected = { diffusion: t.diffusion, viscosity: ((BOX ** 3 * 1e-30) / (KB * TEMPERATURE)) * integral };
});

function run(args: string[]): { status: number | null; stdout: string; stderr: string } {
  const r = spawnSync(process.execPath, [CLI, ...args], { encoding: 'utf8', timeout: 120_000 });
  return { status: r.status, stdout: r.stdout, stderr: r.stderr };
}

const baseArgs = (out: string) => [
  'report', TRAJ, '--pressure', PRESSURE, '--energy', ENERGY, '--charges', 'Na=+1,Cl=-1', '--masses', `${HOSTILE}=18,Na=22.99,Cl=35.45`,
  '--temperature', `${TEMPERATURE}K`, '--energy-units', 'potential=kJ/mol,temperature=K', '--shell', `Na:${HOSTILE}:5A`, '--out', out,
];

// ---------------------------------------------------------------------------------------------
// SVG and CSV helpers
// ---------------------------------------------------------------------------------------------

interface El { tag: string; attrs: Record<string, string>; children: El[]; text: string }
const parser = new XMLParser({ preserveOrder: true, ignoreAttributes: false, attributeNamePrefix: '', parseTagValue: false, parseAttributeValue: false, trimValues: false });
function toEl(n: Record<string, unknown>): El | null {
  const tag = Object.keys(n).find((k) => k !== ':@')!;
  if (tag === '#text') return null;
  const kids = (n[tag] as Record<string, unknown>[]) ?? [];
  return { tag, attrs: (n[':@'] as Record<string, string>) ?? {}, children: kids.map(toEl).filter((c): c is El => c !== null), text: kids.filter((k) => '#text' in k).map((k) => String(k['#text'])).join('') };
}
function find(root: El, pred: (e: El) => boolean): El[] {
  const out: El[] = [];
  const walk = (e: El) => { if (pred(e)) out.push(e); e.children.forEach(walk); };
  walk(root);
  return out;
}
const hasClass = (c: string) => (e: El) => (e.attrs.class ?? '').split(/\s+/).includes(c);
const textOf = (e: El): string => e.text + e.children.map(textOf).join('');

/** CSV (RFC 4180 without quoting, as written): header and numeric columns; an empty field is NaN. */
function readCsv(path: string): { names: string[]; rows: number[][] } {
  const lines = readFileSync(path, 'utf8').split('\n').filter((l) => l.length > 0);
  return { names: lines[0].split(','), rows: lines.slice(1).map((l) => l.split(',').map((s) => (s === '' ? NaN : Number(s)))) };
}

// ---------------------------------------------------------------------------------------------

describe('sojourn report on generated inputs', () => {
  const out = join(dir, 'report');
  let result: ReturnType<typeof run>;
  let doc: any;

  beforeAll(() => {
    result = run([...baseArgs(out), '--threads', '2']);
    if (result.status === 0) doc = JSON.parse(readFileSync(join(out, 'results.json'), 'utf8'));
  });

  it('exits 0 and prints the summary table with units, the path of report.html, and the caution last', () => {
    expect(result.status, result.stderr).toBe(0);
    expect(result.stdout).toMatch(/^quantity\s+value ± s\.e\.\s+unit\s+method\s+window\s+verdict/m);
    expect(result.stdout).toContain(`report: ${join(out, 'report.html')}`);
    expect(result.stdout.trim().endsWith('safety decision.')).toBe(true);
    expect(result.stdout).toMatch(/10⁻⁹ m²\/s/);
  });

  it('writes results.json that validates against the results schema (ajv, strict mode)', () => {
    const validate = new Ajv({ strict: true }).compile(resultsSchema);
    expect(validate(doc), JSON.stringify(validate.errors)).toBe(true);
    expect(doc.command).toBe('report');
    expect(doc.commandLine.slice(0, 3)).toEqual(['sojourn', 'report', TRAJ]);
    expect(Number.isNaN(Date.parse(doc.started))).toBe(false);
    expect(doc.durationSeconds).toBeGreaterThan(0);
  });

  it('records each input with its size and SHA-256 (FIPS 180-4, via node:crypto)', () => {
    const paths = doc.inputs.map((i: any) => i.path);
    expect(paths).toEqual([TRAJ, PRESSURE, ENERGY]);
    for (const i of doc.inputs) {
      const bytes = readFileSync(i.path);
      expect(i.sha256).toBe(createHash('sha256').update(bytes).digest('hex'));
      expect(i.bytes).toBe(statSync(i.path).size);
    }
  });

  it('holds exactly the files it lists (and the manifest listing them with their SHA-256), each SVG with axes, labels and one point per CSV row', () => {
    const manifestName = '.sojourn-manifest.json';
    expect(readdirSync(out).sort()).toEqual([...doc.results.files, manifestName].sort());
    const manifest = JSON.parse(readFileSync(join(out, manifestName), 'utf8'));
    expect(manifest.tool).toBe('sojourn');
    expect(manifest.files.map((f: any) => f.name).sort()).toEqual([...doc.results.files].sort());
    for (const f of manifest.files) expect(f.sha256, f.name).toBe(createHash('sha256').update(readFileSync(join(out, f.name))).digest('hex'));
    expect(doc.results.figures.length).toBeGreaterThanOrEqual(15);
    for (const fig of doc.results.figures) {
      const svg = readFileSync(join(out, fig.svg), 'utf8');
      expect(XMLValidator.validate(svg), fig.svg).toBe(true);
      const roots = (parser.parse(svg) as Record<string, unknown>[]).map(toEl).filter((e): e is El => e !== null);
      expect(roots.map((r) => r.tag)).toEqual(['svg']);
      const root = roots[0];
      expect(find(root, hasClass('x-axis')), fig.svg).toHaveLength(1);
      expect(find(root, hasClass('y-axis')), fig.svg).toHaveLength(1);
      const titles = find(root, hasClass('axis-title')).map(textOf);
      expect(titles.length).toBe(2);
      for (const t of titles) expect(t.trim().length).toBeGreaterThan(0);
      expect(find(root, hasClass('tick-label')).length).toBeGreaterThan(1);
      const csv = readCsv(join(out, fig.csv));
      expect(csv.rows.length, fig.csv).toBe(fig.rows);
      for (const s of fig.series) {
        const xi = csv.names.indexOf(s.x);
        const yi = csv.names.indexOf(s.y);
        expect(xi, `${fig.csv} ${s.x}`).toBeGreaterThanOrEqual(0);
        expect(yi, `${fig.csv} ${s.y}`).toBeGreaterThanOrEqual(0);
        // Rows the plot can show: finite x and y, positive on a logarithmic axis.
        const usable = csv.rows.filter((r) => Number.isFinite(r[xi]) && Number.isFinite(r[yi]) && (!fig.logX || r[xi] > 0) && (!fig.logY || r[yi] > 0)).length;
        if (fig.kind === 'bar') {
          expect(find(root, hasClass('bar')).length, fig.svg).toBe(usable);
        } else {
          const paths = find(root, (e) => hasClass('series-line')(e) && e.attrs['data-name'] === s.name);
          expect(paths, `${fig.svg}: ${s.name}`).toHaveLength(1);
          const drawn = (paths[0].attrs.d.match(/[ML]/g) ?? []).length;
          expect(fig.complete).toBe(true);
          expect(drawn, `${fig.svg}: ${s.name}`).toBe(usable);
        }
        expect(s.points).toBe(usable);
      }
    }
  });

  it('shows the <script> label escaped in report.html and never as markup', () => {
    const html = readFileSync(join(out, 'report.html'), 'utf8');
    expect(html).not.toMatch(/<script/i);
    expect(html).toContain('&lt;script&gt;');
    expect(html).toContain('D(&lt;script&gt;)');
    expect(html).toContain('Caution: every property here');
  });

  it('recovers the generating D from the MSD and the VACF (closed form in the module comment)', () => {
    // Tolerances: 40 ps of 10 ions give a scatter of 10–25 % for one MSD fit window (seen as
    // the reported s.e. over seeds 7–9), 80 atoms about 5 %; the VACF plateau scatters less
    // (≈ 5 % for 10 ions). Drift removal biases D by O(1/N) ≈ 1 %.
    const tol = (count: number, route: 'msd' | 'vacf') => (route === 'msd' ? (count >= 50 ? 0.15 : 0.3) : 0.15);
    for (const route of ['msd', 'vacf'] as const) {
      for (const g of doc.results.diffusion[route].groups) {
        expect(Math.abs(g.diffusion.value - expected.diffusion) / expected.diffusion, `${route} ${g.label}`).toBeLessThan(tol(g.count, route));
      }
    }
  });

  it('recovers the generating viscosity within 25 % (200 ps of a 0.05 ps correlation: segment scatter ≈ 10 %)', () => {
    const eta = doc.results.viscosity.viscosity.value;
    expect(Math.abs(eta - expected.viscosity) / expected.viscosity).toBeLessThan(0.25);
  });

  it('joins: Yeh–Hummer, Stokes–Einstein and Walden equal the hand formulas with the reported inputs', () => {
    const eta = doc.results.viscosity.viscosity.value;
    const yh = doc.results.joins.yehHummer;
    expect(yh.xi).toBe(XI);
    // The cell is cubic with edge 20 Å, so L = ⟨V⟩^(1/3) = 20 Å.
    expect(yh.boxLength.value).toBeCloseTo(BOX, 9);
    for (const s of yh.species) {
      const dd = (KB * TEMPERATURE * XI) / (6 * Math.PI * eta * BOX * 1e-10);
      expect(Math.abs(s.diffusion.value - (s.diffusionPeriodic.value + dd)) / s.diffusion.value).toBeLessThan(1e-9);
      expect(s.inputs.map((i: any) => i.window).every((w: string) => /\d ps/.test(w))).toBe(true);
    }
    for (const s of doc.results.joins.stokesEinstein.species) {
      const dInf = yh.species.find((y: any) => y.label === s.label).diffusion.value;
      const r = (KB * TEMPERATURE) / (6 * Math.PI * eta * dInf) / 1e-10;
      expect(Math.abs(s.radius.value - r) / r, s.label).toBeLessThan(1e-9);
      if (s.label === 'Na') expect(s.crystalRadius.value).toBe(1.02); // Shannon 1976, Na+ CN VI
      expect(s.radius.uncertainty).toBeGreaterThan(0);
    }
    const c = doc.results.conductivity;
    expect(c.ionicity.value).toBeCloseTo(c.einsteinHelfand.value / c.nernstEinstein.value, 12);
    const w = doc.results.joins.walden;
    expect(Math.abs(w.productConventional.value - c.molarConductivity.value * eta * 1e5) / w.productConventional.value).toBeLessThan(1e-9);
    expect(doc.results.joins.propagation).toMatch(/first-order/);
    const keys = doc.results.summary.map((s: any) => s.key);
    for (const k of ['joins.yehHummer.Na', 'joins.stokesEinstein.Na', 'joins.radiusRatio.Na', 'joins.walden', 'conductivity.ionicity', 'viscosity.greenKubo', 'shell.mean.Na:<script>:5A']) {
      expect(keys).toContain(k);
    }
  });

  it('--json prints the same document as results.json, and a rerun replaces the previous report', () => {
    const before = doc.started;
    const r = run([...baseArgs(out), '--threads', '1', '--json']);
    expect(r.status, r.stderr).toBe(0);
    const printed = JSON.parse(r.stdout);
    const onDisk = JSON.parse(readFileSync(join(out, 'results.json'), 'utf8'));
    expect(printed).toEqual(onDisk);
    expect(onDisk.started).not.toBe(before);
    expect(readdirSync(dir).filter((n) => n.startsWith('report.'))).toEqual([]);
  });

  it('refuses to replace a directory that is not a sojourn report (usage error, exit 2) and leaves it as it was', () => {
    const foreign = join(dir, 'thesis');
    mkdirSync(foreign);
    writeFileSync(join(foreign, 'chapter1.tex'), 'precious');
    const r = run([...baseArgs(foreign), '--threads', '1']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/not a sojourn report/);
    expect(readdirSync(foreign)).toEqual(['chapter1.tex']);
    expect(readdirSync(dir).filter((n) => n.startsWith('thesis.'))).toEqual([]);
  });
});

describe('interrupted reports leave nothing that looks finished', () => {
  const big = join(dir, 'big.xyz');
  beforeAll(() => {
    writeFileSync(big, trajectory({ seed: 99, counts: [['W', 360], ['Na', 20], ['Cl', 20]], frames: 1000, dt: 0.1, tau: 0.3, s: 1, box: 24, velocities: false }).text);
  });

  /** Start a report on the big input; once its staging directory exists (it is reading), send `signal`. */
  async function interrupt(signal: NodeJS.Signals, name: string, parents: string[] = []): Promise<{ code: number | null; signal: NodeJS.Signals | null; leftovers: string[]; out: string }> {
    const parent = join(dir, ...parents);
    const out = join(parent, name);
    const child = spawn(process.execPath, [CLI, 'report', big, '--temperature', '300K', '--charges', 'Na=+1,Cl=-1', '--masses', 'W=18', '--threads', '1', '--out', out], { stdio: 'ignore' });
    let exited = false;
    const done = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((res) => child.on('exit', (code, sig) => { exited = true; res({ code, signal: sig }); }));
    const staging = () => (existsSync(parent) ? readdirSync(parent).filter((n) => n.startsWith(`${name}.tmp-`)) : []);
    const t0 = Date.now();
    while (staging().length === 0 && !exited && Date.now() - t0 < 30_000) await new Promise((r) => setTimeout(r, 20));
    await new Promise((r) => setTimeout(r, 300));
    // The run must still be going: otherwise this test would not test an interruption.
    expect(exited).toBe(false);
    child.kill(signal);
    const end = await done;
    return { ...end, leftovers: staging(), out };
  }

  it('SIGTERM: the process ends by the signal, with no report directory and no staging directory left', async () => {
    const r = await interrupt('SIGTERM', 'term');
    expect(r.signal === 'SIGTERM' || r.code === 143).toBe(true);
    expect(existsSync(r.out)).toBe(false);
    expect(r.leftovers).toEqual([]);
  });

  it('SIGTERM with --out into folders the run created: those folders are removed too', async () => {
    const r = await interrupt('SIGTERM', 'term', ['made', 'by', 'run']);
    expect(r.signal === 'SIGTERM' || r.code === 143).toBe(true);
    expect(existsSync(join(dir, 'made'))).toBe(false);
  });

  it('SIGKILL (cannot be caught): no report directory; at most a staging directory without results.json or report.html', async () => {
    const r = await interrupt('SIGKILL', 'kill');
    expect(r.signal).toBe('SIGKILL');
    expect(existsSync(r.out) && (existsSync(join(r.out, 'results.json')) || existsSync(join(r.out, 'report.html')))).toBe(false);
    expect(existsSync(r.out)).toBe(false);
    for (const s of r.leftovers) {
      expect(existsSync(join(dir, s, 'results.json'))).toBe(false);
      expect(existsSync(join(dir, s, 'report.html'))).toBe(false);
    }
  });
});
