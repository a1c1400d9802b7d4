/**
 * Entry point of the readers layer: open a trajectory (XYZ / extended XYZ / PDB, optionally
 * gzipped, or '-' for stdin) as a stream of Frames; read column tables (see table.ts).
 *
 * Format: from the name (.xyz, .extxyz → xyz; .pdb, .ent → pdb; a trailing .gz is ignored),
 * else from the content: the first non-blank line being an integer means XYZ, a PDB record
 * name (ATOM, HETATM, MODEL, CRYST1, HEADER, TITLE, REMARK, …) means PDB. The input is read
 * only once: openTrajectory reads the first chunk (to sniff, and so that a missing or
 * unreadable file fails at open), and frames() carries on from there.
 *
 * Rules for every trajectory: all frames have the atom count and labels of the first (else
 * InputError naming frame and line); a truncated last frame is dropped with a warning in
 * opts.warnings (InputError with strict: true); no complete frame is an InputError. Frames
 * reuse their typed arrays (positions, velocities, cell): copy what you keep beyond one
 * iteration step. The Topology is one object shared by every frame.
 */
import type { Readable } from 'node:stream';
import { InputError } from '../src/errors.js';
import type { Frame } from '../src/types.js';
import { ByteSource, type ByteSourceOptions } from './bytes.js';
import type { FrameSeed, FrameSelection, FrameStartInfo, TrajectoryReadOptions } from './common.js';
import { PdbParser } from './pdb.js';
import { splitLines } from './lines.js';
import { XyzParser } from './xyz.js';

export { readTable, type TableData, type ReadTableOptions } from './table.js';
export { ByteSource, openBytes, type ByteSourceOptions } from './bytes.js';
export { frameWanted, type FrameSelection, type FrameSeed, type FrameStartInfo } from './common.js';

export type TrajectoryFormat = 'xyz' | 'pdb';

export interface OpenTrajectoryOptions {
  format?: TrajectoryFormat;
  strict?: boolean;
  warnings: string[];
  /** Raw read size in bytes (default 1 MiB); small values are for tests. */
  highWaterMark?: number;
  /** Stream read for path '-' (default process.stdin). */
  stdin?: Readable;
  /** Size of decompressed gzip output chunks (default 1 MiB); small values are for tests. */
  outputChunk?: number;
  /**
   * Frames to produce (default all). The others are skipped by counting lines or records
   * only (see TrajectoryReadOptions.select), and reading stops after the last frame below
   * `to`; the raw bytes after it are still read and hashed unless `hash` is false.
   * frames(select) may give it instead.
   */
  select?: FrameSelection;
  /**
   * Start reading at a frame's first byte, as recorded by readers/scan.ts indexFrames: byte
   * offset and line number of the frame's first line, its index and the parser state carried
   * into it. Plain (uncompressed) files only; needs `format`.
   */
  start?: { offset: number; line: number; index: number; seed: FrameSeed | null };
  /** Stop reading before this byte offset (plain files only; a frame boundary from indexFrames). */
  end?: number;
  /** Hash the raw bytes (default true). When false sha256() throws (the caller knows the digest). */
  hash?: boolean;
  /** Use the reading thread (see readers/bytes.ts; default 'auto'). */
  thread?: boolean | 'auto';
  /** The reading thread's script (tests). */
  threadScript?: string | URL;
  /** Called at the first line of every frame, read or skipped (readers/scan.ts). */
  onFrameStart?: (info: FrameStartInfo) => void;
  /** Called with the cell of every skipped frame (see TrajectoryReadOptions.onSkippedCell). */
  onSkippedCell?: (index: number, line: number, cell: Float64Array | null) => void;
}

export interface TrajectoryInput {
  path: string;
  format: TrajectoryFormat;
  /** The frames, in order (only the selected ones when a selection is given). Can be iterated once. */
  frames(select?: FrameSelection): AsyncGenerator<Frame>;
  /** Hex SHA-256 of the raw input bytes; available once frames() has ended (or was stopped). */
  sha256(): string;
  /** Raw (possibly compressed) bytes read so far; the file size once frames() has ended. */
  rawBytes(): number;
  /** Frames yielded so far. */
  framesRead(): number;
  /** Complete frames seen so far, produced or skipped (all of the file's once frames() ended). */
  framesComplete(): number;
  /** True when the input is gzip-compressed (known once frames() has started). */
  compressed(): boolean;
}

const PDB_RECORDS = new Set([
  'HEADER', 'OBSLTE', 'TITLE', 'SPLIT', 'CAVEAT', 'COMPND', 'SOURCE', 'KEYWDS', 'EXPDTA',
  'NUMMDL', 'MDLTYP', 'AUTHOR', 'REVDAT', 'SPRSDE', 'JRNL', 'REMARK', 'DBREF', 'SEQADV',
  'SEQRES', 'MODRES', 'HET', 'HETNAM', 'HETSYN', 'FORMUL', 'HELIX', 'SHEET', 'SSBOND', 'LINK',
  'CISPEP', 'SITE', 'CRYST1', 'ORIGX1', 'SCALE1', 'MTRIX1', 'MODEL', 'ATOM', 'ANISOU', 'TER',
  'HETATM', 'ENDMDL', 'CONECT', 'MASTER', 'END',
]);

/** Format from a file name, or null when the name does not tell. */
export function formatFromName(path: string): TrajectoryFormat | null {
  const base = path.replace(/\.gz$/i, '').toLowerCase();
  if (base.endsWith('.xyz') || base.endsWith('.extxyz')) return 'xyz';
  if (base.endsWith('.pdb') || base.endsWith('.ent')) return 'pdb';
  return null;
}

/** Format from the first non-blank line of the content, or null. */
export function formatFromContent(firstLine: string): TrajectoryFormat | null {
  if (/^\s*\+?\d+\s*$/.test(firstLine)) return 'xyz'; // the XYZ count may carry a '+' (readers/lines.ts uint)
  const rec = firstLine.slice(0, 6).trim().toUpperCase();
  if (PDB_RECORDS.has(rec) || /^(ATOM|HETATM)/.test(firstLine)) return 'pdb';
  return null;
}

/** Open a trajectory file ('-' = stdin). Reads the first chunk before returning. */
export async function openTrajectory(path: string, opts: OpenTrajectoryOptions): Promise<TrajectoryInput> {
  if (opts.start !== undefined && opts.format === undefined) throw new Error('openTrajectory: reading from a frame offset needs the format');
  const bopts: ByteSourceOptions = {};
  if (opts.highWaterMark !== undefined) bopts.highWaterMark = opts.highWaterMark;
  if (opts.stdin !== undefined) bopts.stdin = opts.stdin;
  if (opts.outputChunk !== undefined) bopts.outputChunk = opts.outputChunk;
  if (opts.start !== undefined) bopts.start = opts.start.offset;
  if (opts.end !== undefined) bopts.end = opts.end;
  if (opts.hash !== undefined) bopts.hash = opts.hash;
  if (opts.thread !== undefined) bopts.thread = opts.thread;
  if (opts.threadScript !== undefined) bopts.threadScript = opts.threadScript;
  const source = new ByteSource(path, bopts);
  const name = source.name;
  const it = source.chunks();
  const buffered: Uint8Array[] = [];
  let format: TrajectoryFormat | null = opts.format ?? formatFromName(path);
  // Read until the first non-blank line is complete (at least one chunk in any case).
  let text = '';
  let eof = false;
  let firstLine: string | null = null;
  const SNIFF_LIMIT = 1 << 16;
  for (;;) {
    const r = await it.next();
    if (r.done) {
      eof = true;
    } else {
      buffered.push(r.value);
      if (format === null && text.length < SNIFF_LIMIT) text += Buffer.from(r.value.subarray(0, SNIFF_LIMIT)).toString('latin1');
    }
    if (format !== null) break;
    const lines = text.split('\n');
    const complete = eof ? lines : lines.slice(0, -1);
    const found = complete.find((l) => l.trim().length > 0);
    if (found !== undefined) {
      firstLine = found;
      break;
    }
    if (eof || text.length >= SNIFF_LIMIT) break;
  }
  if (format === null) {
    if (eof && buffered.every((b) => b.length === 0)) {
      throw new InputError(name, null, null, 'the file is empty');
    }
    format = firstLine !== null ? formatFromContent(firstLine.replace(/\r$/, '')) : null;
    if (format === null) {
      throw new InputError(
        name,
        null,
        null,
        `cannot tell the trajectory format: the name has no .xyz/.extxyz/.pdb/.ent extension and the first non-blank line (${JSON.stringify((firstLine ?? '').slice(0, 40))}) is neither an XYZ atom count nor a PDB record; give the format explicitly`,
      );
    }
  }
  const fmt = format;
  let used = false;
  let count = 0;
  let parserRef: XyzParser | PdbParser | null = null;

  async function* replay(): AsyncGenerator<Uint8Array, void, undefined> {
    try {
      while (buffered.length > 0) yield buffered.shift()!;
      for (;;) {
        const r = await it.next();
        if (r.done) return;
        yield r.value;
      }
    } finally {
      await it.return(undefined);
    }
  }

  return {
    path,
    format: fmt,
    async *frames(selection?: FrameSelection): AsyncGenerator<Frame> {
      if (used) throw new Error(`${name}: frames() can be iterated only once`);
      used = true;
      const select = selection ?? opts.select;
      const ropts: TrajectoryReadOptions = { strict: opts.strict ?? false, warnings: opts.warnings };
      if (select !== undefined) ropts.select = select;
      if (opts.start !== undefined) {
        ropts.firstIndex = opts.start.index;
        ropts.seed = opts.start.seed;
      }
      if (opts.onFrameStart !== undefined) ropts.onFrameStart = opts.onFrameStart;
      if (opts.onSkippedCell !== undefined) ropts.onSkippedCell = opts.onSkippedCell;
      const parser = fmt === 'xyz' ? new XyzParser(name, ropts) : new PdbParser(name, ropts);
      parserRef = parser;
      const chunks = replay();
      const onError = (e: unknown): Promise<void> => (e instanceof InputError ? source.checkRest(chunks) : Promise.resolve());
      const from = opts.start !== undefined ? { lineNo: opts.start.line - 1, offset: opts.start.offset } : undefined;
      for await (const f of splitLines(chunks, parser, onError, { ...(from ? { from } : {}), release: (c) => source.release(c) })) {
        count++;
        yield f;
        // The next selected frame would be at or past `to`: stop reading (see `select`).
        if (select !== undefined && f.index + select.stride >= select.to) return;
      }
    },
    sha256: () => source.sha256(),
    rawBytes: () => source.rawBytes,
    framesRead: () => count,
    framesComplete: () => parserRef?.complete ?? 0,
    compressed: () => source.compressed,
  };
}
