/**
 * `sojourn merge PART...`: combine the partial results that separate jobs wrote with
 * --partial-out (each over a frame range of the same trajectory and the same command and
 * options) into the result of one run over all their frames.
 */
import type { Command } from 'commander';
import { loadPartialFiles, stripRangeOptions, useMergeSource } from './parallel.js';
import { buildProgram } from '../cli.js';

const OUTPUT_FLAGS = new Set(['--json', '--quiet']);

export function register(program: Command): void {
  program
    .command('merge <parts...>')
    .description('combine partial-result files (from --partial-out over frame ranges) into one result')
    .option('--json', 'print one JSON object (the result envelope) on stdout instead of tables')
    .option('--quiet', 'no warnings on stderr')
    .action(async (parts: string[], opts: { json?: boolean; quiet?: boolean }) => {
      const docs = await loadPartialFiles(parts);
      useMergeSource(docs);
      const args = stripRangeOptions(docs[0].argv).filter((a) => !OUTPUT_FLAGS.has(a));
      if (opts.json) args.push('--json');
      if (opts.quiet) args.push('--quiet');
      args.push('--threads', '1');
      await buildProgram().parseAsync(['node', 'sojourn', docs[0].command, ...args]);
    });
}
