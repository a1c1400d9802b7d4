/**
 * A quick first scan that counts the frames of a trajectory without parsing coordinates, so
 * that work can be split among worker threads by frame index.
 * XYZ: an atom-count line N, then N + 1 more lines, repeated. PDB: ENDMDL records (or END
 * records when the file has no MODEL records; one frame when it has neither).
 */
import { openBytes } from './bytes.js';
import { splitLines, type LineHandler } from './lines.js';

function isPdbName(name: string): boolean {
  return /\.(pdb|ent)(\.gz)?$/i.test(name);
}

/** Count complete frames in a file (format from the option, the name, or the first line). */
export async function countFrames(path: string, format?: 'xyz' | 'pdb'): Promise<number> {
  const src = openBytes(path);
  let kind: 'xyz' | 'pdb' | null = format ?? (isPdbName(path) ? 'pdb' : /\.(xyz|extxyz)(\.gz)?$/i.test(path) ? 'xyz' : null);
  let frames = 0;
  // XYZ state: lines still to skip in the current frame (-1: expecting a count line).
  let remaining = -1;
  let models = 0, ends = 0, endmdl = 0, atoms = 0;
  const handler: LineHandler<null> = {
    line(buf, start, end) {
      if (kind === null) {
        let s = start;
        while (s < end && (buf[s] === 32 || buf[s] === 9)) s++;
        if (s === end) return null;
        kind = buf[s] >= 48 && buf[s] <= 57 ? 'xyz' : 'pdb';
      }
      if (kind === 'xyz') {
        if (remaining < 0) {
          let n = 0, s = start, digits = 0;
          while (s < end && (buf[s] === 32 || buf[s] === 9)) s++;
          while (s < end && buf[s] >= 48 && buf[s] <= 57) { n = n * 10 + buf[s] - 48; s++; digits++; }
          if (digits === 0) return null; // blank or junk between frames: the real reader reports it
          remaining = n + 1;
        } else if (--remaining === 0) {
          frames++;
          remaining = -1;
        }
        return null;
      }
      const w = end - start;
      if (w >= 5 && buf[start] === 77 && buf[start + 1] === 79 && buf[start + 2] === 68 && buf[start + 3] === 69 && buf[start + 4] === 76) models++;
      else if (w >= 6 && buf[start] === 69 && buf[start + 1] === 78 && buf[start + 2] === 68 && buf[start + 3] === 77 && buf[start + 4] === 68 && buf[start + 5] === 76) endmdl++;
      else if (w >= 3 && buf[start] === 69 && buf[start + 1] === 78 && buf[start + 2] === 68 && (w === 3 || buf[start + 3] === 32 || buf[start + 3] === 13)) ends++;
      else if (w >= 4 && ((buf[start] === 65 && buf[start + 1] === 84 && buf[start + 2] === 79 && buf[start + 3] === 77) || (buf[start] === 72 && buf[start + 1] === 69 && buf[start + 2] === 84 && buf[start + 3] === 65))) atoms++;
      return null;
    },
    finish() {
      return null;
    },
  };
  for await (const _ of splitLines(src.chunks()[Symbol.asyncIterator](), handler)) void _;
  if (kind === 'pdb') return models > 0 ? endmdl : ends > 0 ? ends : atoms > 0 ? 1 : 0;
  return frames;
}
