// The preload (sandboxed, CommonJS in the bundle): exposes the narrow bridge the window may use, and
// nothing else — no Node, no ipcRenderer. Every payload is checked again in the main process.
import { contextBridge, ipcRenderer } from 'electron';

const bridge = {
  call: (method: string, payload: unknown) => ipcRenderer.invoke('pw:call', String(method), payload),
  openStructuresDialog: () => ipcRenderer.invoke('pw:open-structures-dialog'),
  openProjectDialog: () => ipcRenderer.invoke('pw:open-project-dialog'),
  saveFile: (request: unknown) => ipcRenderer.invoke('pw:save-file', request),
  onMenu: (listener: (command: string) => void) => {
    ipcRenderer.on('pw:menu', (_event, command: unknown) => {
      if (typeof command === 'string') listener(command);
    });
  },
};

contextBridge.exposeInMainWorld('polarweave', bridge);
