import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);

function readVersion(): string {
  // Works from src/ (tests) and from dist/src/ (built CLI).
  for (const p of ['../package.json', '../../package.json']) {
    try {
      const pkg = require(p) as { name?: string; version?: string };
      if (pkg.name === 'sojourn' && pkg.version) return pkg.version;
    } catch {
      /* try the next location */
    }
  }
  return '0.0.0';
}

/** The package version, read from package.json. */
export const VERSION: string = readVersion();
