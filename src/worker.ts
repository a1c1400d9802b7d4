/**
 * Worker-thread entry: reads chunks of a trajectory through passes built from their recipes and
 * posts each chunk's partial results back to the parent. The job arrives in the first message
 * (src/engine/threads.ts `WorkerJob`): the read description, the pass recipes, every chunk's frame
 * range and byte plan, and a shared counter from which this worker, its siblings and the parent
 * thread take the next chunk (Atomics.add), so that a faster thread takes more chunks. 'done' is
 * posted when the counter has passed the last chunk. Nothing here knows the command line.
 */
import { parentPort } from 'node:worker_threads';
import { readShare } from './engine/read.js';
import { replyOf, replyWorkerError, type WorkerJob } from './engine/threads.js';
import { passFromRecipe } from './engine/recipes.js';
import { PASS_FACTORIES } from '../analyses/index.js';

async function run(job: WorkerJob): Promise<void> {
  const counter = new Int32Array(job.counter);
  for (let c = Atomics.add(counter, 0, 1); c < job.chunks.length; c = Atomics.add(counter, 0, 1)) {
    const chunk = job.chunks[c]!;
    try {
      const passes = job.recipes.map((r) => passFromRecipe(r, PASS_FACTORIES));
      const out = await readShare(job.read, passes, [], { range: chunk.range, plan: chunk.plan, share: true, ...(chunk.lead !== undefined ? { lead: chunk.lead } : {}) });
      parentPort!.postMessage({ ...replyOf(out), chunk: c });
    } catch (err) {
      replyWorkerError(err, c);
      Atomics.store(counter, 0, job.chunks.length);
      return;
    }
  }
  parentPort!.postMessage({ ok: true, done: true });
}

parentPort!.once('message', (job: WorkerJob) => void run(job));
