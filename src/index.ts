/**
 * sojourn as a library: the supported API. Everything listed here keeps its meaning between
 * patch releases; anything imported from deeper paths may change.
 *
 * - Readers: open a trajectory (XYZ / extended XYZ / PDB, gzip or not) as an async iterator of
 *   frames, read a table of observables.
 * - Analyses: the registry of analyses (each a descriptor with its options, pass, text and
 *   files), `analyseFrames` to run one on frames held in memory, and the pass protocol.
 * - Engine: run passes over a file on threads (`execute`), one analysis with its memory bound
 *   (`runAnalysis`), partial-result files.
 * - Numbers: the Quantity type, unit constants and parser, and the transport relations.
 *
 * Every number a result holds carries its unit; simulated properties inherit the force field's
 * error and must be checked against experiment before use.
 */
export type { Frame, Topology, Residues, CellMatrix, Quantity, Pass, PassAccumulator, PassContext } from './types.js';
export { quantity } from './types.js';
export { openTrajectory, readTable, formatFromName, type TrajectoryInput, type OpenTrajectoryOptions, type TableData } from '../readers/index.js';
export { ANALYSES, PASS_FACTORIES, analysisNamed, makePass } from '../analyses/index.js';
export type { TrajectoryAnalysis, AnyAnalysis, OutputSpec, SiteAxis } from './engine/analysis.js';
export { defineAnalysis } from './engine/analysis.js';
export { readOptionValues, readOptionValue, type OptionSpec, type OptionValues } from './engine/options.js';
export { analyseFrames, memorySource, topologyOf, type MemoryRunOptions } from './engine/memory.js';
export { execute, loadPartialFiles, type ExecutePlan, type RunSource } from './engine/execute.js';
export { runAnalysis, type AnalysisPlan } from './engine/run.js';
export type { ReadSpec, TrajectoryRun } from './engine/read.js';
export { withRecipe, recipeOf, type PassRecipe } from './engine/recipes.js';
export { parseQuantity, BOLTZMANN, AVOGADRO, ELEMENTARY_CHARGE, FARADAY, GAS_CONSTANT } from './units.js';
export { orthorhombicCell, cellFromParameters } from './cell.js';
export { InputError, UsageError, AnalysisError } from './errors.js';
export { CAUTION } from './caution.js';
export { VERSION } from './version.js';
