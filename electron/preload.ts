// Preload of the sandboxed page: exposes only the typed bridge, never ipcRenderer itself.
import { contextBridge, ipcRenderer, type IpcRendererEvent } from 'electron';
import { IPC, MENU_ACTIONS, type CrystallogBridge, type MenuAction, type SaveRequest } from '../src/api/bridge.js';

const bridge: CrystallogBridge = {
  call: (method: string, params: unknown) => ipcRenderer.invoke(IPC.call, String(method), params),
  openFiles: (kind: 'patterns' | 'references') => ipcRenderer.invoke(IPC.openFiles, kind),
  saveFile: (request: SaveRequest) => ipcRenderer.invoke(IPC.saveFile, request),
  printPdf: (html: string, suggestedName: string) => ipcRenderer.invoke(IPC.printPdf, { html, suggestedName }),
  onMenu: (listener: (action: MenuAction) => void) => {
    const wrapped = (_event: IpcRendererEvent, action: unknown): void => {
      if (typeof action === 'string' && (MENU_ACTIONS as readonly string[]).includes(action)) listener(action as MenuAction);
    };
    ipcRenderer.on(IPC.menu, wrapped);
    return () => {
      ipcRenderer.removeListener(IPC.menu, wrapped);
    };
  },
};

contextBridge.exposeInMainWorld('crystallog', bridge);
