// Regenerate reference-patterns/*.json from the CIFs in reference-patterns/cif/.
// Usage: npx tsc -p tsconfig.json && node scripts/make-seed-references.mjs
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';

const { seedFiles } = await import('../dist/src/node/library/seed-build.js');
const { seedFolder } = await import('../dist/src/node/library/seed.js');

const folder = seedFolder();
for (const { fileName, text } of seedFiles()) {
  writeFileSync(join(folder, fileName), text);
  console.log(`wrote ${join('reference-patterns', fileName)}`);
}
