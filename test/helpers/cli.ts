/**
 * Running the built command-line tool as a child process in tests: build it when dist/ is
 * missing or older than the sources (one build at a time across test files), run it with
 * `node dist/src/cli.js ...`, hash files before and after.
 */
import { spawn, spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

/** The project root. */
export const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
/** The built CLI entry. */
export const CLI = join(ROOT, 'dist', 'src', 'cli.js');

function newestSource(dir: string): number {
  let t = 0;
  if (!existsSync(dir)) return t;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) t = Math.max(t, newestSource(p));
    else if (e.name.endsWith('.ts')) t = Math.max(t, statSync(p).mtimeMs);
  }
  return t;
}

function fresh(): boolean {
  if (!existsSync(CLI)) return false;
  const built = statSync(CLI).mtimeMs;
  return ['src', 'readers', 'analyses'].every((d) => newestSource(join(ROOT, d)) <= built);
}

function sleep(ms: number): void {
  Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, ms);
}

/**
 * Build dist/ with `npx tsc -p .` when it is missing or older than any source file. Type
 * errors (possibly from files other engineers are editing) are tolerated: tsc still emits.
 * A lock directory keeps two test files from building at once.
 */
export function ensureBuilt(): void {
  if (fresh()) return;
  const lock = join(tmpdir(), `sojourn-build-${createHash('sha256').update(ROOT).digest('hex').slice(0, 12)}.lock`);
  const deadline = Date.now() + 180_000;
  for (;;) {
    try {
      mkdirSync(lock);
      break;
    } catch {
      if (Date.now() > deadline) rmSync(lock, { recursive: true, force: true });
      sleep(250);
    }
  }
  try {
    if (!fresh()) spawnSync('npx', ['tsc', '-p', '.'], { cwd: ROOT, stdio: 'ignore', timeout: 170_000 });
  } finally {
    rmSync(lock, { recursive: true, force: true });
  }
  if (!existsSync(CLI)) throw new Error(`building with tsc did not produce ${CLI}`);
}

export interface CliResult {
  status: number | null;
  signal: NodeJS.Signals | null;
  stdout: string;
  stderr: string;
}

/** Run `node [nodeArgs] dist/src/cli.js args...` and wait for it. */
export function runCli(args: string[], opts: { cwd?: string; nodeArgs?: string[]; input?: string | Buffer; env?: NodeJS.ProcessEnv } = {}): CliResult {
  const r = spawnSync(process.execPath, [...(opts.nodeArgs ?? []), CLI, ...args], {
    cwd: opts.cwd ?? ROOT,
    encoding: 'utf8',
    timeout: 90_000,
    env: { ...process.env, ...opts.env },
    ...(opts.input !== undefined ? { input: opts.input } : {}),
  });
  if (r.error) throw r.error;
  return { status: r.status, signal: r.signal, stdout: r.stdout, stderr: r.stderr };
}

/**
 * Run several command lines in one child process through the CLI's main() (see
 * cli-batch.mjs): each result has the status main() returned and what the run wrote to stdout
 * and stderr.
 */
export function runCliBatch(runs: { args: string[]; cwd: string }[], nodeArgs: string[] = []): CliResult[] {
  const r = spawnSync(process.execPath, [...nodeArgs, join(ROOT, 'test', 'helpers', 'cli-batch.mjs')], {
    cwd: ROOT,
    input: JSON.stringify(runs),
    encoding: 'utf8',
    timeout: 170_000,
    maxBuffer: 64 << 20,
  });
  if (r.error) throw r.error;
  if (r.status !== 0) throw new Error(`cli-batch.mjs exited with ${r.status}: ${r.stderr}`);
  return (JSON.parse(r.stdout) as { status: number | string; stdout: string; stderr: string }[]).map((x) => {
    if (typeof x.status === 'string') throw new Error(x.status);
    return { status: x.status, signal: null, stdout: x.stdout, stderr: x.stderr };
  });
}

/** Start the CLI without waiting (for tests that interrupt it). */
export function startCli(args: string[], cwd?: string) {
  return spawn(process.execPath, [CLI, ...args], { cwd: cwd ?? ROOT, stdio: ['ignore', 'pipe', 'pipe'] });
}

/** Hex SHA-256 of a file's bytes (FIPS 180-4, via node:crypto). */
export function sha256File(path: string): string {
  return createHash('sha256').update(readFileSync(path)).digest('hex');
}

/** A temporary folder for one test file. */
export function scratch(prefix: string) {
  const dir = mkdtempSync(join(tmpdir(), `sojourn-${prefix}-`));
  return {
    dir,
    file(name: string, content: string | Uint8Array): string {
      const p = join(dir, name);
      writeFileSync(p, content);
      return p;
    },
    list(): string[] {
      return readdirSync(dir).sort();
    },
    cleanup(): void {
      rmSync(dir, { recursive: true, force: true });
    },
  };
}
