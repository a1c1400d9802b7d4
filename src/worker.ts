/**
 * Worker-thread entry: runs one command on a share of the frames (the parent passes the full
 * argument list with --frames) and posts the passes' partial results back to the parent.
 */
import { workerData } from 'node:worker_threads';
import { buildProgram } from './cli.js';
import { installWorkerCapture, PartialsHandedOver, replyWorkerError, setInvocation, setWorkerReadPlan, type WorkerReadPlan } from './commands/parallel.js';

const data = workerData as { argv: string[]; plan?: WorkerReadPlan };
const argv = data.argv;
setInvocation(argv);
setWorkerReadPlan(data.plan ?? null);
installWorkerCapture();
try {
  await buildProgram().parseAsync(['node', 'sojourn', ...argv]);
  replyWorkerError(new Error('the command finished without reading frames'));
} catch (err) {
  if (!(err instanceof PartialsHandedOver)) replyWorkerError(err);
}
