import type { ApiReply } from './reply.js';

/**
 * The narrow bridge the desktop shell's preload script gives the page (window.crystallog).
 * Browser mode has no bridge: the screens then call the local host over HTTP, and use the
 * browser's own file picker and downloads.
 */
export interface PickedFile {
  name: string;
  bytesBase64: string;
  /** Why the shell did not read it (not a regular file, over the size cap); bytesBase64 is then empty. */
  refused?: string;
}

export { MAX_PATTERN_MB_SETTING, maxPatternBytes, tooLargeMessage } from '../core/model/file-limits.js';

export interface SaveRequest {
  suggestedName: string;
  /** Text files (HTML, CSV, SVG) as text; binary files (PNG, PDF) as base64. */
  text?: string;
  bytesBase64?: string;
}

export type MenuAction = 'open-patterns' | 'export-report' | 'show-samples' | 'show-library' | 'show-instrument' | 'show-series' | 'show-report';

export const MENU_ACTIONS: readonly MenuAction[] = ['open-patterns', 'export-report', 'show-samples', 'show-library', 'show-instrument', 'show-series', 'show-report'];

export interface CrystallogBridge {
  call(method: string, params: unknown): Promise<ApiReply>;
  /** Native open dialog for pattern or reference files; empty when the user cancels. */
  openFiles(kind: 'patterns' | 'references'): Promise<PickedFile[]>;
  /** Native save dialog; the saved path, or null when the user cancels. */
  saveFile(request: SaveRequest): Promise<string | null>;
  /** Render a self-contained HTML page to PDF and save it; the saved path, or null when cancelled. */
  printPdf(html: string, suggestedName: string): Promise<string | null>;
  /** Subscribe to menu commands; returns the unsubscribe function. */
  onMenu(listener: (action: MenuAction) => void): () => void;
}

/** IPC channel names (main ⇄ preload). */
export const IPC = {
  call: 'crystallog:call',
  openFiles: 'crystallog:open-files',
  saveFile: 'crystallog:save-file',
  printPdf: 'crystallog:print-pdf',
  menu: 'crystallog:menu',
} as const;
