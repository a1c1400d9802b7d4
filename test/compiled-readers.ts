/**
 * Test helper (not a test file): the readers compiled to JavaScript in a temporary folder.
 *
 * The reading thread of readers/bytes.ts runs compiled JavaScript (a worker thread cannot load
 * TypeScript), so tests of it transpile the current sources — readers/ and every module they
 * import — with the TypeScript compiler's transpileModule (no type checking: `tsc` does that)
 * and import the result. No build output (dist/) is involved, so the tests always see the
 * sources as they are.
 */
import { mkdirSync, mkdtempSync, readFileSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import ts from 'typescript';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..');

export interface CompiledReaders {
  /** The temporary folder (readers/index.js etc. inside). */
  dir: string;
  /** The compiled readers/index.js module. */
  index: typeof import('../readers/index.js');
  /** The compiled readers/scan.js module. */
  scan: typeof import('../readers/scan.js');
  /** The compiled src/errors.js module (its InputError class is the one the copy throws). */
  errors: typeof import('../src/errors.js');
  cleanup(): void;
}

/** Transpile readers/ and its imports into a new temporary folder and import them. */
export async function compiledReaders(): Promise<CompiledReaders> {
  const dir = mkdtempSync(join(tmpdir(), 'sojourn-compiled-'));
  const todo = ['readers/index.ts', 'readers/scan.ts', 'readers/read-thread.ts', 'src/errors.ts'];
  const seen = new Set<string>();
  while (todo.length > 0) {
    const rel = todo.pop()!;
    if (seen.has(rel)) continue;
    seen.add(rel);
    const source = readFileSync(join(root, rel), 'utf8');
    for (const m of source.matchAll(/(?:from|import)\s*\(?\s*'(\.{1,2}\/[^']+)\.js'/g)) {
      todo.push(relative(root, resolve(root, dirname(rel), `${m[1]}.ts`)));
    }
    const out = ts.transpileModule(source, {
      compilerOptions: { module: ts.ModuleKind.ESNext, target: ts.ScriptTarget.ES2022, verbatimModuleSyntax: false },
      fileName: rel,
    }).outputText;
    const target = join(dir, rel.replace(/\.ts$/, '.js'));
    mkdirSync(dirname(target), { recursive: true });
    writeFileSync(target, out);
  }
  writeFileSync(join(dir, 'package.json'), '{"type":"module"}\n');
  symlinkSync(join(root, 'node_modules'), join(dir, 'node_modules'), 'dir');
  const load = (rel: string) => import(/* @vite-ignore */ pathToFileURL(join(dir, rel)).href);
  return {
    dir,
    index: await load('readers/index.js'),
    scan: await load('readers/scan.js'),
    errors: await load('src/errors.js'),
    cleanup: () => rmSync(dir, { recursive: true, force: true }),
  };
}
