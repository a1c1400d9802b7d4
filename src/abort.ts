/**
 * Clean-up of temporary output when the process is interrupted: functions registered here run
 * (synchronously) on SIGINT, SIGTERM and on exit while they are registered. After a signal the
 * process then ends the way the signal would have ended it (exit status 128 + n to the shell).
 * Used by staged outputs (src/output.ts stageFile, src/report/write.ts), so that an interrupted
 * run leaves neither a half-written nor a stray temporary file.
 */
const cleanups = new Set<() => void>();
let installed = false;

const SIGNAL_NUMBERS: Record<string, number> = { SIGINT: 2, SIGTERM: 15 };

function runAll(): void {
  for (const fn of [...cleanups]) {
    try {
      fn();
    } catch {
      /* best effort: one failing clean-up must not stop the others */
    }
  }
  cleanups.clear();
}

function onSignal(signal: NodeJS.Signals): void {
  runAll();
  uninstall();
  // Re-raise so the default action ends the process; when someone else still listens, the
  // default would not happen: exit with the conventional status instead.
  if (process.listenerCount(signal) === 0) process.kill(process.pid, signal);
  else process.exit(128 + (SIGNAL_NUMBERS[signal] ?? 1));
}

function onExit(): void {
  runAll();
}

function install(): void {
  if (installed) return;
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
  process.on('exit', onExit);
  installed = true;
}

function uninstall(): void {
  if (!installed) return;
  process.off('SIGINT', onSignal);
  process.off('SIGTERM', onSignal);
  process.off('exit', onExit);
  installed = false;
}

/**
 * Run `fn` (synchronous) if the process is interrupted or exits while it is registered.
 * Returns the function that unregisters it (call it once the output is committed or removed).
 */
export function cleanupOnAbort(fn: () => void): () => void {
  cleanups.add(fn);
  install();
  return () => {
    cleanups.delete(fn);
    if (cleanups.size === 0) uninstall();
  };
}
