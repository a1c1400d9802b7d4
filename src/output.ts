/**
 * Output helpers: the JSON envelope every command prints with --json, atomic file writes,
 * number formatting with uncertainties, and aligned text tables.
 */
import { promises as fsp, realpathSync, existsSync, statSync, rmSync } from 'node:fs';
import * as path from 'node:path';
import { randomBytes } from 'node:crypto';
import { UsageError } from './errors.js';
import { cleanupOnAbort } from './abort.js';
import type { Quantity } from './types.js';
import { VERSION } from './version.js';

/** Description of one input file in the JSON envelope. */
export interface InputRecord {
  path: string;
  sha256: string;
  bytes: number;
  format: string;
  frames: number | null;
}

/** The one JSON object a command prints with --json. */
export interface Envelope {
  tool: 'sojourn';
  version: string;
  command: string;
  inputs: InputRecord[];
  options: Record<string, unknown>;
  results: unknown;
  warnings: string[];
}

/** Build the JSON envelope. Options with undefined values are dropped. */
export function envelope(
  command: string,
  inputs: InputRecord[],
  options: Record<string, unknown>,
  results: unknown,
  warnings: string[],
): Envelope {
  const opts: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(options)) if (v !== undefined) opts[k] = v;
  return { tool: 'sojourn', version: VERSION, command, inputs, options: opts, results, warnings };
}

/** JSON.stringify that writes typed arrays as plain arrays and non-finite numbers as null. */
export function toJson(value: unknown, indent = 2): string {
  return JSON.stringify(
    value,
    (_k, v) => {
      if (ArrayBuffer.isView(v) && !(v instanceof DataView)) return Array.from(v as unknown as ArrayLike<number>);
      if (v instanceof Map) return Object.fromEntries(v);
      if (typeof v === 'number' && !Number.isFinite(v)) return null;
      return v;
    },
    indent,
  );
}

/** A file could not be written; the message names it and the system's reason. */
export class OutputWriteError extends Error {
  readonly target: string;
  readonly code: string | undefined;
  constructor(target: string, cause: unknown) {
    const e = cause as NodeJS.ErrnoException;
    const code = e && typeof e === 'object' ? e.code : undefined;
    const why =
      code === 'ENOENT'
        ? 'its folder does not exist'
        : code === 'EISDIR'
          ? 'it is a folder'
          : code === 'EACCES' || code === 'EPERM'
            ? 'permission denied'
            : code === 'ENOSPC'
              ? 'no space left on the device'
              : cause instanceof Error
                ? cause.message
                : String(cause);
    super(`cannot write ${target}: ${why}`);
    this.name = 'OutputWriteError';
    this.target = target;
    this.code = code;
  }
}

/**
 * Write a file atomically: the data go to a temporary name in the same directory, are flushed
 * to the disk (fsync), and the temporary file is renamed over the target only when complete
 * (rename(2) replaces a name atomically, POSIX.1-2017), so a reader — or a later look after the
 * process was killed — sees either the old file or the whole new one, never a part. On failure
 * the temporary file is removed and an OutputWriteError is thrown.
 */
export async function writeFileAtomic(target: string, data: string | Uint8Array): Promise<void> {
  const tmp = siblingPath(target);
  await writeSibling(tmp, target, data);
  try {
    await fsp.rename(tmp, target);
  } catch (e) {
    await fsp.rm(tmp, { force: true });
    throw new OutputWriteError(target, e);
  }
}

/** A new temporary name beside `target` (same folder, so that a rename onto it is atomic). */
function siblingPath(target: string): string {
  const dir = path.dirname(path.resolve(target));
  return path.join(dir, `.${path.basename(target)}.tmp-${process.pid}-${randomBytes(4).toString('hex')}`);
}

/**
 * Write `data` to the new file `tmp` (see siblingPath), synced to disk. Nothing is left behind
 * when the write fails; errors name `target`.
 */
async function writeSibling(tmp: string, target: string, data: string | Uint8Array): Promise<void> {
  try {
    const fh = await fsp.open(tmp, 'wx');
    try {
      await fh.writeFile(data);
      await fh.sync();
    } finally {
      await fh.close();
    }
  } catch (e) {
    await fsp.rm(tmp, { force: true });
    throw new OutputWriteError(target, e);
  }
}

/** Files written to a temporary sibling and waiting for commitStagedFiles (see stageFile). */
const staged = new Map<string, { tmp: string; release: () => void }>();

/**
 * Write `data` for `target` now, but under a temporary sibling name: the target appears (by an
 * atomic rename) only when commitStagedFiles is called at the successful end of the command, and
 * the temporary file is removed by discardStagedFiles, on SIGINT/SIGTERM or at exit otherwise. So
 * a command that fails after writing (e.g. its own result is not defensible) leaves no output,
 * and the data need not be held in memory until then.
 */
export async function stageFile(target: string, data: string | Uint8Array): Promise<void> {
  // The name is fixed before writing, so that an interrupt during a long write removes the file.
  const tmp = siblingPath(target);
  const release = cleanupOnAbort(() => rmSync(tmp, { force: true }));
  try {
    await writeSibling(tmp, target, data);
  } catch (e) {
    release();
    throw e;
  }
  const old = staged.get(target);
  if (old) {
    rmSync(old.tmp, { force: true });
    old.release();
  }
  staged.set(target, { tmp, release });
}

/** Rename every staged file onto its target (see stageFile). */
export async function commitStagedFiles(): Promise<void> {
  for (const [target, s] of staged) {
    staged.delete(target);
    try {
      await fsp.rename(s.tmp, target);
    } catch (e) {
      rmSync(s.tmp, { force: true });
      throw new OutputWriteError(target, e);
    } finally {
      s.release();
    }
  }
}

/** Remove every staged file without writing its target (see stageFile). */
export function discardStagedFiles(): void {
  for (const [target, s] of staged) {
    staged.delete(target);
    rmSync(s.tmp, { force: true });
    s.release();
  }
}

/**
 * Refuse an output path that is one of the inputs: the same path after resolving symbolic
 * links, or the same file under another name (hard link: same device and inode).
 */
export function refuseOverwritingInputs(output: string, inputs: string[]): void {
  const resolve = (p: string) => (existsSync(p) ? realpathSync(p) : path.resolve(p));
  const out = resolve(output);
  const outStat = existsSync(output) ? statSync(output) : null;
  for (const i of inputs) {
    if (i === '-') continue;
    let same = resolve(i) === out;
    if (!same && outStat && existsSync(i)) {
      const st = statSync(i);
      same = st.dev === outStat.dev && st.ino === outStat.ino;
    }
    if (same) throw new UsageError(`output ${output} is also an input; refusing to overwrite it`);
  }
}

/**
 * Check an output file path before any work is done: not an input (see
 * refuseOverwritingInputs), not an existing folder, and in a folder that exists. Usage errors
 * otherwise, so that a long run does not end in a failed write.
 */
export function checkOutputFile(output: string, inputs: string[], what: string): void {
  refuseOverwritingInputs(output, inputs);
  if (existsSync(output) && statSync(output).isDirectory()) throw new UsageError(`${what} ${output} is a folder; give a file name`);
  const dir = path.dirname(path.resolve(output));
  if (!existsSync(dir) || !statSync(dir).isDirectory()) throw new UsageError(`${what} ${output}: the folder ${dir} does not exist`);
}

/**
 * Check, before a run, that files named PREFIX-… can be written: the prefix's folder exists.
 * Usage error otherwise (exit 2), so a long run never ends in an unwritable output.
 */
export function checkOutputPrefix(prefix: string, what: string): void {
  const dir = path.dirname(path.resolve(`${prefix}-x`));
  if (!existsSync(dir) || !statSync(dir).isDirectory()) throw new UsageError(`${what} ${prefix}: the folder ${dir} does not exist`);
}

/**
 * Format value ± uncertainty with the uncertainty to two significant figures and the value to
 * the same decimal place (common practice, no source; cf. JCGM 100:2008 §7.2.6).
 */
export function formatValue(value: number, uncertainty: number | null, digits = 4): string {
  if (!Number.isFinite(value)) return String(value);
  if (uncertainty === null || !Number.isFinite(uncertainty) || uncertainty <= 0) {
    return formatSig(value, digits);
  }
  if (uncertainty < 1e-6 * Math.abs(value)) {
    // Far more precise than any printed digits: keep 7 significant figures and show the error apart.
    return `${formatSig(value, 7)} ± ${uncertainty.toExponential(1)}`;
  }
  const e = Math.floor(Math.log10(uncertainty)) - 1;
  const big = Math.abs(value) >= 1e6 || (Math.abs(value) < 1e-3 && value !== 0);
  if (big) {
    const exp = Math.floor(Math.log10(Math.abs(value)));
    const s = 10 ** exp;
    const dec = Math.max(0, exp - e);
    return `(${(value / s).toFixed(dec)} ± ${(uncertainty / s).toFixed(dec)})e${exp}`;
  }
  const dec = Math.max(0, -e);
  if (e > 0) {
    // Round to the uncertainty's second significant digit even left of the decimal point.
    const step = 10 ** e;
    return `${(Math.round(value / step) * step).toFixed(0)} ± ${(Math.round(uncertainty / step) * step).toFixed(0)}`;
  }
  return `${value.toFixed(dec)} ± ${uncertainty.toFixed(dec)}`;
}

/** A number to `digits` significant figures without trailing noise. */
export function formatSig(value: number, digits = 4): string {
  if (value === 0) return '0';
  const a = Math.abs(value);
  if (a >= 1e6 || a < 1e-3) return value.toExponential(digits - 1);
  return Number(value.toPrecision(digits)).toString();
}

/** "value ± unc unit" for a Quantity scaled by `scale` into `unit` (for tables). */
export function formatQuantity(q: Quantity | null, scale = 1, unit?: string): string {
  if (q === null) return '—';
  const u = unit ?? q.unit;
  return `${formatValue(q.value * scale, q.uncertainty === null ? null : q.uncertainty * scale)}${u && u !== '1' ? ' ' + u : ''}`;
}

/** An aligned plain-text table (first column left-aligned, the rest right-aligned). */
export function formatTable(headers: string[], rows: string[][]): string {
  const widths = headers.map((h, i) => Math.max(h.length, ...rows.map((r) => (r[i] ?? '').length)));
  const line = (cells: string[]) =>
    cells.map((c, i) => (i === 0 ? c.padEnd(widths[i]) : c.padStart(widths[i]))).join('  ').trimEnd();
  return [line(headers), widths.map((w) => '-'.repeat(w)).join('  '), ...rows.map(line)].join('\n');
}

/** CSV text from column names and equal-length numeric columns. */
export function toCsv(names: string[], columns: ArrayLike<number>[]): string {
  const n = columns.length ? columns[0].length : 0;
  const out = [names.join(',')];
  for (let i = 0; i < n; i++) out.push(columns.map((c) => (Number.isFinite(c[i]) ? String(c[i]) : '')).join(','));
  return out.join('\n') + '\n';
}
