#!/usr/bin/env node
/**
 * sojourn command-line entry point: the only place that parses argv. Exit status 0 on success,
 * 1 for bad input or an analysis that cannot give a defensible number, 2 for usage errors.
 */
import { realpathSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { isMainThread } from 'node:worker_threads';
import { Command, CommanderError } from 'commander';
import { COMMANDS } from './commands/index.js';
import { readingContext, type CommandContext } from './commands/common.js';
import { exitStatusFor, InputError, UsageError, AnalysisError } from './errors.js';
import { VERSION } from './version.js';
import { commitStagedFiles, discardStagedFiles, OutputWriteError } from './output.js';
import { printable } from './printable.js';

/**
 * Build the commander program with every registered command; `cc` says what the commands read
 * from (the trajectory, or partial-result files being merged) and the command line they record.
 */
export function buildProgram(cc: CommandContext = readingContext([])): Command {
  const program = new Command('sojourn')
    .description('Defensible numbers from existing molecular-dynamics output: structure, transport, convergence.')
    .version(VERSION, '-V, --version')
    .showHelpAfterError(false)
    .exitOverride();
  for (const register of COMMANDS) register(program, cc);
  program.commands.forEach((c) => c.exitOverride());
  return program;
}

/** Run the CLI on argv; returns the exit status. */
export async function main(argv: string[]): Promise<number> {
  const program = buildProgram(readingContext(argv.slice(2)));
  try {
    await program.parseAsync(argv);
    // Outputs staged during the run (--partial-out, CSV files) appear only now that the command
    // succeeded, all together or none.
    await commitStagedFiles();
    return 0;
  } catch (err) {
    discardStagedFiles();
    if (err instanceof CommanderError) {
      // --help and --version end here with exitCode 0; commander already printed them.
      return err.exitCode === 0 ? 0 : 2;
    }
    if (err instanceof InputError || err instanceof UsageError || err instanceof AnalysisError || err instanceof OutputWriteError) {
      process.stderr.write(`sojourn: ${err instanceof UsageError ? 'usage error' : 'error'}: ${printable(err.message)}\n`);
    } else {
      process.stderr.write(`sojourn: internal error: ${printable(err instanceof Error ? err.stack ?? err.message : String(err))}\n`);
    }
    return exitStatusFor(err);
  }
}

function invokedDirectly(): boolean {
  if (!isMainThread || !process.argv[1]) return false;
  try {
    return realpathSync(process.argv[1]) === fileURLToPath(import.meta.url);
  } catch {
    return false;
  }
}
if (invokedDirectly()) {
  main(process.argv).then((code) => {
    process.exitCode = code;
  });
}
