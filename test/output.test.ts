import { describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { formatValue, formatTable, toJson, writeFileAtomic, refuseOverwritingInputs, toCsv, stageFile, commitStagedFiles, discardStagedFiles } from '../src/output.js';
import { UsageError } from '../src/errors.js';
import { spawnSync } from 'node:child_process';
import { pathToFileURL } from 'node:url';
import { CLI, ensureBuilt } from './helpers/cli.js';

describe('formatting values with uncertainties', () => {
  it('rounds the uncertainty to two significant figures and the value to match', () => {
    // Convention: JCGM 100:2008 (GUM) §7.2.6 — uncertainty to at most two significant digits.
    expect(formatValue(2.34567, 0.01234)).toBe('2.346 ± 0.012');
    expect(formatValue(1234.5, 56)).toBe('1235 ± 56');
    expect(formatValue(2.1e-9, 0.13e-9)).toBe('(2.10 ± 0.13)e-9');
    expect(formatValue(3.0, null)).toBe('3');
  });
  it('aligns tables and writes CSV', () => {
    const t = formatTable(['a', 'value'], [['x', '1'], ['longer', '22']]).split('\n');
    expect(t[0]).toBe('a       value');
    expect(t[3]).toBe('longer     22');
    expect(toCsv(['r', 'g'], [[1, 2], [0.5, NaN]])).toBe('r,g\n1,0.5\n2,\n');
  });
  it('serialises typed arrays and non-finite numbers', () => {
    expect(toJson({ a: Float64Array.from([1, 2]), b: NaN }, 0)).toBe('{"a":[1,2],"b":null}');
  });
});

describe('atomic writes', () => {
  it('leaves only the finished file and refuses to overwrite an input', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'sojourn-out-'));
    const target = join(dir, 'x.json');
    await writeFileAtomic(target, 'first');
    await writeFileAtomic(target, 'second');
    expect(readFileSync(target, 'utf8')).toBe('second');
    expect(readdirSync(dir)).toEqual(['x.json']);
    const input = join(dir, 'in.xyz');
    writeFileSync(input, '1\n\nH 0 0 0\n');
    expect(() => refuseOverwritingInputs(input, [input])).toThrow(UsageError);
    expect(() => refuseOverwritingInputs(join(dir, 'other'), [input])).not.toThrow();
  });
});

describe('staged outputs', () => {
  it('a staged file appears only on commit, whole; a discarded one leaves nothing', async () => {
    // sojourn's contract: no output from a failing command, no temporary files left behind.
    const dir = mkdtempSync(join(tmpdir(), 'sojourn-stage-'));
    const kept = join(dir, 'kept.json');
    const dropped = join(dir, 'dropped.json');
    writeFileSync(dropped, 'previous');
    await stageFile(kept, '{"a":1}');
    expect(readdirSync(dir).filter((f) => !f.startsWith('.'))).toEqual(['dropped.json']);
    expect(readdirSync(dir).filter((f) => f.startsWith('.kept.json.tmp-'))).toHaveLength(1);
    await commitStagedFiles();
    expect(readFileSync(kept, 'utf8')).toBe('{"a":1}');
    await stageFile(dropped, 'new content');
    discardStagedFiles();
    expect(readFileSync(dropped, 'utf8')).toBe('previous');
    expect(readdirSync(dir).sort()).toEqual(['dropped.json', 'kept.json']);
  });
});

describe('staged outputs and interrupts', () => {
  it('SIGINT while a large staged file is being written leaves no file behind and exits 130', () => {
    // A shell reports death by signal n as 128 + n (SIGINT = 2; POSIX.1-2017, Shell Command
    // Language §2.8.2). Whether the signal lands during the write or after it, the temporary
    // file must be gone: the clean-up knows its name before writing starts.
    ensureBuilt();
    const dir = mkdtempSync(join(tmpdir(), 'sojourn-sigint-'));
    const output = pathToFileURL(join(CLI, '..', 'output.js')).href;
    const script = `import { stageFile } from ${JSON.stringify(output)};
setTimeout(() => process.kill(process.pid, 'SIGINT'), 30);
await stageFile(${JSON.stringify(join(dir, 'out.json'))}, Buffer.alloc(200e6));
await new Promise((r) => setTimeout(r, 5000));`;
    const r = spawnSync(process.execPath, ['--input-type=module', '-e', script], { encoding: 'utf8' });
    expect(r.status === 130 || r.signal === 'SIGINT', `status ${r.status} signal ${r.signal} ${r.stderr}`).toBe(true);
    expect(readdirSync(dir)).toEqual([]);
  });
});
