/**
 * The registry: every analysis and every pass a command, a worker thread or a merge of partial
 * files may build by name. Add one line per analysis.
 */
import type { Pass } from '../src/types.js';
import type { AnyAnalysis } from '../src/engine/analysis.js';
import { passFromRecipe, type PassFactory, type PassRecipe } from '../src/engine/recipes.js';
import { overviewPass } from './overview.js';
import { framewiseObservables } from './framewise.js';
import { rdfAnalysis } from './rdf-analysis.js';
import { reportRdfPass } from './rdf-auto.js';
import { shellAnalysis } from './shell.js';
import { vacfAnalysis } from './vacf-analysis.js';
import { msdAnalysis } from './msd-analysis.js';
import { diffusionAnalysis } from './diffusion-analysis.js';
import { conductivityAnalysis } from './conductivity-analysis.js';
import { storePass } from '../src/store/store.js';
import { checksPass } from '../src/checks.js';

/** The analyses that are commands of their own (src/cli builds one command per entry). */
export const ANALYSES: readonly AnyAnalysis[] = [rdfAnalysis, shellAnalysis, msdAnalysis, vacfAnalysis, diffusionAnalysis, conductivityAnalysis];

/** Pass factories by recipe kind: each analysis's own pass under its name, and shared passes. */
export const PASS_FACTORIES: Readonly<Record<string, PassFactory>> = {
  ...Object.fromEntries(ANALYSES.map((a) => [a.name, (o: unknown) => a.pass(o)])),
  overview: () => overviewPass,
  framewise: () => framewiseObservables,
  'rdf-auto': reportRdfPass,
  store: storePass,
  checks: () => checksPass,
};

/** Build the pass `kind` with `options` (plain data), carrying its recipe for threads and merges. */
export function makePass<P extends Pass = Pass>(kind: string, options: unknown = null): P & { readonly recipe: PassRecipe } {
  return passFromRecipe({ kind, options }, PASS_FACTORIES) as P & { readonly recipe: PassRecipe };
}

/** The analysis registered under `name`, or undefined. */
export function analysisNamed(name: string): AnyAnalysis | undefined {
  return ANALYSES.find((a) => a.name === name);
}
