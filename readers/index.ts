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
import { ByteSource } from './bytes.js';
import { PdbParser } from './pdb.js';
import { splitLines } from './lines.js';
import { XyzParser } from './xyz.js';

export { readTable, type TableData, type ReadTableOptions } from './table.js';
export { ByteSource, openBytes, type ByteSourceOptions } from './bytes.js';

export type TrajectoryFormat = 'xyz' | 'pdb';

export interface OpenTrajectoryOptions {
  format?: TrajectoryFormat;
  strict?: boolean;
  warnings: string[];
  /** Raw read size in bytes (default 1 MiB); small values are for tests. */
  highWaterMark?: number;
  /** Stream read for path '-' (default process.stdin). */
  stdin?: Readable;
}

export interface TrajectoryInput {
  path: string;
  format: TrajectoryFormat;
  /** The frames, in order. Can be iterated once. */
  frames(): AsyncGenerator<Frame>;
  /** Hex SHA-256 of the raw input bytes; available once frames() has ended (or was stopped). */
  sha256(): string;
  /** Raw (possibly compressed) bytes read so far; the file size once frames() has ended. */
  rawBytes(): number;
  /** Frames yielded so far. */
  framesRead(): number;
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
  if (/^\s*\d+\s*$/.test(firstLine)) return 'xyz';
  const rec = firstLine.slice(0, 6).trim().toUpperCase();
  if (PDB_RECORDS.has(rec) || /^(ATOM|HETATM)/.test(firstLine)) return 'pdb';
  return null;
}

/** Open a trajectory file ('-' = stdin). Reads the first chunk before returning. */
export async function openTrajectory(path: string, opts: OpenTrajectoryOptions): Promise<TrajectoryInput> {
  const source = new ByteSource(path, {
    ...(opts.highWaterMark !== undefined ? { highWaterMark: opts.highWaterMark } : {}),
    ...(opts.stdin !== undefined ? { stdin: opts.stdin } : {}),
  });
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
    async *frames(): AsyncGenerator<Frame> {
      if (used) throw new Error(`${name}: frames() can be iterated only once`);
      used = true;
      const ropts = { strict: opts.strict ?? false, warnings: opts.warnings };
      const parser = fmt === 'xyz' ? new XyzParser(name, ropts) : new PdbParser(name, ropts);
      const chunks = replay();
      const onError = (e: unknown): Promise<void> => (e instanceof InputError ? source.checkRest(chunks) : Promise.resolve());
      for await (const f of splitLines(chunks, parser, onError)) {
        count++;
        yield f;
      }
    },
    sha256: () => source.sha256(),
    rawBytes: () => source.rawBytes,
    framesRead: () => count,
  };
}
