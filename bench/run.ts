/**
 * `npm run bench`: runs each benchmark group in its own child process (so that each peak RSS
 * belongs to that group alone) and prints one table with the machine's core count.
 *
 *   node dist/bench/run.js                 all groups
 *   node dist/bench/run.js readers rdf     chosen groups
 *   node dist/bench/run.js --large         streaming-memory check on a ~1 GB file as well, and
 *                                          the 10^7-row table in the readers group
 */
import { spawnSync, spawn } from 'node:child_process';
import { availableParallelism, cpus, tmpdir, totalmem } from 'node:os';
import { fileURLToPath } from 'node:url';
import { mkdtempSync, rmSync, createWriteStream, statSync } from 'node:fs';
import { join } from 'node:path';
import { once } from 'node:events';

/** One normalised row of the table. */
export interface Row {
  group: string;
  name: string;
  value: number;
  unit: string;
  target: string;
}

const GROUPS = ['readers', 'rdf', 'rdf-threads', 'msd', 'viscosity', 'converge', 'streaming'] as const;
type Group = (typeof GROUPS)[number];

const here = fileURLToPath(import.meta.url);
const cli = fileURLToPath(new URL('../src/cli.js', import.meta.url));

/** Peak resident set size of this process so far, MB (resourceUsage().maxRSS is in KiB). */
function peakRss(): number {
  return process.resourceUsage().maxRSS / 1024;
}

/** Write a synthetic XYZ trajectory (uniform random positions in a cube); returns its size in bytes. */
async function writeXyz(path: string, atoms: number, frames: number, box: number): Promise<number> {
  const out = createWriteStream(path);
  let s = 12345;
  const rnd = () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 4294967296;
  };
  for (let f = 0; f < frames; f++) {
    const lines: string[] = [String(atoms), `Lattice="${box} 0 0 0 ${box} 0 0 0 ${box}" Properties=species:S:1:pos:R:3 Time=${(f * 0.1).toFixed(3)}`];
    for (let i = 0; i < atoms; i++) {
      lines.push(`${i % 2 ? 'O' : 'Na'} ${(rnd() * box).toFixed(5)} ${(rnd() * box).toFixed(5)} ${(rnd() * box).toFixed(5)}`);
    }
    if (!out.write(lines.join('\n') + '\n')) await once(out, 'drain');
  }
  out.end();
  await once(out, 'finish');
  return statSync(path).size;
}

/** Run the CLI as a child process and return its wall-clock seconds. */
async function timeCli(args: string[]): Promise<{ seconds: number }> {
  const t0 = performance.now();
  const child = spawn(process.execPath, [cli, ...args], { stdio: ['ignore', 'ignore', 'pipe'] });
  let err = '';
  child.stderr.on('data', (d) => (err += d));
  const [code] = (await once(child, 'exit')) as [number];
  if (code !== 0) throw new Error(`sojourn ${args.join(' ')} failed: ${err}`);
  return { seconds: (performance.now() - t0) / 1000 };
}

/** Run one group in this process and return its rows. */
async function runGroup(group: Group, large: boolean): Promise<Row[]> {
  const rows: Row[] = [];
  const add = (name: string, value: number, unit: string, target = '—') => rows.push({ group, name, value, unit, target });
  switch (group) {
    case 'readers': {
      const { benchReaders } = await import('./readers.js');
      // --large: the 10^7-row × 7-column table (~0.7 GB) instead of 10^6 rows.
      for (const r of await benchReaders({ sizeMB: 200, tableRows: large ? 10_000_000 : 1_000_000 })) {
        const xyz = r.name.startsWith('read XYZ (');
        const gz = r.name.startsWith('read XYZ.gz (');
        add(`${r.name}: wall clock`, r['MB/s'], 'MB/s', xyz ? '≥ 250' : gz ? '≥ 80' : '—');
        add(`${r.name}: per CPU second (all threads)`, r['MB/s per CPU s'], 'MB/s');
        add(`${r.name}: parsing thread CPU`, r['MB/s parsing thread'], 'MB/s', xyz ? '≥ 250' : '—');
        if (Number.isFinite(r['frames/s'])) add(`${r.name}: frames`, r['frames/s'], 'frames/s');
        if (r.name.startsWith('read table (10000000')) add(`${r.name}: time`, r.seconds, 's', '< 5');
      }
      break;
    }
    case 'rdf': {
      const { benchRdf } = await import('./rdf.js');
      for (const r of benchRdf()) add(r.name, r.value, r.unit, r.target);
      break;
    }
    case 'msd': {
      const { benchMsd } = await import('./msd.js');
      for (const r of benchMsd()) add(r.name, r.value, r.unit, r.target);
      break;
    }
    case 'viscosity': {
      const { benchViscosity } = await import('./viscosity.js');
      for (const r of await benchViscosity()) add(r.name, r.value, r.unit, r.target);
      break;
    }
    case 'converge': {
      const { benchConverge } = await import('./converge.js');
      for (const r of benchConverge()) add(`${r.name}`, r.seconds, 's', '< 10');
      break;
    }
    case 'rdf-threads': {
      // The whole command (parse + g(r)) on 1 and 2 worker threads: the speed-up of the product.
      const dir = mkdtempSync(join(tmpdir(), 'sojourn-bench-'));
      try {
        const file = join(dir, 'rdf.xyz');
        // 1 000 frames (~10 s on one thread), so that the fixed start-up of the workers (~0.3 s each,
        // loading the CLI, plus the frame-index scan) is small beside the work being split.
        await writeXyz(file, 2000, 1000, 30);
        const base = ['rdf', file, '--pair', 'Na:O', '--quiet', '--json'];
        await timeCli([...base, '--threads', '1']); // warm the file cache
        // Three alternating pairs; the speed-up is the median of the pairs' ratios, so that a slow
        // spell of a shared machine affects both members of a pair rather than one side only.
        const pairs: Array<[number, number]> = [];
        for (let k = 0; k < 3; k++) {
          const one = await timeCli([...base, '--threads', '1']);
          const two = await timeCli([...base, '--threads', '2']);
          pairs.push([one.seconds, two.seconds]);
        }
        const med = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;
        add('rdf command, 2000 atoms × 1000 frames, 1 thread (median of 3)', med(pairs.map((p) => p[0])), 's');
        add('rdf command, 2 threads (median of 3)', med(pairs.map((p) => p[1])), 's');
        add('rdf command speed-up on 2 threads (median of 3 paired ratios)', med(pairs.map((p) => p[0] / p[1])), '×', '≥ 1.7');
        const { benchRdfScaling } = await import('./rdf-scaling.js');
        for (const r of await benchRdfScaling()) add(r.name, r.value, r.unit, r.target);
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
      break;
    }
    case 'streaming': {
      // Peak RSS of the real CLI streaming a large file through a streaming pass (inspect + rdf).
      const dir = mkdtempSync(join(tmpdir(), 'sojourn-bench-'));
      try {
        const sizes = large ? [200, 1000] : [200];
        for (const mb of sizes) {
          const file = join(dir, `s${mb}.xyz`);
          const atoms = 3000;
          const frames = Math.round((mb * 1e6) / (atoms * 28.8)); // ~28.8 bytes per atom line
          const bytes = await writeXyz(file, atoms, frames, 40);
          const res = spawnSync(process.execPath, [here, '--child-rss', cli, 'rdf', file, '--pair', 'Na:O', '--r-max', '8A', '--threads', '1', '--quiet', '--json'], { encoding: 'utf8' });
          if (res.status !== 0) throw new Error(res.stderr);
          const { seconds, rssMB } = JSON.parse(res.stdout.trim().split('\n').pop()!);
          add(`rdf on a ${(bytes / 1e6).toFixed(0)} MB XYZ file: wall time`, seconds, 's');
          add(`rdf on a ${(bytes / 1e6).toFixed(0)} MB XYZ file: peak RSS`, rssMB, 'MB', '< 200');
          rmSync(file);
        }
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
      break;
    }
  }
  add('group peak RSS', peakRss(), 'MB');
  return rows;
}

function formatNumber(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  const a = Math.abs(v);
  if (a >= 100) return v.toFixed(0);
  if (a >= 10) return v.toFixed(1);
  return v.toFixed(2);
}

/** Does a value meet a target written as "≥ x" or "< x"? */
export function meets(value: number, target: string): string {
  const m = /^(≥|>=|<|≤|<=)\s*([\d.]+)/.exec(target);
  if (!m) return '';
  const t = Number(m[2]);
  const ok = m[1] === '<' ? value < t : m[1] === '≤' || m[1] === '<=' ? value <= t : value >= t;
  return ok ? 'yes' : 'NO';
}

async function main(): Promise<void> {
  const argv = process.argv.slice(2);
  if (argv[0] === '--child-rss') {
    // Run the CLI in this (fresh) process with its stdout discarded, then report wall time and
    // this process's peak RSS: Node exposes getrusage only for itself, not for children.
    const { main: cliMain } = (await import(argv[1])) as { main: (a: string[]) => Promise<number> };
    const write = process.stdout.write.bind(process.stdout);
    process.stdout.write = (() => true) as typeof process.stdout.write;
    const t0 = performance.now();
    const code = await cliMain(['node', 'sojourn', ...argv.slice(2)]);
    const seconds = (performance.now() - t0) / 1000;
    process.stdout.write = write;
    if (code !== 0) process.exit(1);
    process.stdout.write(JSON.stringify({ seconds, rssMB: peakRss() }) + '\n');
    return;
  }
  if (argv[0] === '--group') {
    const rows = await runGroup(argv[1] as Group, argv.includes('--large'));
    process.stdout.write(JSON.stringify(rows) + '\n');
    return;
  }
  const large = argv.includes('--large');
  const chosen = argv.filter((a) => !a.startsWith('--')) as Group[];
  const groups = chosen.length ? chosen : [...GROUPS];
  for (const g of groups) if (!GROUPS.includes(g)) throw new Error(`unknown group ${g}; groups: ${GROUPS.join(', ')}`);
  const all: Row[] = [];
  for (const g of groups) {
    process.stderr.write(`bench: ${g} ...\n`);
    const res = spawnSync(process.execPath, ['--expose-gc', here, '--group', g, ...(large ? ['--large'] : [])], {
      encoding: 'utf8',
      stdio: ['ignore', 'pipe', 'inherit'],
      maxBuffer: 1 << 26,
    });
    if (res.status !== 0) {
      all.push({ group: g, name: 'FAILED', value: NaN, unit: '', target: '' });
      continue;
    }
    all.push(...(JSON.parse(res.stdout.trim().split('\n').pop()!) as Row[]));
  }
  const header = ['group', 'benchmark', 'value', 'unit', 'target', 'met'];
  const table = all.map((r) => [r.group, r.name, formatNumber(r.value), r.unit, r.target, meets(r.value, r.target)]);
  const widths = header.map((h, i) => Math.max(h.length, ...table.map((t) => t[i].length)));
  const line = (c: string[]) => c.map((x, i) => (i === 2 ? x.padStart(widths[i]) : x.padEnd(widths[i]))).join('  ').trimEnd();
  const cpu = cpus()[0]?.model ?? 'unknown CPU';
  process.stdout.write(
    `sojourn benchmark — ${availableParallelism()} cores (${cpu}), ${(totalmem() / 2 ** 30).toFixed(0)} GiB, Node ${process.version}\n\n` +
      [line(header), widths.map((w) => '-'.repeat(w)).join('  '), ...table.map(line)].join('\n') +
      '\n',
  );
}

main().catch((e) => {
  process.stderr.write(String(e?.stack ?? e) + '\n');
  process.exit(1);
});
