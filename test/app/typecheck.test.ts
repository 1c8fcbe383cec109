import { execFileSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const root = join(import.meta.dirname, '..', '..');
const tsc = join(root, 'node_modules', 'typescript', 'bin', 'tsc');

/** Run tsc on one project file; returns its diagnostics ('' when clean). */
function typecheck(project: string): string {
  try {
    execFileSync(process.execPath, [tsc, '-p', join(root, project), '--noEmit'], { encoding: 'utf8', stdio: 'pipe' });
    return '';
  } catch (err) {
    return String((err as { stdout?: string }).stdout ?? err);
  }
}

describe('the desktop shell and the screens type-check against their own typings', () => {
  it('electron main and preload check against Electron’s typings', () => {
    expect(typecheck('electron/tsconfig.json')).toBe('');
  }, 180_000);

  it('the screens check against the DOM typings', () => {
    expect(typecheck('renderer/tsconfig.json')).toBe('');
  }, 180_000);
});
