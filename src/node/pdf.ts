import { spawn } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { InputError } from '../core/errors.js';
import { findChromium } from './browser.js';

/**
 * PDF from a self-contained HTML report, printed by the system's Chromium in headless mode
 * (browser mode; the desktop shell prints with its own window instead). Scripts and network are off.
 */
export async function htmlToPdf(html: string, workDir: string = tmpdir(), timeoutMs = 60_000): Promise<Buffer> {
  const browser = findChromium();
  if (!browser) throw new InputError('making a PDF needs Chromium, Chrome or Edge on this computer; save the HTML report and print it to PDF from a browser instead');
  const dir = mkdtempSync(join(workDir, 'pdf-'));
  try {
    const input = join(dir, 'report.html');
    const output = join(dir, 'report.pdf');
    writeFileSync(input, html);
    const args = [
      '--headless',
      '--disable-gpu',
      '--no-first-run',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-javascript',
      `--user-data-dir=${join(dir, 'profile')}`,
      '--no-pdf-header-footer',
      `--print-to-pdf=${output}`,
      `file://${input}`,
    ];
    // Chromium refuses its sandbox when run as root (containers); only then is it turned off.
    if (process.getuid?.() === 0) args.unshift('--no-sandbox');
    await new Promise<void>((resolve, reject) => {
      const child = spawn(browser, args, { stdio: 'ignore' });
      const timer = setTimeout(() => {
        child.kill();
        reject(new Error('printing the PDF took too long'));
      }, timeoutMs);
      child.on('error', (err) => {
        clearTimeout(timer);
        reject(err);
      });
      child.on('exit', (code) => {
        clearTimeout(timer);
        if (code === 0) resolve();
        else reject(new Error(`Chromium stopped with exit code ${code} while printing the PDF`));
      });
    });
    return readFileSync(output);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
