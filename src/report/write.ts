/**
 * Atomic output of a report directory.
 *
 * Everything is written into a staging directory beside the target, named
 * `<target>.tmp-<pid>-<random hex>`, which is renamed onto the target only when every file is
 * complete. rename(2) of a directory is atomic on one file system (POSIX.1-2017, rename()), so
 * a reader sees either no report, the previous report, or the new one — never a half-written one.
 *
 * - The target may be absent, or a previous sojourn report: a directory holding a results.json
 *   whose top-level "tool" is "sojourn". A previous report is replaced by three renames and a
 *   removal: old report → `<target>.old-<pid>-<hex>`, staging → target, then the old one is
 *   deleted (if the second rename fails the old report is put back).
 * - Anything else at the target (a file, a link, an empty or foreign directory) is refused with
 *   a UsageError and left untouched.
 * - Every file is flushed to the disk (fsync) before the rename. File-system failures become
 *   OutputWriteError (src/output.ts), naming the path and the reason.
 * - On failure the staging directory is removed. While a staging directory exists, SIGINT and
 *   SIGTERM handlers remove it (and put a displaced previous report back) before the process
 *   ends with the signal; an 'exit' handler does the same for other ways out. SIGKILL cannot be
 *   caught: then a `.tmp-` directory may remain, but the target never looks finished.
 */
import { promises as fsp, lstatSync, readFileSync, renameSync, rmSync, existsSync } from 'node:fs';
import * as path from 'node:path';
import { randomBytes } from 'node:crypto';
import { UsageError } from '../errors.js';
import { OutputWriteError } from '../output.js';
import { cleanupOnAbort } from '../abort.js';

/** File whose "tool" field marks a directory as a sojourn report. */
export const REPORT_MARKER = 'results.json';

/** What is at a report target now. */
export type TargetState = 'absent' | 'previous-report';

/**
 * Inspect the report target: 'absent' when nothing is there, 'previous-report' when it is a
 * directory (not a link) whose results.json parses as JSON with "tool": "sojourn". Anything
 * else is a UsageError naming what was found.
 */
export function inspectReportTarget(target: string): TargetState {
  let st;
  try {
    st = lstatSync(target);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT') return 'absent';
    throw new UsageError(`--out ${target}: cannot inspect it (${(e as Error).message})`);
  }
  const refuse = (what: string) =>
    new UsageError(`--out ${target} ${what}; refusing to replace it (give a new directory name, or remove it first)`);
  if (st.isSymbolicLink()) throw refuse('is a symbolic link');
  if (!st.isDirectory()) throw refuse('exists and is not a directory');
  let doc: unknown;
  try {
    doc = JSON.parse(readFileSync(path.join(target, REPORT_MARKER), 'utf8'));
  } catch {
    throw refuse(`exists and is not a sojourn report (no readable ${REPORT_MARKER})`);
  }
  if (typeof doc !== 'object' || doc === null || (doc as { tool?: unknown }).tool !== 'sojourn') {
    throw refuse(`exists and its ${REPORT_MARKER} was not written by sojourn`);
  }
  return 'previous-report';
}

/**
 * Clean-up of one staging directory after an interrupt (synchronous: runs in signal and exit
 * handlers, src/abort.ts): put a displaced previous report back, remove the staging directory.
 */
function cleanupSync(staging: string, entry: { target: string; displaced: string | null }): void {
  try {
    if (entry.displaced && !existsSync(entry.target)) renameSync(entry.displaced, entry.target);
  } catch {
    /* best effort: the old report stays under its .old- name */
  }
  try {
    rmSync(staging, { recursive: true, force: true });
  } catch {
    /* best effort */
  }
}

/** A report being written: files go into `staging` until `commit` renames it onto `target`. */
export interface StagedDirectory {
  /** Final directory (absolute). */
  readonly target: string;
  /** Temporary sibling directory (absolute). */
  readonly staging: string;
  /** Write one file (a plain name, no directories) into the staging directory. */
  write(name: string, data: string | Uint8Array): Promise<void>;
  /** Names written so far, in order. */
  readonly written: readonly string[];
  /**
   * Move the staging directory onto the target (replacing a previous sojourn report; refusing
   * anything else, checked again now), then forget it.
   */
  commit(): Promise<void>;
  /** Remove the staging directory (idempotent). */
  discard(): Promise<void>;
}

/**
 * Start writing a report into `target`: checks the target (see `inspectReportTarget`), creates
 * missing parent directories and the staging directory `<target>.tmp-<pid>-<hex>`, and installs
 * the signal handlers that remove it.
 */
export async function stageDirectory(target: string): Promise<StagedDirectory> {
  const abs = path.resolve(target);
  inspectReportTarget(abs);
  const staging = `${abs}.tmp-${process.pid}-${randomBytes(4).toString('hex')}`;
  try {
    await fsp.mkdir(path.dirname(abs), { recursive: true });
    await fsp.mkdir(staging);
  } catch (e) {
    throw new OutputWriteError(target, e);
  }
  // While this directory exists, an interrupt removes it (and restores a displaced report).
  const entry: { target: string; displaced: string | null } = { target: abs, displaced: null };
  const forget = cleanupOnAbort(() => cleanupSync(staging, entry));
  const written: string[] = [];
  let done = false;
  return {
    target: abs,
    staging,
    written,
    async write(name: string, data: string | Uint8Array): Promise<void> {
      if (done) throw new Error(`report ${abs}: already committed or discarded`);
      if (name !== path.basename(name) || name === '' || name === '.' || name === '..') {
        throw new Error(`report file name "${name}" must be a plain file name`);
      }
      try {
        const fh = await fsp.open(path.join(staging, name), 'wx');
        try {
          await fh.writeFile(data);
          await fh.sync(); // on the disk before the directory is renamed into place
        } finally {
          await fh.close();
        }
      } catch (e) {
        throw new OutputWriteError(path.join(abs, name), e);
      }
      written.push(name);
    },
    async commit(): Promise<void> {
      if (done) throw new Error(`report ${abs}: already committed or discarded`);
      const state = inspectReportTarget(abs);
      if (state === 'absent') {
        try {
          await fsp.rename(staging, abs);
        } catch (e) {
          throw new OutputWriteError(abs, e);
        }
      } else {
        const old = `${abs}.old-${process.pid}-${randomBytes(4).toString('hex')}`;
        try {
          await fsp.rename(abs, old);
        } catch (e) {
          throw new OutputWriteError(abs, e);
        }
        entry.displaced = old;
        try {
          await fsp.rename(staging, abs);
        } catch (e) {
          await fsp.rename(old, abs);
          entry.displaced = null;
          throw new OutputWriteError(abs, e);
        }
        entry.displaced = null;
        forget();
        done = true;
        await fsp.rm(old, { recursive: true, force: true });
        return;
      }
      forget();
      done = true;
    },
    async discard(): Promise<void> {
      if (done) return;
      done = true;
      await fsp.rm(staging, { recursive: true, force: true });
      forget();
    },
  };
}

/**
 * Write a whole report directory at once: stage, write every file in order, commit; on any
 * failure the staging directory is removed and the error re-thrown.
 */
export async function writeReportDirectory(target: string, files: ReadonlyArray<{ name: string; data: string | Uint8Array }>): Promise<void> {
  const dir = await stageDirectory(target);
  try {
    for (const f of files) await dir.write(f.name, f.data);
    await dir.commit();
  } catch (e) {
    await dir.discard();
    throw e;
  }
}
