/**
 * Units of table columns: what the file says (a units line, the time column's name), what the
 * user gave, and the input record that states them. A unit given on the command line that
 * contradicts the file is a usage error naming both; one missing everywhere is said to be assumed.
 */
import { UsageError } from './errors.js';
import { UNIT_FACTORS } from './units.js';
import type { TableData } from '../readers/table.js';
import type { FileUnit, InputRecord } from './output.js';

/**
 * The unit of column `name`: `given` (an option, e.g. --energy-units) or the file's units line;
 * both, when they differ, are a usage error naming `option` and the file. '' when neither says.
 */
export function columnUnit(table: TableData, name: string, given: string | undefined, option: string): string {
  const inFile = table.units.get(name);
  if (given !== undefined && inFile !== undefined && given !== inFile) {
    throw new UsageError(`${option} gives '${name}' in ${given}, but ${table.path} says ${inFile}`);
  }
  return given ?? inFile ?? '';
}

/**
 * The pressure unit of the columns `names`: --pressure-unit when given, else the unit the units
 * line gives them (one unit for all), else bar, assumed. A unit the file gives that is not a
 * pressure unit, columns in different units, or a --pressure-unit that contradicts the file are
 * usage errors naming the file.
 */
export function pressureUnitOf(table: TableData, names: string[], given: string | undefined): FileUnit {
  const inFile = [...new Set(names.map((n) => table.units.get(n)).filter((u): u is string => u !== undefined))];
  if (inFile.length > 1) throw new UsageError(`${table.path}: the pressure columns ${names.join(', ')} are in different units (${inFile.join(', ')}); sojourn reads them in one unit`);
  const unit = inFile[0];
  if (unit !== undefined && !(unit in UNIT_FACTORS.pressure)) {
    throw new UsageError(`${table.path}: the pressure columns are in '${unit}', not a pressure unit sojourn knows (${Object.keys(UNIT_FACTORS.pressure).join(', ')})`);
  }
  if (given !== undefined && unit !== undefined && given !== unit) {
    throw new UsageError(`--pressure-unit ${given} contradicts ${table.path}, whose units line gives ${unit}`);
  }
  if (given !== undefined) return { unit: given, from: '--pressure-unit' };
  if (unit !== undefined) return { unit, from: 'file' };
  return { unit: 'bar', from: 'assumed' };
}

/** The input record of a table: path, digest, size, rows, and the units of its time column and of the columns the file names. */
export function tableInput(table: TableData, extra: Record<string, FileUnit> = {}): InputRecord {
  const fileUnits: Record<string, FileUnit> = {};
  if (table.timeUnit) fileUnits.time = table.timeUnit;
  for (const [name, unit] of table.units) if (name !== tableTimeName(table)) fileUnits[name] = { unit, from: 'file' };
  Object.assign(fileUnits, extra);
  return { path: table.path, sha256: table.sha256, bytes: table.bytes, format: 'table', frames: table.rows, ...(Object.keys(fileUnits).length > 0 ? { fileUnits } : {}) };
}

/** The name of the time column of a table, or null. */
function tableTimeName(table: TableData): string | null {
  if (!table.time) return null;
  for (const [name, values] of table.columns) if (values === table.time) return name;
  return null;
}
