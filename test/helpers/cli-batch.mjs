/**
 * Run many command lines through the built CLI's main() in one Node process (a child of the
 * test), so that dozens of error cases do not each pay Node's and the CLI's start-up.
 *
 * Input on stdin: JSON [{ args: string[], cwd: string }]. Output on stdout: JSON
 * [{ status, stdout, stderr }], one per run, with what that run wrote to process.stdout and
 * process.stderr. `status` is what main() returned (the process exit status the CLI would set).
 */
import { writeSync } from 'node:fs';
import { main } from '../../dist/src/cli.js';

let input = '';
for await (const chunk of process.stdin) input += chunk;
const runs = JSON.parse(input);
const results = [];
const realOut = process.stdout.write;
const realErr = process.stderr.write;
for (const run of runs) {
  process.chdir(run.cwd);
  let stdout = '';
  let stderr = '';
  process.stdout.write = (chunk) => ((stdout += String(chunk)), true);
  process.stderr.write = (chunk) => ((stderr += String(chunk)), true);
  let status;
  try {
    status = await main(['node', 'sojourn', ...run.args]);
  } catch (e) {
    status = `main() threw: ${e && e.stack ? e.stack : String(e)}`;
  } finally {
    process.stdout.write = realOut;
    process.stderr.write = realErr;
  }
  results.push({ status, stdout, stderr });
}
writeSync(1, JSON.stringify(results));
