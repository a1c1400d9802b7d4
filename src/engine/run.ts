/**
 * Running one analysis: through its pass on one read (on threads, or from partial-result files),
 * or — when it stores sites and the memory bound cannot hold them all — one read per batch of
 * sites, whose site sums add up before the result is finished (the descriptor's site axis).
 */
import type { TrajectoryAnalysis } from './analysis.js';
import { execute, type ExecutePlan } from './execute.js';
import { groupSitesInBatch, planSiteBatches, readStoreInBatches } from './batches.js';
import { withRecipe } from './recipes.js';
import { resolveLayout } from '../store/layout.js';
import type { ReadSpec, TrajectoryRun } from './read.js';
import type { Warnings } from '../types.js';
import { checkCellsAllow } from './cells.js';

/** How to run an analysis: the execution plan and the memory bound. */
export interface AnalysisPlan extends ExecutePlan {
  /** --max-memory as given, e.g. "2GB"; undefined for no bound. */
  maxMemory?: string;
}

/** Run analysis `d` with pass options `o` on the trajectory `spec`; returns its typed result and the run. */
export async function runAnalysis<O, P, R>(
  d: TrajectoryAnalysis<O, P, R>,
  o: O,
  spec: ReadSpec,
  plan: AnalysisPlan,
  warnings: Warnings,
): Promise<{ result: R; run: TrajectoryRun }> {
  const reach = plan.source.kind === 'read' ? d.reach?.(o) ?? null : null;
  if (reach) await checkCellsAllow(spec, reach.distance, reach.flag);
  const axis = d.sites;
  if (axis) {
    const req = { spec, maxMemory: plan.maxMemory, source: plan.source, partialOut: plan.partialOut !== undefined };
    const batches = await planSiteBatches(
      req,
      axis.layout(o),
      (first) => axis.bytesPerSiteFrame(o, first).all,
      (first) => axis.bytesPerSiteFrame(o, first).batch,
      axis.bytesPerFrame,
    );
    if (batches) {
      let sums: unknown = null;
      const b = await readStoreInBatches(req, batches, (_batch, i) => axis.store(o, i === 0), warnings, (store, batch, run) => {
        const layout = resolveLayout(axis.layout(o), run.ctx.topology);
        const part = axis.sums(store, layout, groupSitesInBatch(layout, batch), run.ctx, o);
        sums = sums === null ? part : axis.add(sums, part);
      });
      const record = { info: b.info, reads: b.reads, bytesHeld: b.bytesHeld, note: b.note };
      return { result: axis.finish(sums, record, resolveLayout(axis.layout(o), b.ctx.topology), b.ctx, o), run: b.first };
    }
  }
  const pass = withRecipe(d.pass(o), { kind: d.name, options: o });
  const run = await execute([pass], spec, plan, warnings);
  return { result: pass.finish(run.partials[0] as P, run.ctx), run };
}
