#!/usr/bin/env node
// Entry point of the `crystallog` command; the compiled, bundled CLI lives in dist/cli-bundle (built by `npm ci` via `prepare`).
// A reader that stops early (`crystallog analyze … | head`) closes the pipe: that ends the command quietly.
process.stdout.on('error', (err) => {
  if (err && err.code === 'EPIPE') process.exit(process.exitCode ?? 0);
  throw err;
});
import('../dist/cli-bundle/main.js').then((m) => m.main(process.argv)).catch((err) => {
  process.stderr.write(`crystallog: internal fault: ${err instanceof Error ? err.message : String(err)}\n`);
  process.exitCode = 1;
});
