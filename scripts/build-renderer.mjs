#!/usr/bin/env node
// Bundles the screens (renderer/ → dist/renderer/) and the desktop shell (electron/ → dist/electron/:
// main as an ES module, preload as CommonJS, which a sandboxed preload requires) with esbuild.
import { build } from 'esbuild';
import { copyFile, mkdir } from 'node:fs/promises';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const out = join(root, 'dist');
const started = Date.now();

/** One script of the page (renderer/NAME → dist/renderer/OUT), bundled for the browser. */
function pageBundle(name, outName, extra = {}) {
  return build({
    entryPoints: [join(root, 'renderer', name)],
    outfile: join(out, 'renderer', outName),
    bundle: true,
    format: 'iife',
    platform: 'browser',
    target: 'chrome120',
    minify: true,
    sourcemap: 'linked',
    logLevel: 'warning',
    ...extra,
  });
}

await mkdir(join(out, 'renderer'), { recursive: true });
await Promise.all([
  pageBundle('main.ts', 'app.js', { legalComments: 'linked' }),
  // The page's worker that fetches and decodes a long pattern's curves off the page's thread.
  pageBundle('decode-worker.ts', 'decode-worker.js'),
  build({
    entryPoints: [join(root, 'electron', 'main.ts')],
    outfile: join(out, 'electron', 'main.js'),
    bundle: true,
    format: 'esm',
    platform: 'node',
    target: 'node20',
    packages: 'external',
    sourcemap: 'linked',
    logLevel: 'warning',
  }),
  build({
    entryPoints: [join(root, 'electron', 'preload.ts')],
    outfile: join(out, 'electron', 'preload.cjs'),
    bundle: true,
    format: 'cjs',
    platform: 'node',
    target: 'node20',
    external: ['electron'],
    logLevel: 'warning',
  }),
  copyFile(join(root, 'renderer', 'index.html'), join(out, 'renderer', 'index.html')),
  copyFile(join(root, 'renderer', 'styles.css'), join(out, 'renderer', 'styles.css')),
]);
process.stderr.write(`screens and shell built into dist/ in ${Date.now() - started} ms\n`);
