#!/usr/bin/env node
// Bundles the compiled command line (dist/src/cli → dist/cli-bundle/) with esbuild: one module per
// command, loaded when that command runs, and shared chunks, so that a command resolves and compiles a
// handful of files instead of about 150 (about 0.15 s of a `match`). Packages stay in node_modules.
// The batch worker is bundled beside them (batch.ts finds it next to its own chunk).
// modules.json lists which compiled modules went into each output (the start-up test reads it).
import { build } from 'esbuild';
import { rm, writeFile } from 'node:fs/promises';
import { dirname, join, relative } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const compiled = join(root, 'dist', 'src');
const out = join(root, 'dist', 'cli-bundle');

await rm(out, { recursive: true, force: true });
const result = await build({
  entryPoints: { main: join(compiled, 'cli', 'main.js'), 'batch-worker': join(compiled, 'node', 'batch-worker.js') },
  outdir: out,
  bundle: true,
  splitting: true,
  format: 'esm',
  platform: 'node',
  target: 'node20',
  packages: 'external',
  chunkNames: '[name]-[hash]',
  sourcemap: 'linked',
  metafile: true,
  logLevel: 'warning',
});
const modules = {};
for (const [file, output] of Object.entries(result.metafile.outputs)) {
  if (file.endsWith('.map')) continue;
  modules[relative(out, join(root, file))] = Object.keys(output.inputs).map((input) => relative(root, join(root, input)));
}
await writeFile(join(out, 'modules.json'), JSON.stringify(modules, null, 1) + '\n');
