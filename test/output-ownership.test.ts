/**
 * sojourn never deletes or overwrites what it did not write, and a failed run leaves nothing
 * behind (sojourn's contract, DEVELOPERS.md "Errors"). The CLI runs in-process (main(), as the
 * built tool does) on files made here; the truth checked is the file system itself: which names
 * exist afterwards, and whether files are byte-identical (SHA-256, FIPS 180-4, via node:crypto).
 * Exit statuses: 1 for bad input or a failed write, 2 for usage (sojourn's contract).
 *
 * Whether a process exists is decided by kill(pid, 0) failing with ESRCH (POSIX.1-2017, kill());
 * a "dead" pid here is that of a child process that has exited, checked the same way before use.
 */
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { runCaptured, writeOuTrajectory } from './helpers/batch-runs.js';
import { injectWriteFault } from '../src/output.js';

const root = mkdtempSync(join(tmpdir(), 'sojourn-ownership-'));
afterAll(() => rmSync(root, { recursive: true, force: true }));
afterEach(() => injectWriteFault(null));

const TRAJ = join(root, 'ions.xyz');
const BAD = join(root, 'bad.xyz');
const ENERGY = join(root, 'energy.tsv');
/** The manifest file name: part of the contract tested here, so spelled out rather than imported. */
const MANIFEST = '.sojourn-manifest.json';

/** Every file under `dir` (relative path → SHA-256; folders as "dir"), for before/after comparisons. */
function tree(dir: string, prefix = ''): Record<string, string> {
  const out: Record<string, string> = {};
  for (const name of readdirSync(dir).sort()) {
    const p = join(dir, name);
    const rel = prefix + name;
    if (statSync(p).isDirectory()) {
      out[rel + '/'] = 'dir';
      Object.assign(out, tree(p, rel + '/'));
    } else out[rel] = createHash('sha256').update(readFileSync(p)).digest('hex');
  }
  return out;
}

/** Names in `dir` that look like temporary siblings of `base` (report folder or output file). */
const temps = (dir: string, base: string) =>
  readdirSync(dir).filter((n) => n.startsWith(`${base}.tmp-`) || n.startsWith(`${base}.old-`) || n.startsWith(`.${base}.tmp-`));

/** The pid of a process that has exited (a finished child), confirmed gone with kill(pid, 0). */
function deadPid(): number {
  const r = spawnSync(process.execPath, ['-e', '0']);
  const pid = r.pid!;
  expect(() => process.kill(pid, 0)).toThrow(expect.objectContaining({ code: 'ESRCH' }));
  return pid;
}

const report = (out: string, extra: string[] = []) =>
  runCaptured(['report', TRAJ, '--temperature', '300K', '--threads', '1', '--quiet', '--out', out, ...extra]);

beforeAll(() => {
  writeOuTrajectory(TRAJ, { atoms: 8, frames: 60, dt: 0.1, tau: 0.2, sigma: 1, box: 12, seed: 3, velocities: true });
  // Bad input: frame 40 of 60 has a non-number where a coordinate belongs (well after the start,
  // so the run is under way when it fails).
  const lines = readFileSync(TRAJ, 'utf8').split('\n');
  lines[40 * 10 + 2 + 3] = 'Cl 1.0 2.0 x 0 0 0'; // atom 3 of frame 40 (10 lines a frame)
  writeFileSync(BAD, lines.join('\n'));
  const e = ['# time potential'];
  for (let i = 0; i < 400; i++) e.push(`${(i * 0.1).toFixed(1)}\t${Math.sin(i * 0.37) + (i % 7) * 0.01}`);
  writeFileSync(ENERGY, e.join('\n') + '\n');
});

describe('report --out replaces only a folder the report writer made, and only its files', () => {
  it('a folder holding `inspect --json` saved as results.json beside the user\'s notes is refused (exit 2) and left byte-identical', async () => {
    const dir = join(root, 'analysis');
    mkdirSync(dir);
    const inspected = await runCaptured(['inspect', TRAJ, '--json', '--threads', '1']);
    expect(inspected.code).toBe(0);
    expect(JSON.parse(inspected.out).tool).toBe('sojourn');
    writeFileSync(join(dir, 'results.json'), inspected.out);
    writeFileSync(join(dir, 'notes.md'), 'my notes on this run\n');
    const before = tree(dir);
    const r = await report(dir);
    expect(r.code, r.err).toBe(2);
    expect(r.err).toMatch(/not a sojourn report/);
    expect(r.err).toContain(MANIFEST);
    expect(tree(dir)).toEqual(before);
    expect(temps(root, 'analysis')).toEqual([]);
  });

  it('a previous report to which the user added a file and a folder is refused naming the file; nothing changes', async () => {
    const dir = join(root, 'added');
    expect((await report(dir)).code).toBe(0);
    writeFileSync(join(dir, 'my-fit.txt'), 'D from my own fit\n');
    mkdirSync(join(dir, 'extra'));
    writeFileSync(join(dir, 'extra', 'plot.png'), 'png bytes');
    const before = tree(dir);
    const r = await report(dir);
    expect(r.code, r.err).toBe(2);
    expect(r.err).toContain(join(dir, 'my-fit.txt'));
    expect(r.err).toContain(join(dir, 'extra'));
    expect(tree(dir)).toEqual(before);
    expect(temps(root, 'added')).toEqual([]);
  });

  it('a previous report whose file the user changed is refused naming that file; nothing changes', async () => {
    const dir = join(root, 'edited');
    expect((await report(dir)).code).toBe(0);
    writeFileSync(join(dir, 'report.html'), readFileSync(join(dir, 'report.html'), 'utf8') + '<!-- my comments -->\n');
    const before = tree(dir);
    const r = await report(dir);
    expect(r.code, r.err).toBe(2);
    expect(r.err).toContain(join(dir, 'report.html'));
    expect(tree(dir)).toEqual(before);
  });

  it('a genuine previous report is replaced: only the new files remain, none of the old, no temporary sibling', async () => {
    const dir = join(root, 'genuine');
    // The first report has the energy table, so files (blocking-…) the second one does not write.
    expect((await report(dir, ['--energy', ENERGY])).code).toBe(0);
    const first = readdirSync(dir);
    const r = await report(dir);
    expect(r.code, r.err).toBe(0);
    const manifest = JSON.parse(readFileSync(join(dir, MANIFEST), 'utf8'));
    const listed = manifest.files.map((f: { name: string }) => f.name);
    expect(readdirSync(dir).sort()).toEqual([...listed, MANIFEST].sort());
    const gone = first.filter((n) => !listed.includes(n) && n !== MANIFEST);
    expect(gone.length).toBeGreaterThan(0);
    for (const n of gone) expect(existsSync(join(dir, n)), n).toBe(false);
    expect(temps(root, 'genuine')).toEqual([]);
  });
});

describe('a failed run leaves nothing behind', () => {
  it('report --out a/b/c/rep on bad input: exit 1 naming file:line, and no folder of a/b/c left', async () => {
    const cwd = join(root, 'parents');
    mkdirSync(cwd);
    const bad = await runCaptured(['report', BAD, '--temperature', '300K', '--threads', '1', '--quiet', '--out', join(cwd, 'a', 'b', 'c', 'rep')]);
    expect(bad.code, bad.err).toBe(1);
    expect(bad.err).toMatch(/bad\.xyz:\d+:\d+: /);
    expect(readdirSync(cwd)).toEqual([]);
  });

  it('parents that existed before are kept; only the ones the run created are removed', async () => {
    const cwd = join(root, 'half');
    mkdirSync(join(cwd, 'a'), { recursive: true });
    const r = await runCaptured(['report', BAD, '--temperature', '300K', '--threads', '1', '--quiet', '--out', join(cwd, 'a', 'b', 'c', 'rep')]);
    expect(r.code).toBe(1);
    expect(tree(cwd)).toEqual({ 'a/': 'dir' });
  });

  it('rdf --csv: when one write of the set fails (disk full), none of the CSV files appears, no temporary file is left, and an earlier CSV is byte-identical', async () => {
    const dir = join(root, 'csv-full');
    mkdirSync(dir);
    const prefix = join(dir, 'g');
    // Three pairs → three CSV files (six with Kirkwood–Buff integrals); the fourth write fails.
    const args = ['rdf', TRAJ, '--pair', 'Na:Na', '--pair', 'Na:Cl', '--pair', 'Cl:Cl', '--kirkwood-buff', '--threads', '1', '--quiet', '--csv', prefix];
    writeFileSync(join(dir, 'g-Na-Na.csv'), 'an earlier result\n');
    const before = tree(dir);
    let writes = 0;
    injectWriteFault((target) => (target.startsWith(prefix) && ++writes === 4 ? Object.assign(new Error('no space'), { code: 'ENOSPC' }) : null));
    const r = await runCaptured(args);
    expect(writes).toBeGreaterThanOrEqual(4);
    expect(r.code, r.err).toBe(1);
    expect(r.err).toMatch(/cannot write .*g-.*\.csv: no space left on the device/);
    expect(tree(dir)).toEqual(before);
    // The same command without the fault writes all six.
    injectWriteFault(null);
    const ok = await runCaptured(args);
    expect(ok.code, ok.err).toBe(0);
    expect(readdirSync(dir).filter((n) => n.endsWith('.csv'))).toHaveLength(6);
    expect(readdirSync(dir).filter((n) => n.startsWith('.'))).toEqual([]);
  });

  it('rdf --csv: when one file of the set cannot take its name (a folder is there), the files already renamed are put back: none appears, the earlier CSV is byte-identical', async () => {
    const dir = join(root, 'csv-rename');
    mkdirSync(dir);
    const prefix = join(dir, 'g');
    writeFileSync(join(dir, 'g-Na-Na.csv'), 'an earlier result\n');
    mkdirSync(join(dir, 'g-Cl-Cl.csv'));
    writeFileSync(join(dir, 'g-Cl-Cl.csv', 'inside'), 'x');
    const before = tree(dir);
    const r = await runCaptured(['rdf', TRAJ, '--pair', 'Na:Na', '--pair', 'Na:Cl', '--pair', 'Cl:Cl', '--threads', '1', '--quiet', '--csv', prefix]);
    expect(r.code, r.err).toBe(1);
    expect(r.err).toMatch(/cannot write .*g-Cl-Cl\.csv/);
    expect(tree(dir)).toEqual(before);
  });

  it('vacf --csv and --spectrum-csv are one set: the second failing leaves neither', async () => {
    const dir = join(root, 'vacf-full');
    mkdirSync(dir);
    injectWriteFault((target) => (target.endsWith('spectrum.csv') ? Object.assign(new Error('no space'), { code: 'ENOSPC' }) : null));
    const r = await runCaptured(['vacf', TRAJ, '--threads', '1', '--quiet', '--csv', join(dir, 'vacf.csv'), '--spectrum-csv', join(dir, 'spectrum.csv')]);
    expect(r.code, r.err).toBe(1);
    expect(r.err).toMatch(/cannot write .*spectrum\.csv: no space left on the device/);
    expect(readdirSync(dir)).toEqual([]);
  });
});

describe('one output name, two contents', () => {
  it('rdf pairs whose CSV names coincide ("Na,Cl" and "Na&!Cl" both become Na_Cl) are refused (exit 2) instead of one file silently replacing the other', async () => {
    const dir = join(root, 'same-name');
    mkdirSync(dir);
    // "Na,Cl" is every atom, "Na&!Cl" only the Na atoms: different g(r), one file name.
    const r = await runCaptured(['rdf', TRAJ, '--pair', 'Na,Cl:Na', '--pair', 'Na&!Cl:Na', '--threads', '1', '--quiet', '--csv', join(dir, 'g')]);
    expect(r.code, r.err).toBe(2);
    expect(r.err).toContain(join(dir, 'g-Na_Cl-Na.csv'));
    expect(readdirSync(dir)).toEqual([]);
  });
});

describe('temporary siblings left by a killed run', () => {
  it('a report staging folder of a process that no longer exists is named and removed; one of a live process is named and left alone', async () => {
    const dir = join(root, 'stale');
    mkdirSync(dir);
    const target = join(dir, 'rep');
    const dead = join(dir, `rep.tmp-${deadPid()}-0a1b2c3d`);
    mkdirSync(dead);
    writeFileSync(join(dead, 'results.json'), '{"half":');
    const live = join(dir, `rep.tmp-${process.pid}-deadbeef`);
    mkdirSync(live);
    writeFileSync(join(live, 'results.json'), '{}');
    // Not our pattern (no pid and hex part; another target's name): never touched, never named.
    const unrelated = [join(dir, 'rep.tmp-notes'), join(dir, `rep2.tmp-${deadPid()}-0a1b2c3d`)];
    for (const u of unrelated) mkdirSync(u);
    const r = await report(target);
    expect(r.code, r.err).toBe(0);
    expect(r.err).toMatch(new RegExp(`removed ${dead.replace(/[.]/g, '\\.')}`));
    expect(existsSync(dead)).toBe(false);
    expect(r.err).toContain(`${live} is a temporary folder of process ${process.pid}, which is still running; left alone`);
    expect(readFileSync(join(live, 'results.json'), 'utf8')).toBe('{}');
    for (const u of unrelated) {
      expect(existsSync(u)).toBe(true);
      expect(r.err).not.toContain(u);
    }
  });

  it('a previous report moved aside by a run killed mid-swap is put back (here the new run then fails: the old report stays whole)', async () => {
    const dir = join(root, 'swap');
    mkdirSync(dir);
    const target = join(dir, 'rep');
    expect((await report(target)).code).toBe(0);
    const before = tree(target);
    const aside = join(dir, `rep.old-${deadPid()}-00ff00ff`);
    renameSync(target, aside);
    const r = await runCaptured(['report', BAD, '--temperature', '300K', '--threads', '1', '--quiet', '--out', target]);
    expect(r.code).toBe(1);
    expect(r.err).toContain(`put the previous report back from ${aside}`);
    expect(tree(target)).toEqual(before);
    expect(temps(dir, 'rep')).toEqual([]);
  });

  it('a temporary CSV file of a process that no longer exists is named and removed; one of this live process is left alone', async () => {
    const dir = join(root, 'stale-csv');
    mkdirSync(dir);
    const dead = join(dir, `.m.csv.tmp-${deadPid()}-12345678`);
    const live = join(dir, `.m.csv.tmp-${process.pid}-87654321`);
    writeFileSync(dead, 'half a fi');
    writeFileSync(live, 'being written');
    const r = await runCaptured(['msd', TRAJ, '--threads', '1', '--quiet', '--csv', join(dir, 'm.csv')]);
    expect(r.code, r.err).toBe(0);
    expect(r.err).toContain(`removed ${dead}`);
    expect(existsSync(dead)).toBe(false);
    expect(r.err).toContain(`${live} is a temporary file of process ${process.pid}, which is still running; left alone`);
    expect(readFileSync(live, 'utf8')).toBe('being written');
    expect(readdirSync(dir).sort()).toEqual([live.slice(dir.length + 1), 'm.csv'].sort());
  });
});
