/**
 * One builder for every analysis command: the command, its options and its action come from the
 * analysis descriptor (src/engine/analysis.ts) registered in analyses/index.ts. The action reads
 * the option texts into values, lets the analysis configure its pass, checks every output path
 * before reading, runs the pass through the engine (one read, threads, partial files, or site
 * batches under --max-memory), writes the analysis's files and prints its text or JSON.
 */
import { Option, type Command } from 'commander';
import type { AnyAnalysis, TrajectoryAnalysis } from '../engine/analysis.js';
import { flagName, readOptionValues, SHARED, type OptionSpec } from '../engine/options.js';
import { runAnalysis } from '../engine/run.js';
import { checkOutputFile, checkOutputPrefix, stageFileSet } from '../output.js';
import { addTrajectoryOptions, emit, readSpecOf, runPlanOf, type CommandContext, type TrajectoryOptions } from './common.js';
import type { Warnings } from '../types.js';

/** Accumulate a repeatable option into an array. */
function collect(value: string, previous: string[] = []): string[] {
  return [...previous, value];
}

/** The commander option of an option declared as data. */
export function commanderOption(spec: OptionSpec): Option {
  const o = new Option(spec.flag, spec.help);
  if (spec.type.kind === 'choice') o.choices(spec.type.choices as string[]);
  if (spec.type.kind === 'list') o.argParser(collect);
  if (spec.default !== undefined) o.default(spec.default);
  if (spec.required) o.makeOptionMandatory();
  return o;
}

/** Every option of an analysis's command: its own, and --max-memory when it stores sites. */
function optionsOf(d: AnyAnalysis): OptionSpec[] {
  return d.sites ? [...d.options, SHARED.maxMemory] : [...d.options];
}

/** Register the command of analysis `d` on the program. */
export function registerAnalysis(program: Command, cc: CommandContext, d: AnyAnalysis): void {
  const cmd = program.command(`${d.name} <file>`).description(d.summary);
  for (const spec of optionsOf(d)) cmd.addOption(commanderOption(spec));
  addTrajectoryOptions(cmd).action(async (file: string, raw: TrajectoryOptions & Record<string, unknown>) => {
    const warnings: Warnings = [];
    const values = readOptionValues(d.options, raw);
    const options = d.configure(values);
    // Before any reading: an output that cannot be written is found now, not after the run.
    const targets = outputTargets(d, values, file);
    const { result, run } = await runAnalysis(d, options, readSpecOf(file, raw), { ...runPlanOf(file, raw, cc), maxMemory: raw.maxMemory as string | undefined }, warnings);
    const files = (d.outputs ?? []).flatMap((out) => {
      const target = targets.get(out.option);
      return target === undefined ? [] : out.write(result, options).map(([suffix, text]) => [target + suffix, text] as [string, string]);
    });
    // All files of the command appear together when it succeeds (src/cli.ts commits them), or none.
    await stageFileSet(files, [file]);
    if (files.length > 0 && !raw.json && !raw.quiet) process.stderr.write(`sojourn: wrote ${files.map((f) => f[0]).join(', ')}\n`);
    emit(d.name, raw, [run.input], { ...raw }, result, warnings, () => d.render(file, result, options));
  });
}

/** The output paths the user gave, by option key, each checked before the input is read. */
function outputTargets(d: AnyAnalysis, values: Record<string, unknown>, file: string): Map<string, string> {
  const targets = new Map<string, string>();
  for (const out of d.outputs ?? []) {
    const spec = d.options.find((s) => s.key === out.option);
    const target = values[out.option];
    if (!spec || typeof target !== 'string') continue;
    if (spec.type.kind === 'file' && spec.type.output === 'prefix') checkOutputPrefix(target, flagName(spec));
    else checkOutputFile(target, [file], flagName(spec));
    targets.set(out.option, target);
  }
  return targets;
}
