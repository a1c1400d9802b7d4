/**
 * Output helpers: the JSON envelope every command prints with --json, atomic file writes,
 * number formatting with uncertainties, and aligned text tables.
 */
import { promises as fsp, realpathSync, existsSync, statSync, rmSync, lstatSync, readdirSync, unlinkSync, linkSync, copyFileSync, renameSync, constants as fsConstants } from 'node:fs';
import * as path from 'node:path';
import { randomBytes } from 'node:crypto';
import { UsageError } from './errors.js';
import { cleanupOnAbort } from './abort.js';
import type { Quantity } from './types.js';
import type { AtomKind } from './masses.js';
import { VERSION } from './version.js';

/** Description of one input file in the JSON envelope. */
export interface InputRecord {
  path: string;
  sha256: string;
  bytes: number;
  format: string;
  frames: number | null;
  /** Trajectories: per atom label, the element and mass used and where they came from (src/masses.ts). */
  atomKinds?: AtomKind[];
  /** The units the file's numbers were read in, and whether each was read, given or assumed. */
  fileUnits?: Record<string, FileUnit>;
}

/** A unit of a file's numbers and where it came from. */
export interface FileUnit {
  unit: string;
  /** 'file' (read from the file), an option name (given), or 'assumed'. */
  from: string;
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
 * the temporary file is removed and an OutputWriteError is thrown. Temporary siblings of the
 * target left by a killed run are dealt with first (see sweepStaleFileSiblings).
 */
export async function writeFileAtomic(target: string, data: string | Uint8Array): Promise<void> {
  sweepStaleFileSiblings(target);
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

/** A regular expression source matching `text` literally. */
export function escapeRegExp(text: string): string {
  return text.replace(/[.*+?^${}()|[\]\\]/g, '\\$&');
}

/**
 * Whether a process with this id exists now: kill(pid, 0) sends no signal but checks the id
 * (POSIX.1-2017, kill(): ESRCH when there is no such process, EPERM when it exists but belongs
 * to someone else). Ids that are not positive whole numbers count as existing, so that nothing
 * is removed on their account.
 */
export function processExists(pid: number): boolean {
  if (!Number.isSafeInteger(pid) || pid <= 0) return true;
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code !== 'ESRCH';
  }
}

/** Print a note about the file system on stderr at once (also with --json and --quiet). */
export function fileSystemWarning(message: string): void {
  process.stderr.write(`sojourn: warning: ${message}\n`);
}

/**
 * Temporary siblings of the output file `target` left by an earlier run that was killed
 * (SIGKILL, power loss): files named `.<name>.tmp-<pid>-<8 hex digits>` in its folder, the exact
 * pattern of siblingPath. Each is named on stderr; it is removed when process <pid> no longer
 * exists (see processExists) and left alone otherwise. Temporary files this process has staged
 * itself are skipped. Failures here never stop the command.
 */
function sweepStaleFileSiblings(target: string): void {
  const abs = path.resolve(target);
  const dir = path.dirname(abs);
  const pattern = new RegExp(`^\\.${escapeRegExp(path.basename(abs))}\\.tmp-(\\d+)-[0-9a-f]{8}$`);
  let names: string[];
  try {
    names = readdirSync(dir);
  } catch {
    return;
  }
  const ours = new Set([...staged.values()].map((s) => s.tmp));
  for (const name of names) {
    const m = pattern.exec(name);
    if (!m) continue;
    const p = path.join(dir, name);
    if (ours.has(p)) continue;
    const pid = Number(m[1]);
    try {
      if (!lstatSync(p).isFile()) continue;
      if (processExists(pid)) {
        fileSystemWarning(`${p} is a temporary file of process ${pid}, which is still running; left alone`);
        continue;
      }
      unlinkSync(p);
      fileSystemWarning(`removed ${p}, a temporary file left by an earlier run (process ${pid}, which no longer exists)`);
    } catch (e) {
      fileSystemWarning(`could not remove ${p}, a temporary file left by an earlier run: ${(e as Error).message}`);
    }
  }
}

/** See injectWriteFault. */
let writeFault: ((target: string) => NodeJS.ErrnoException | null) | null = null;

/**
 * For tests only (the program never calls it): from now on, a file write whose target `fault`
 * maps to an error writes the first half of its data and then fails with that error, as a full
 * disk does midway (e.g. an error with code ENOSPC). `null` ends it. Covers stageFile,
 * stageFileSet and writeFileAtomic.
 */
export function injectWriteFault(fault: ((target: string) => NodeJS.ErrnoException | null) | null): void {
  writeFault = fault;
}

/**
 * Write `data` to the new file `tmp` (see siblingPath), synced to disk. Nothing is left behind
 * when the write fails; errors name `target`.
 */
async function writeSibling(tmp: string, target: string, data: string | Uint8Array): Promise<void> {
  try {
    const fh = await fsp.open(tmp, 'wx');
    try {
      const fault = writeFault ? writeFault(target) : null;
      if (fault) {
        const bytes = typeof data === 'string' ? Buffer.from(data) : data;
        await fh.writeFile(bytes.subarray(0, bytes.length >> 1));
        throw fault;
      }
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
  sweepStaleFileSiblings(target);
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

/**
 * Stage a set of output files that belong together (all CSV files of one command): each is
 * written now under a temporary name (see stageFile), and they appear together when src/cli.ts
 * commits at the successful end of the command (commitStagedFiles), or none does. The names are
 * checked first: none may be an input (refuseOverwritingInputs), and two files of the same name
 * must have the same content (a usage error otherwise: one would silently replace the other).
 * If one write fails (a full disk), the files this call staged are removed and the
 * OutputWriteError is re-thrown. Returns the names.
 */
export async function stageFileSet(files: ReadonlyArray<readonly [string, string | Uint8Array]>, inputs: readonly string[] = []): Promise<string[]> {
  const unique = new Map<string, readonly [string, string | Uint8Array]>();
  for (const f of files) {
    refuseOverwritingInputs(f[0], [...inputs]);
    const key = path.resolve(f[0]);
    const twin = unique.get(key);
    if (twin && Buffer.compare(Buffer.from(twin[1]), Buffer.from(f[1])) !== 0) {
      throw new UsageError(`two different outputs of this command would both be named ${f[0]}; refusing to let one replace the other`);
    }
    if (!twin) unique.set(key, f);
  }
  const names = [...unique.values()].map(([name]) => name);
  try {
    for (const [name, data] of unique.values()) await stageFile(name, data);
  } catch (e) {
    for (const name of names) unstage(name);
    throw e;
  }
  return names;
}

/** Forget a staged file and remove its temporary file (no-op when `target` is not staged). */
function unstage(target: string): void {
  const s = staged.get(target);
  if (!s) return;
  staged.delete(target);
  rmSync(s.tmp, { force: true });
  s.release();
}

/**
 * Rename every staged file onto its target (see stageFile), as one set: when one rename fails,
 * the targets already renamed are put back as they were (a previous file at a target is kept
 * under a temporary hard link — or copy — until the set is complete) and every temporary file is
 * removed, so either all staged files appear or none does. The renames run synchronously, so no
 * SIGINT/SIGTERM handler (src/abort.ts) can run between them.
 */
export async function commitStagedFiles(): Promise<void> {
  const entries = [...staged];
  staged.clear();
  const done: Array<{ target: string; backup: string | null }> = [];
  try {
    for (const [target, s] of entries) {
      let backup: string | null = null;
      try {
        if (existsOrLink(target)) {
          backup = siblingPath(target);
          try {
            linkSync(target, backup);
          } catch {
            copyFileSync(target, backup, fsConstants.COPYFILE_EXCL);
          }
        }
        renameSync(s.tmp, target);
      } catch (e) {
        if (backup) rmSync(backup, { force: true });
        throw new OutputWriteError(target, e);
      }
      done.push({ target, backup });
    }
  } catch (e) {
    for (const d of done.reverse()) {
      try {
        if (d.backup) renameSync(d.backup, d.target);
        else rmSync(d.target, { force: true });
      } catch (e2) {
        fileSystemWarning(`could not put ${d.target} back as it was${d.backup ? ` (its previous content is in ${d.backup})` : ''}: ${(e2 as Error).message}`);
      }
    }
    for (const [, s] of entries) {
      rmSync(s.tmp, { force: true });
      s.release();
    }
    throw e;
  }
  for (const d of done) if (d.backup) rmSync(d.backup, { force: true });
  for (const [, s] of entries) s.release();
}

/** Whether anything (a file, folder or link, even a dangling one) has this name. */
function existsOrLink(p: string): boolean {
  try {
    lstatSync(p);
    return true;
  } catch {
    return false;
  }
}

/** Remove every staged file without writing its target (see stageFile). */
export function discardStagedFiles(): void {
  for (const target of [...staged.keys()]) unstage(target);
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
