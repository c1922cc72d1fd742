#!/usr/bin/env node
import { main } from './main.js';
import { processIo } from './io.js';
import { removeTemporaryFiles } from './write-atomic.js';

/**
 * SIGINT (Ctrl-C, a cancelled CI job) and SIGTERM (a CI timeout): remove the temporary
 * files of reports being written, say so, and exit 128 + the signal number, as shells do
 * (130, 143). A report already at its target is complete (outputs are renamed into place
 * whole); one that was not yet renamed is never there.
 */
const SIGNAL_EXIT_CODES = { SIGINT: 130, SIGTERM: 143, SIGHUP: 129 } as const;
let stopping = false;
for (const [signal, code] of Object.entries(SIGNAL_EXIT_CODES)) {
  // `on`, not `once`: a second signal while exiting (CI runners often send two) must not
  // fall back to the default action and kill the process before the files are removed
  process.on(signal, () => {
    if (stopping) return;
    stopping = true;
    removeTemporaryFiles();
    process.stderr.write(`vibgate: stopped by ${signal} before the run finished; the gate did not pass\n`);
    process.exit(code);
  });
}
// `vibgate screen ... | head`: a reader that stops reading is not a crash.
process.stdout.on('error', (err: NodeJS.ErrnoException) => {
  if (err.code !== 'EPIPE') throw err;
});

process.exitCode = await main(process.argv.slice(2), processIo());
