/**
 * Worker-thread entry: runs one command on a share of the frames (the parent passes the full
 * argument list with --frames) and posts the passes' partial results back to the parent.
 */
import { workerData } from 'node:worker_threads';
import { buildProgram } from './cli.js';
import { installWorkerCapture, PartialsHandedOver, replyWorkerError, setInvocation } from './commands/parallel.js';

const argv = (workerData as { argv: string[] }).argv;
setInvocation(argv);
installWorkerCapture();
try {
  await buildProgram().parseAsync(['node', 'sojourn', ...argv]);
  replyWorkerError(new Error('the command finished without reading frames'));
} catch (err) {
  if (!(err instanceof PartialsHandedOver)) replyWorkerError(err);
}
