/**
 * g(r) for the pairs a report shows: the pairs are chosen from the labels and charges when the
 * first frame arrives (src/report/choose.ts `chooseRdfPairs`), so the real pass
 * (analyses/rdf.ts) is built inside this one. Options are plain data (a pass recipe).
 */
import type { Pass, PassContext } from '../src/types.js';
import { rdfPass, mergeRdfPartials, type RdfPartial, type RdfSpec } from './rdf.js';
import { chargesFor, type ChargeRule } from '../src/store/charges.js';
import { chooseRdfPairs, type RdfPairChoice } from '../src/report/choose.js';

/** Result of the report's g(r) pass: the g(r) result and the pairs, or why it was not run. */
export type ReportRdf = { result: ReturnType<ReturnType<typeof rdfPass>['finish']>; pairs: RdfPairChoice[]; rule: string } | { skipped: string };

/**
 * The g(r) pass of the report. Its pairs depend on the labels, which are known only when the
 * first frame arrives, so the real pass (analyses/rdf.ts) is built in `create` and again in
 * `finish` from the same topology by the same rule (chooseRdfPairs, deterministic). Without a
 * periodic cell the pass records why it was not run.
 */
export function reportRdfPass(opts: { spec: Omit<RdfSpec, 'pairs'>; rules: ChargeRule[] | null }): Pass<RdfPartial | { skipped: string }, ReportRdf> {
  const { spec, rules } = opts;
  const choose = (ctx: PassContext) => chooseRdfPairs(ctx.topology, chargesFor(ctx.topology, rules));
  const inner = (choice: { pairs: RdfPairChoice[] }) => rdfPass({ ...spec, pairs: choice.pairs.map((p) => ({ a: p.a, b: p.b })) });
  return {
    name: 'rdf',
    create(ctx) {
      if (!ctx.firstCell) {
        const skipped = { skipped: 'the trajectory has no periodic cell: give it with --box a,b,c' };
        return { frame() {}, partial: () => skipped };
      }
      return inner(choose(ctx)).create(ctx);
    },
    merge(a, b) {
      if ('skipped' in a) return a;
      if ('skipped' in b) return b;
      return mergeRdfPartials(a, b);
    },
    finish(p, ctx) {
      if ('skipped' in p) return p;
      const choice = choose(ctx);
      return { result: inner(choice).finish(p, ctx), ...choice };
    },
  };
}

