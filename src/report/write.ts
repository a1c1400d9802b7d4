/**
 * Atomic output of a report directory.
 *
 * Everything is written into a staging directory beside the target, named
 * `<target>.tmp-<pid>-<random hex>`, which is renamed onto the target only when every file is
 * complete. rename(2) of a directory is atomic on one file system (POSIX.1-2017, rename()), so
 * a reader sees either no report, the previous report, or the new one — never a half-written one.
 *
 * - The last file written is the manifest `.sojourn-manifest.json`: tool, version, and the name,
 *   size and SHA-256 of every other file the writer wrote. Only the manifest marks a folder as a
 *   sojourn report (a results.json alone does not: `sojourn inspect --json > DIR/results.json`
 *   makes one too).
 * - The target may be absent, or a previous report holding nothing but its manifest and files the
 *   manifest lists, unchanged (same size and SHA-256). Such a report is replaced: old report →
 *   `<target>.old-<pid>-<hex>`, staging → target, then the files of the old manifest are
 *   removed and the emptied folder too (if the second rename fails the old report is put back).
 * - Anything else at the target (a file, a link, an empty folder, a folder without a manifest,
 *   a report to which a file or folder was added or whose file was changed) is refused with a
 *   UsageError naming what is not ours, and left untouched.
 * - Missing parent folders of the target are created one by one and remembered; a run that does
 *   not commit removes those it created (only when empty again).
 * - A `<target>.tmp-<pid>-<hex>` or `.old-` sibling left by a killed run is named on stderr and,
 *   when process <pid> no longer exists, removed (a staging folder) or put back / cleared (a
 *   displaced previous report), before the target is examined.
 * - Every file is flushed to the disk (fsync) before the rename. File-system failures become
 *   OutputWriteError (src/output.ts), naming the path and the reason.
 * - On failure the staging directory is removed. While a staging directory exists, SIGINT and
 *   SIGTERM handlers remove it (and the parents this run created) before the process ends with
 *   the signal; an 'exit' handler does the same for other ways out. The swap itself is
 *   synchronous, so no handler runs in its middle. SIGKILL cannot be caught: then a `.tmp-`
 *   directory (or, killed mid-swap, an `.old-` one) may remain, but the target never looks
 *   finished, and the next run deals with it (above).
 */
import { promises as fsp, lstatSync, readFileSync, readdirSync, renameSync, rmSync, rmdirSync, unlinkSync } from 'node:fs';
import * as path from 'node:path';
import { createHash, randomBytes } from 'node:crypto';
import { UsageError } from '../errors.js';
import { OutputWriteError, escapeRegExp, fileSystemWarning, processExists } from '../output.js';
import { cleanupOnAbort } from '../abort.js';
import { VERSION } from '../version.js';

/** Name of the file that marks a folder as a sojourn report and lists the files written there. */
export const MANIFEST = '.sojourn-manifest.json';

/** One file the report writer wrote, as listed in the manifest. */
interface ManifestEntry {
  name: string;
  bytes: number;
  sha256: string;
}

/** What is at a report target now. */
export type TargetState = 'absent' | 'previous-report';

/** A path whose entry is missing (lstat: ENOENT) counts as absent. */
function lstatOrNull(p: string) {
  try {
    return lstatSync(p);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT' || (e as NodeJS.ErrnoException).code === 'ENOTDIR') return null;
    throw e;
  }
}

/** A plain file name: no folder part, not empty, not "." or "..". */
function plainName(name: unknown): name is string {
  return typeof name === 'string' && name !== '' && name !== '.' && name !== '..' && name === path.basename(name) && !name.includes('/');
}

/** Hex SHA-256 of bytes (FIPS 180-4, node:crypto). */
function sha256(data: string | Uint8Array): string {
  return createHash('sha256').update(data).digest('hex');
}

/**
 * Examine the report target: 'absent', or the names of the files of a previous report (see the
 * module comment: a folder holding only its manifest and the unchanged files it lists). Anything
 * else is a UsageError whose message starts with `label` and names what is not ours.
 */
function examineTarget(target: string, label: string): { state: 'absent' } | { state: 'previous-report'; files: string[] } {
  let st;
  try {
    st = lstatOrNull(target);
  } catch (e) {
    throw new UsageError(`${label}: cannot inspect it (${(e as Error).message})`);
  }
  if (st === null) return { state: 'absent' };
  const refuse = (what: string) =>
    new UsageError(`${label} ${what}; refusing to replace it (give a new directory name, or remove it first)`);
  if (st.isSymbolicLink()) throw refuse('is a symbolic link');
  if (!st.isDirectory()) throw refuse('exists and is not a directory');
  const manifestPath = path.join(target, MANIFEST);
  let entries: ManifestEntry[];
  try {
    const mst = lstatOrNull(manifestPath);
    if (mst === null) {
      const hasResults = lstatOrNull(path.join(target, 'results.json')) !== null;
      throw refuse(`exists and is not a sojourn report (it has no ${MANIFEST}${hasResults ? '; a results.json alone does not make one' : ''})`);
    }
    if (!mst.isFile()) throw refuse(`exists and its ${MANIFEST} is not a file`);
    const doc = JSON.parse(readFileSync(manifestPath, 'utf8')) as { tool?: unknown; kind?: unknown; files?: unknown };
    const ok =
      doc?.tool === 'sojourn' &&
      doc.kind === 'report' &&
      Array.isArray(doc.files) &&
      doc.files.every((f: Partial<ManifestEntry> | null) => f && plainName(f.name) && f.name !== MANIFEST && Number.isSafeInteger(f.bytes) && typeof f.sha256 === 'string');
    if (!ok) throw refuse(`exists and its ${MANIFEST} was not written by sojourn`);
    entries = doc.files as ManifestEntry[];
  } catch (e) {
    if (e instanceof UsageError) throw e;
    throw refuse(`exists and its ${MANIFEST} is not readable (${(e as Error).message})`);
  }
  const listed = new Map(entries.map((f) => [f.name, f]));
  const foreign: string[] = [];
  const changed: string[] = [];
  let names: string[];
  try {
    names = readdirSync(target).sort();
  } catch (e) {
    throw new UsageError(`${label}: cannot list it (${(e as Error).message})`);
  }
  for (const name of names) {
    if (name === MANIFEST) continue;
    const p = path.join(target, name);
    const f = listed.get(name);
    const fst = lstatOrNull(p);
    if (!f || !fst || !fst.isFile()) {
      foreign.push(p);
      continue;
    }
    try {
      if (fst.size !== f.bytes || sha256(readFileSync(p)) !== f.sha256) changed.push(p);
    } catch {
      changed.push(p);
    }
  }
  const list = (ps: string[]) => (ps.length <= 5 ? ps.join(', ') : `${ps.slice(0, 5).join(', ')} and ${ps.length - 5} more`);
  if (foreign.length > 0) {
    throw refuse(`holds ${list(foreign)}, which sojourn did not write (move ${foreign.length === 1 ? 'it' : 'them'} elsewhere first)`);
  }
  if (changed.length > 0) {
    throw refuse(`holds ${list(changed)}, changed since sojourn wrote ${changed.length === 1 ? 'it' : 'them'}`);
  }
  return { state: 'previous-report', files: entries.map((f) => f.name) };
}

/**
 * Inspect the report target: 'absent' when nothing is there, 'previous-report' when it is a
 * directory (not a link) holding a sojourn report manifest (MANIFEST) and nothing but the
 * unchanged files that manifest lists. Anything else is a UsageError naming what was found.
 */
export function inspectReportTarget(target: string): TargetState {
  return examineTarget(target, `--out ${target}`).state;
}

/**
 * Remove a previous report's files — those its manifest lists, and the manifest — then the
 * folder itself. A file that appeared meanwhile stops the folder's removal: it is left, with a
 * warning naming it, and nothing of it is lost.
 */
function removeReportFiles(dir: string, files: readonly string[]): void {
  for (const name of [...files, MANIFEST]) rmSync(path.join(dir, name), { force: true });
  try {
    rmdirSync(dir);
  } catch {
    let rest: string[] = [];
    try {
      rest = readdirSync(dir);
    } catch {
      /* gone or unreadable: nothing more to say */
    }
    if (rest.length > 0) fileSystemWarning(`left ${dir}: it holds ${rest.map((n) => path.join(dir, n)).join(', ')}, which sojourn did not write`);
  }
}

/**
 * Remove the staging folder of an earlier run: its regular files (all written by the report
 * writer), then the folder. Anything else inside stops the removal; true when it is gone.
 */
function removeStagingFolder(dir: string): boolean {
  for (const name of readdirSync(dir)) {
    const p = path.join(dir, name);
    if (lstatSync(p).isFile()) unlinkSync(p);
  }
  try {
    rmdirSync(dir);
    return true;
  } catch {
    return false;
  }
}

/**
 * Deal with siblings of the report target left by a run that was killed (SIGKILL, power loss):
 * folders named `<target>.tmp-<pid>-<8 hex>` (staging) or `<target>.old-<pid>-<8 hex>` (a
 * previous report moved aside during the swap), the exact patterns this module makes. Each is
 * named on stderr. One whose process still exists (processExists) is left alone. Otherwise a
 * staging folder is removed; a displaced report is put back when the target is absent (it is the
 * last complete report), else its files are removed like a replaced report's — unless it holds
 * anything not ours, then it is left. Failures here never stop the command.
 */
function sweepStaleSiblings(abs: string): void {
  const dir = path.dirname(abs);
  const pattern = new RegExp(`^${escapeRegExp(path.basename(abs))}\\.(tmp|old)-(\\d+)-[0-9a-f]{8}$`);
  let names: string[];
  try {
    names = readdirSync(dir);
  } catch {
    return;
  }
  for (const name of names.sort()) {
    const m = pattern.exec(name);
    if (!m) continue;
    const p = path.join(dir, name);
    const pid = Number(m[2]);
    try {
      if (!lstatSync(p).isDirectory()) continue;
      if (processExists(pid)) {
        fileSystemWarning(`${p} is a temporary folder of process ${pid}, which is still running; left alone`);
        continue;
      }
      const earlier = `an earlier run (process ${pid}, which no longer exists)`;
      if (m[1] === 'tmp') {
        if (removeStagingFolder(p)) fileSystemWarning(`removed ${p}, an unfinished report left by ${earlier}`);
        else fileSystemWarning(`left ${p}, an unfinished report of ${earlier}: it holds something sojourn did not write`);
      } else if (lstatOrNull(abs) === null) {
        renameSync(p, abs);
        fileSystemWarning(`put the previous report back from ${p} to ${abs}: ${earlier} had moved it aside`);
      } else {
        let files: string[] | null = null;
        try {
          const r = examineTarget(p, p);
          if (r.state === 'previous-report') files = r.files;
        } catch {
          /* not only ours: left below */
        }
        if (files) {
          removeReportFiles(p, files);
          fileSystemWarning(`removed ${p}, a replaced report left by ${earlier}`);
        } else fileSystemWarning(`left ${p}, a replaced report of ${earlier}: it holds something sojourn did not write`);
      }
    } catch (e) {
      fileSystemWarning(`could not deal with ${p}, left by an earlier run: ${(e as Error).message}`);
    }
  }
}

/** Remove the parent folders this run created (deepest first), each only if it is empty. */
function removeCreatedParents(created: string[]): void {
  for (const d of [...created].reverse()) {
    try {
      rmdirSync(d);
    } catch {
      break; // not empty (someone else's file, or our committed report): keep it and its parents
    }
  }
  created.length = 0;
}

/**
 * Clean-up of one staging directory after an interrupt (synchronous: runs in signal and exit
 * handlers, src/abort.ts): remove the staging directory and the parent folders this run created.
 * (The swap in commit is synchronous, so an interrupt never finds a previous report moved aside.)
 */
function cleanupSync(staging: string, created: string[]): void {
  try {
    rmSync(staging, { recursive: true, force: true });
  } catch {
    /* best effort */
  }
  removeCreatedParents(created);
}

/** A report being written: files go into `staging` until `commit` renames it onto `target`. */
export interface StagedDirectory {
  /** Final directory (absolute). */
  readonly target: string;
  /** Temporary sibling directory (absolute). */
  readonly staging: string;
  /** Write one file (a plain name, no directories; not MANIFEST) into the staging directory. */
  write(name: string, data: string | Uint8Array): Promise<void>;
  /** Names written so far, in order (the manifest, written by commit, is not among them). */
  readonly written: readonly string[];
  /**
   * Write the manifest, then move the staging directory onto the target (replacing a previous
   * sojourn report; refusing anything else, checked again now), then forget it.
   */
  commit(): Promise<void>;
  /** Remove the staging directory and the parent folders this run created (idempotent). */
  discard(): Promise<void>;
}

/**
 * Start writing a report into `target`: deals with siblings left by killed runs, checks the
 * target (see `inspectReportTarget`), creates missing parent directories (remembering which) and
 * the staging directory `<target>.tmp-<pid>-<hex>`, and installs the signal handlers that remove
 * them.
 */
export async function stageDirectory(target: string): Promise<StagedDirectory> {
  const abs = path.resolve(target);
  const label = `--out ${target}`;
  sweepStaleSiblings(abs);
  examineTarget(abs, label);
  const staging = `${abs}.tmp-${process.pid}-${randomBytes(4).toString('hex')}`;
  // While the staging directory or a created parent exists, an interrupt removes it.
  const created: string[] = [];
  const forget = cleanupOnAbort(() => cleanupSync(staging, created));
  try {
    const missing: string[] = [];
    for (let d = path.dirname(abs); lstatOrNull(d) === null; d = path.dirname(d)) {
      missing.push(d);
      if (path.dirname(d) === d) break;
    }
    for (const d of missing.reverse()) {
      try {
        await fsp.mkdir(d);
        created.push(d);
      } catch (e) {
        if ((e as NodeJS.ErrnoException).code !== 'EEXIST') throw e; // made by someone else meanwhile: not ours
      }
    }
    await fsp.mkdir(staging);
  } catch (e) {
    removeCreatedParents(created);
    forget();
    throw new OutputWriteError(target, e);
  }
  const written: string[] = [];
  const listed: ManifestEntry[] = [];
  let done = false;
  return {
    target: abs,
    staging,
    written,
    async write(name: string, data: string | Uint8Array): Promise<void> {
      if (done) throw new Error(`report ${abs}: already committed or discarded`);
      if (!plainName(name)) throw new Error(`report file name "${name}" must be a plain file name`);
      if (name === MANIFEST) throw new Error(`report file name "${name}" is reserved for the manifest`);
      const bytes = typeof data === 'string' ? Buffer.from(data) : data;
      try {
        const fh = await fsp.open(path.join(staging, name), 'wx');
        try {
          await fh.writeFile(bytes);
          await fh.sync(); // on the disk before the directory is renamed into place
        } finally {
          await fh.close();
        }
      } catch (e) {
        throw new OutputWriteError(path.join(abs, name), e);
      }
      written.push(name);
      listed.push({ name, bytes: bytes.length, sha256: sha256(bytes) });
    },
    async commit(): Promise<void> {
      if (done) throw new Error(`report ${abs}: already committed or discarded`);
      const manifest = JSON.stringify({ tool: 'sojourn', version: VERSION, kind: 'report', files: listed }, null, 2) + '\n';
      try {
        const fh = await fsp.open(path.join(staging, MANIFEST), 'w');
        try {
          await fh.writeFile(manifest);
          await fh.sync();
        } finally {
          await fh.close();
        }
      } catch (e) {
        throw new OutputWriteError(path.join(abs, MANIFEST), e);
      }
      // Checked again: the target may have changed during the run. The renames below are
      // synchronous, so no interrupt handler runs between them.
      const now = examineTarget(abs, label);
      if (now.state === 'absent') {
        try {
          renameSync(staging, abs);
        } catch (e) {
          throw new OutputWriteError(abs, e);
        }
      } else {
        const old = `${abs}.old-${process.pid}-${randomBytes(4).toString('hex')}`;
        try {
          renameSync(abs, old);
        } catch (e) {
          throw new OutputWriteError(abs, e);
        }
        try {
          renameSync(staging, abs);
        } catch (e) {
          try {
            renameSync(old, abs);
          } catch (e2) {
            fileSystemWarning(`the previous report could not be put back from ${old}: ${(e2 as Error).message}`);
          }
          throw new OutputWriteError(abs, e);
        }
        done = true;
        forget();
        // Only the files the old manifest lists go; anything that appeared since is left.
        try {
          removeReportFiles(old, now.files);
        } catch (e) {
          fileSystemWarning(`could not remove the replaced report ${old}: ${(e as Error).message}`);
        }
        return;
      }
      done = true;
      forget();
    },
    async discard(): Promise<void> {
      if (done) return;
      done = true;
      await fsp.rm(staging, { recursive: true, force: true });
      removeCreatedParents(created);
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
