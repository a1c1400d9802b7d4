/**
 * Worker-thread entry: runs one command on chunks of the frames and posts each chunk's partial
 * results back to the parent. The job arrives in the first message: every chunk's argument list
 * (the command with its --frames range) and read plan, and a shared counter from which this
 * worker, its siblings and the parent thread take the next chunk (Atomics.add), so that a faster
 * thread takes more chunks. 'done' is posted when the counter has passed the last chunk.
 */
import { parentPort } from 'node:worker_threads';
import { buildProgram } from './cli.js';
import { installWorkerCapture, PartialsHandedOver, replyWorkerError, setInvocation, setWorkerReadPlan, type WorkerReadPlan } from './commands/parallel.js';

interface Chunk {
  argv: string[];
  plan: WorkerReadPlan;
}

interface Job {
  chunks: Chunk[];
  counter: SharedArrayBuffer;
}

/** Run the command on one chunk; false when it failed (the failure has been posted). */
async function runChunk(chunk: Chunk, index: number): Promise<boolean> {
  setInvocation(chunk.argv);
  setWorkerReadPlan(chunk.plan);
  installWorkerCapture(index);
  try {
    await buildProgram().parseAsync(['node', 'sojourn', ...chunk.argv]);
    replyWorkerError(new Error('the command finished without reading frames'), index);
    return false;
  } catch (err) {
    if (err instanceof PartialsHandedOver) return true;
    replyWorkerError(err, index);
    return false;
  }
}

async function run(job: Job): Promise<void> {
  const counter = new Int32Array(job.counter);
  for (let c = Atomics.add(counter, 0, 1); c < job.chunks.length; c = Atomics.add(counter, 0, 1)) {
    if (!(await runChunk(job.chunks[c]!, c))) {
      Atomics.store(counter, 0, job.chunks.length);
      return;
    }
  }
  parentPort!.postMessage({ ok: true, done: true });
}

parentPort!.once('message', (job: Job) => void run(job));
