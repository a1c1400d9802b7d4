/**
 * Worker-thread entry: runs one command on a share of the frames and posts the passes' partial
 * results back to the parent. The job (the full argument list with --frames, and the read plan)
 * arrives in workerData, or — when the parent starts its workers before it knows the shares —
 * in the first message.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { buildProgram } from './cli.js';
import { installWorkerCapture, PartialsHandedOver, replyWorkerError, setInvocation, setWorkerReadPlan, type WorkerReadPlan } from './commands/parallel.js';

interface Job {
  argv: string[];
  plan?: WorkerReadPlan;
}

async function run(job: Job): Promise<void> {
  setInvocation(job.argv);
  setWorkerReadPlan(job.plan ?? null);
  installWorkerCapture();
  try {
    await buildProgram().parseAsync(['node', 'sojourn', ...job.argv]);
    replyWorkerError(new Error('the command finished without reading frames'));
  } catch (err) {
    if (!(err instanceof PartialsHandedOver)) replyWorkerError(err);
  }
}

const data = workerData as Job | null;
if (data && data.argv) await run(data);
else parentPort!.once('message', (job: Job) => void run(job));
