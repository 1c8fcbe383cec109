#!/usr/bin/env node
// Entry point of the `crystallog` command; the compiled CLI lives in dist/ (built by `npm ci` via `prepare`).
import('../dist/src/cli/common/quiet-pipe.js')
  .then((pipe) => {
    pipe.endQuietlyOnClosedStdout();
    return import('../dist/src/cli/main.js');
  })
  .then((m) => m.main(process.argv))
  .catch((err) => {
    process.stderr.write(`crystallog: internal fault: ${err instanceof Error ? err.message : String(err)}\n`);
    process.exitCode = 1;
  });
