/**
 * No network at run time (DEVELOPERS.md): the commands run to success with every network entry
 * point of Node made to throw (test/helpers/no-network.mjs, loaded with `node --import`, also in
 * worker threads), and no source file imports a network module or calls fetch.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { readdirSync, readFileSync } from 'node:fs';
import { join, relative } from 'node:path';
import { spawnSync } from 'node:child_process';
import { gzipSync } from 'node:zlib';
import { ROOT, ensureBuilt, runCliBatch, scratch, type CliResult } from './helpers/cli.js';

const PRELOAD = join(ROOT, 'test', 'helpers', 'no-network.mjs');
const tmp = scratch('nonet');
afterAll(() => tmp.cleanup());

/** Run a Node snippet (ES module) with the preload; returns stdout + stderr. */
function nodeWithPreload(code: string): { status: number | null; out: string } {
  const r = spawnSync(process.execPath, ['--import', PRELOAD, '--input-type=module', '-e', code], { encoding: 'utf8', timeout: 60_000 });
  return { status: r.status, out: r.stdout + r.stderr };
}

describe('the no-network preload blocks every way out', () => {
  it('net, tls, dgram, http, https, http2 and fetch throw in the main thread and in a worker thread', () => {
    const attempts = [
      "(await import('node:net')).connect(9, '127.0.0.1')",
      "(await import('node:net')).createConnection({ port: 9, host: '127.0.0.1' })",
      "new (await import('node:net')).Socket().connect(9, '127.0.0.1')",
      "(await import('node:tls')).connect(9, '127.0.0.1')",
      "(await import('node:dgram')).createSocket('udp4')",
      "(await import('node:http')).request('http://127.0.0.1:9/')",
      "(await import('node:https')).get('https://127.0.0.1:9/')",
      "(await import('node:http2')).connect('http://127.0.0.1:9')",
      "await fetch('http://127.0.0.1:9/')",
    ];
    const code = `
      import { Worker, isMainThread } from 'node:worker_threads';
      const attempts = [${attempts.map((a) => `async () => { ${a}; }`).join(',\n')}];
      const where = isMainThread ? 'main' : 'worker';
      let blocked = 0;
      for (const a of attempts) { try { await a(); } catch (e) { if (String(e.message).includes('sojourn-no-network')) blocked++; } }
      console.log(where + ' blocked ' + blocked + ' of ' + attempts.length);
    `;
    // The same code as a worker (data: URL module) runs after the main thread's attempts.
    const both = `${code}
      if (isMainThread) await new Promise((res) => new Worker(new URL('data:text/javascript,' + encodeURIComponent(${JSON.stringify(code)}))).once('exit', res));`;
    const r = nodeWithPreload(both);
    expect(r.out).toContain(`main blocked ${attempts.length} of ${attempts.length}`);
    expect(r.out).toContain(`worker blocked ${attempts.length} of ${attempts.length}`);
  });
});

describe('commands succeed with the network blocked', () => {
  let results: CliResult[];
  const lattice = 'Lattice="12 0 0 0 12 0 0 0 12" Properties=species:S:1:pos:R:3';
  const runs: string[][] = [
    ['inspect', 'small.xyz', '--threads', '1'],
    ['inspect', 'small.xyz', '--threads', '2'], // worker threads
    ['inspect', 'small.xyz.gz', '--json', '--threads', '1'],
    ['rdf', 'small.xyz', '--pair', 'Na:Cl', '--threads', '1'],
    ['shell', 'small.xyz', '--center', 'Na', '--around', 'Cl', '--cutoff', '4A', '--threads', '1'],
    ['converge', 'series.tsv'],
  ];
  beforeAll(() => {
    ensureBuilt();
    let s = '';
    for (let f = 0; f < 30; f++) {
      s += `4\n${lattice} Time=${(0.1 * f).toFixed(1)}\n`;
      for (let i = 0; i < 4; i++) s += `${i % 2 ? 'Cl' : 'Na'} ${(1 + 3 * i + 0.05 * Math.sin(f + i)).toFixed(4)} ${(2 + 0.05 * Math.cos(f * i)).toFixed(4)} 3.0000\n`;
    }
    tmp.file('small.xyz', s);
    tmp.file('small.xyz.gz', gzipSync(s));
    tmp.file('series.tsv', 'time epot\n' + Array.from({ length: 300 }, (_, i) => `${(0.002 * i).toFixed(3)} ${(-5 + 0.01 * Math.sin(i * 1.7)).toFixed(5)}\n`).join(''));
    results = runCliBatch(runs.map((args) => ({ args, cwd: tmp.dir })), ['--import', PRELOAD]);
  }, 240_000);
  runs.forEach((args, k) => {
    it(args.join(' '), () => {
      const r = results[k]!;
      expect(r.stderr).not.toContain('sojourn-no-network');
      expect(r.status, r.stderr).toBe(0);
      expect(r.stdout.length).toBeGreaterThan(0);
    });
  });
});

/** Network imports and calls in a source text (ES import/export-from, dynamic import, require, fetch, WebSocket). */
export function networkUses(text: string): string[] {
  const mods = '(?:node:)?(?:net|http|https|http2|dgram|tls|undici|dns)';
  const patterns = [
    new RegExp(`\\bfrom\\s*['"]${mods}['"]`, 'g'),
    new RegExp(`\\bimport\\s*['"]${mods}['"]`, 'g'),
    new RegExp(`\\bimport\\s*\\(\\s*['"]${mods}['"]\\s*\\)`, 'g'),
    new RegExp(`\\brequire\\s*\\(\\s*['"]${mods}['"]\\s*\\)`, 'g'),
    /\bfetch\s*\(/g,
    /\bnew\s+WebSocket\b/g,
  ];
  return patterns.flatMap((p) => [...text.matchAll(p)].map((m) => m[0]));
}

function sources(dir: string): string[] {
  const out: string[] = [];
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) out.push(...sources(p));
    else if (/\.(ts|mts|js|mjs)$/.test(e.name)) out.push(p);
  }
  return out;
}

describe('no source file reaches for the network', () => {
  it('the scanner finds each kind of network use in a planted text', () => {
    const planted = [
      "import net from 'node:net';",
      "import { request } from 'https';",
      "export { connect } from 'node:tls';",
      "const d = await import('node:dgram');",
      "const h = require('http');",
      "await fetch(url);",
      "import 'node:http2';",
    ];
    for (const p of planted) expect(networkUses(p), p).toHaveLength(1);
    expect(networkUses("import { readFile } from 'node:fs'; // prefetch(x) is not fetch")).toEqual([]);
  });

  it('src/, readers/ and analyses/ import no network module and call no fetch', () => {
    const found: string[] = [];
    for (const d of ['src', 'readers', 'analyses']) {
      for (const f of sources(join(ROOT, d))) {
        for (const u of networkUses(readFileSync(f, 'utf8'))) found.push(`${relative(ROOT, f)}: ${u}`);
      }
    }
    expect(found).toEqual([]);
  });
});
