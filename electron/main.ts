// The desktop shell: one window, the menu, native dialogs and the IPC bridge. Everything else is in src/app,
// run by the system's Node.js in a process of its own (engine-client.ts): this runtime's Node.js has another ABI.
import { app, BrowserWindow, dialog, ipcMain, Menu, protocol, session, shell, type IpcMainInvokeEvent, type MenuItemConstructorOptions } from 'electron';
import { readFile, stat, writeFile } from 'node:fs/promises';
import { basename, dirname, extname, join, normalize, sep } from 'node:path';
import { fileURLToPath } from 'node:url';
import { z } from 'zod';
import { startEngine } from '../src/app/engine-client.js';
import { IPC, MAX_PATTERN_MB_SETTING, maxPatternBytes, tooLargeMessage, type MenuAction, type PickedFile } from '../src/api/bridge.js';
import { CONTENT_SECURITY_POLICY } from '../src/api/csp.js';

const here = dirname(fileURLToPath(import.meta.url));
const rendererDir = normalize(join(here, '..', 'renderer') + sep);
const ORIGIN = 'app://crystallog';

protocol.registerSchemesAsPrivileged([{ scheme: 'app', privileges: { standard: true, secure: true, supportFetchAPI: false } }]);
app.enableSandbox();

// `npm start` passes the Node.js it runs on; started otherwise, the first `node` on the PATH.
const api = startEngine({ nodePath: process.env.CRYSTALLOG_NODE || 'node', script: join(here, '..', 'src', 'app', 'engine-process.js') });
let mainWindow: BrowserWindow | null = null;

const saveSchema = z.object({ suggestedName: z.string().min(1).max(200), text: z.string().optional(), bytesBase64: z.string().optional() }).strict();
const pdfSchema = z.object({ html: z.string().max(50_000_000), suggestedName: z.string().min(1).max(200) }).strict();
const kindSchema = z.enum(['patterns', 'references']);

/** Only our own page may use the bridge (Electron security checklist: validate the sender of every IPC message). */
function fromOurPage(event: IpcMainInvokeEvent): boolean {
  const url = event.senderFrame?.url ?? '';
  return url.startsWith(`${ORIGIN}/`) && event.sender === mainWindow?.webContents;
}

function handle(channel: string, work: (event: IpcMainInvokeEvent, ...args: unknown[]) => Promise<unknown>): void {
  ipcMain.handle(channel, async (event, ...args) => {
    if (!fromOurPage(event)) throw new Error('refused: not the Crystallog page');
    return work(event, ...args);
  });
}

function registerIpc(): void {
  handle(IPC.call, async (_event, method, params) => {
    if (typeof method !== 'string' || method.length > 100) return { ok: false, error: { kind: 'input', message: 'Unknown request.' } };
    return api.call(method, params);
  });
  handle(IPC.openFiles, async (_event, kindArg) => {
    const kind = kindSchema.parse(kindArg);
    const filters =
      kind === 'patterns'
        ? [{ name: 'Diffraction patterns', extensions: ['xy', 'xye', 'txt', 'dat', 'csv', 'cif', 'asc'] }, { name: 'All files', extensions: ['*'] }]
        : [{ name: 'References', extensions: ['json', 'csv', 'cif'] }, { name: 'All files', extensions: ['*'] }];
    const result = await dialog.showOpenDialog(mainWindow!, { properties: ['openFile', 'multiSelections'], filters });
    if (result.canceled) return [];
    const files: PickedFile[] = [];
    // Only regular files within the size cap are read, as on the command line (a FIFO or a device would never end).
    const maxBytes = maxPatternBytes(process.env[MAX_PATTERN_MB_SETTING]);
    for (const path of result.filePaths) {
      const info = await stat(path);
      const refused = !info.isFile() ? 'this is not a regular file (a pipe, a device or a socket); save the pattern to a file first' : info.size > maxBytes ? tooLargeMessage(info.size, maxBytes) : null;
      files.push(refused ? { name: basename(path), bytesBase64: '', refused } : { name: basename(path), bytesBase64: (await readFile(path)).toString('base64') });
    }
    return files;
  });
  handle(IPC.saveFile, async (_event, requestArg) => {
    const request = saveSchema.parse(requestArg);
    const extension = extname(request.suggestedName).slice(1) || 'txt';
    const result = await dialog.showSaveDialog(mainWindow!, { defaultPath: basename(request.suggestedName), filters: [{ name: extension.toUpperCase(), extensions: [extension] }] });
    if (result.canceled || !result.filePath) return null;
    await writeFile(result.filePath, request.text !== undefined ? Buffer.from(request.text, 'utf8') : Buffer.from(request.bytesBase64 ?? '', 'base64'));
    return result.filePath;
  });
  handle(IPC.printPdf, async (_event, requestArg) => {
    const request = pdfSchema.parse(requestArg);
    const result = await dialog.showSaveDialog(mainWindow!, { defaultPath: basename(request.suggestedName), filters: [{ name: 'PDF', extensions: ['pdf'] }] });
    if (result.canceled || !result.filePath) return null;
    // The report is rendered in a hidden window with scripts off; it is self-contained (no network).
    const printer = new BrowserWindow({ show: false, webPreferences: { sandbox: true, contextIsolation: true, javascript: false } });
    try {
      await printer.loadURL(`data:text/html;charset=utf-8;base64,${Buffer.from(request.html).toString('base64')}`);
      // The page size comes from the report's own @page rule (A4 or Letter, the user's choice in Settings).
      const pdf = await printer.webContents.printToPDF({ printBackground: true, preferCSSPageSize: true });
      await writeFile(result.filePath, pdf);
      return result.filePath;
    } finally {
      printer.destroy();
    }
  });
}

function serveRenderer(): void {
  protocol.handle('app', async (request) => {
    const url = new URL(request.url);
    const relative = url.pathname === '/' ? 'index.html' : decodeURIComponent(url.pathname).replace(/^\/+/, '');
    const file = normalize(join(rendererDir, relative));
    if (url.host !== 'crystallog' || !file.startsWith(rendererDir)) return new Response('Not found', { status: 404 });
    const types: Record<string, string> = { '.html': 'text/html', '.js': 'text/javascript', '.css': 'text/css', '.svg': 'image/svg+xml', '.png': 'image/png' };
    try {
      const body = await readFile(file);
      return new Response(body, { headers: { 'Content-Type': types[extname(file)] ?? 'application/octet-stream', 'Content-Security-Policy': CONTENT_SECURITY_POLICY } });
    } catch {
      return new Response('Not found', { status: 404 });
    }
  });
}

function sendMenu(action: MenuAction): void {
  mainWindow?.webContents.send(IPC.menu, action);
}

function buildMenu(): void {
  const isMac = process.platform === 'darwin';
  const template: MenuItemConstructorOptions[] = [
    ...(isMac ? [{ role: 'appMenu' as const }] : []),
    {
      label: 'File',
      submenu: [
        { label: 'Open patterns…', accelerator: 'CmdOrCtrl+O', click: () => sendMenu('open-patterns') },
        { label: 'Export report…', accelerator: 'CmdOrCtrl+E', click: () => sendMenu('export-report') },
        { type: 'separator' },
        isMac ? { role: 'close' } : { role: 'quit' },
      ],
    },
    { role: 'editMenu' },
    {
      label: 'View',
      submenu: [
        { label: 'Samples', accelerator: 'CmdOrCtrl+1', click: () => sendMenu('show-samples') },
        { label: 'Library', accelerator: 'CmdOrCtrl+2', click: () => sendMenu('show-library') },
        { label: 'Instrument', accelerator: 'CmdOrCtrl+3', click: () => sendMenu('show-instrument') },
        { label: 'Series', accelerator: 'CmdOrCtrl+4', click: () => sendMenu('show-series') },
        { label: 'Report', accelerator: 'CmdOrCtrl+5', click: () => sendMenu('show-report') },
        { type: 'separator' },
        { role: 'resetZoom' },
        { role: 'zoomIn' },
        { role: 'zoomOut' },
        { role: 'togglefullscreen' },
      ],
    },
  ];
  Menu.setApplicationMenu(Menu.buildFromTemplate(template));
}

function createWindow(): void {
  mainWindow = new BrowserWindow({
    width: 1280,
    height: 800,
    minWidth: 960,
    minHeight: 640,
    title: 'Crystallog',
    backgroundColor: '#f6f5f1',
    webPreferences: {
      preload: join(here, 'preload.cjs'),
      contextIsolation: true,
      sandbox: true,
      nodeIntegration: false,
      webSecurity: true,
      allowRunningInsecureContent: false,
      spellcheck: false,
    },
  });
  void mainWindow.loadURL(`${ORIGIN}/index.html`);
  mainWindow.on('closed', () => {
    mainWindow = null;
  });
}

app.on('web-contents-created', (_event, contents) => {
  // No navigation away from our page, no new windows, no webviews (Electron security checklist).
  contents.on('will-navigate', (event, url) => {
    if (!url.startsWith(`${ORIGIN}/`)) event.preventDefault();
  });
  contents.on('will-attach-webview', (event) => event.preventDefault());
  contents.setWindowOpenHandler(({ url }) => {
    if (url.startsWith('https://')) void shell.openExternal(url);
    return { action: 'deny' };
  });
});

/** Exit code that tells `npm start` the desktop shell cannot run here, so it opens browser mode instead. */
const CANNOT_RUN_HERE = 3;

app.whenReady().then(async () => {
  try {
    await api.ready;
  } catch (err) {
    dialog.showErrorBox('Crystallog could not start its engine', `${err instanceof Error ? err.message : String(err)}\n\nStart Crystallog with "npm start"; it opens in your browser where the desktop window cannot run.`);
    app.exit(CANNOT_RUN_HERE);
    return;
  }
  session.defaultSession.setPermissionRequestHandler((_contents, _permission, callback) => callback(false));
  session.defaultSession.setPermissionCheckHandler(() => false);
  serveRenderer();
  registerIpc();
  buildMenu();
  createWindow();
  app.on('activate', () => {
    if (BrowserWindow.getAllWindows().length === 0) createWindow();
  });
});

app.on('window-all-closed', () => {
  api.close();
  if (process.platform !== 'darwin') app.quit();
});
