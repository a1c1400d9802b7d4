/**
 * `sojourn merge PART...`: combine the partial results that separate jobs wrote with
 * --partial-out (each over a frame range of the same trajectory and the same command and
 * options) into the result of one run over all their frames. The recorded command is run with
 * its recorded options, its passes merging the files' partials instead of reading frames.
 */
import type { Command } from 'commander';
import type { CommandContext } from './common.js';
import { loadPartialFiles } from '../engine/execute.js';
import { buildProgram } from '../cli.js';

/** Options that are the merge's own or that describe the jobs' ranges and threads. */
const DROPPED = new Set(['--json', '--quiet', '--frames', '--threads', '--partial-out']);
const WITH_VALUE = new Set(['--frames', '--threads', '--partial-out']);

/** The recorded arguments without the range, thread and output-mode options. */
function recordedArguments(argv: string[]): string[] {
  const out: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    const eq = a.indexOf('=');
    const key = eq > 0 ? a.slice(0, eq) : a;
    if (DROPPED.has(key)) {
      if (eq < 0 && WITH_VALUE.has(key)) i++;
      continue;
    }
    out.push(a);
  }
  return out;
}

export function register(program: Command, _cc: CommandContext): void {
  program
    .command('merge <parts...>')
    .description('combine partial-result files (from --partial-out over frame ranges) into one result')
    .option('--json', 'print one JSON object (the result envelope) on stdout instead of tables')
    .option('--quiet', 'no warnings on stderr')
    .action(async (parts: string[], opts: { json?: boolean; quiet?: boolean }) => {
      const docs = await loadPartialFiles(parts);
      const first = docs[0]!;
      const args = recordedArguments(first.argv);
      if (opts.json) args.push('--json');
      if (opts.quiet) args.push('--quiet');
      args.push('--threads', '1');
      const cc: CommandContext = { args: [first.command, ...args], source: { kind: 'partials', docs } };
      await buildProgram(cc).parseAsync(['node', 'sojourn', first.command, ...args]);
    });
}
