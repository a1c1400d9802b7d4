/**
 * Pass recipes: a pass described as data — the name of its factory and the factory's options —
 * so that a worker thread, or a later `merge` of partial-result files, can build the very same
 * pass without the command line. Factories are registered by name in analyses/index.ts.
 */
import type { Pass } from '../types.js';

/** A pass as data: factory name and its (structured-clone and JSON safe) options. */
export interface PassRecipe {
  kind: string;
  options: unknown;
}

/** A pass factory: options (plain data) → pass. */
export type PassFactory = (options: any) => Pass;

/** A pass that remembers the recipe it was built from. */
export type RecipePass = Pass & { readonly recipe: PassRecipe };

/** Attach the recipe to a pass built by a registered factory. */
export function withRecipe<P extends Pass>(pass: P, recipe: PassRecipe): P & { readonly recipe: PassRecipe } {
  return Object.assign(Object.create(Object.getPrototypeOf(pass) as object) as object, pass, { recipe }) as P & { readonly recipe: PassRecipe };
}

/** The recipe of a pass, or null when it was not built from one (then it runs on one thread). */
export function recipeOf(pass: Pass): PassRecipe | null {
  return (pass as Partial<RecipePass>).recipe ?? null;
}

/** Build the pass of a recipe from the registered factories. */
export function passFromRecipe(recipe: PassRecipe, factories: Readonly<Record<string, PassFactory>>): Pass {
  const f = factories[recipe.kind];
  if (!f) throw new Error(`no pass factory named "${recipe.kind}"`);
  return withRecipe(f(recipe.options), recipe);
}
