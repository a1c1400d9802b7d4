/**
 * Error classes that decide the process exit status.
 * - InputError: the input file is malformed or unusable → exit 1, message names file:line:column.
 * - UsageError: the command line is wrong → exit 2.
 * - AnalysisError: the data are valid but an analysis cannot give a defensible number → exit 1.
 */

/** Bad input data. `line` and `column` are 1-based; either may be omitted when unknown. */
export class InputError extends Error {
  readonly file: string;
  readonly line: number | null;
  readonly column: number | null;
  constructor(file: string, line: number | null, column: number | null, message: string) {
    const where = [file, line ?? undefined, line != null ? column ?? undefined : undefined]
      .filter((x) => x !== undefined)
      .join(':');
    super(`${where}: ${message}`);
    this.name = 'InputError';
    this.file = file;
    this.line = line;
    this.column = column;
  }
}

/** Wrong or inconsistent command-line usage. */
export class UsageError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'UsageError';
  }
}

/** Valid input, but the analysis cannot produce a defensible result (e.g. too few frames). */
export class AnalysisError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'AnalysisError';
  }
}

/** Exit status for an error: 2 for usage errors, 1 for everything else. */
export function exitStatusFor(err: unknown): number {
  return err instanceof UsageError ? 2 : 1;
}
