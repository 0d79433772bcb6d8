/// <reference types="electron-vite/node" />
// Electron main process: one window with secure defaults (context isolation, sandbox, no Node in the page,
// strict CSP, no remote content, navigation and new windows blocked, permissions denied), the menu, the
// window state and recent files, and the app service that does the work (in worker threads).
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { app, BrowserWindow, dialog, Menu, screen, session } from 'electron';
import makeWorker from '../app/worker.ts?nodeWorker';
import { createAppService } from '../app/wiring.ts';
import { CONTENT_SECURITY_POLICY } from '../host/csp.ts';
import { toApiError } from '../api/contract.ts';
import { registerIpc, openStructurePaths, STRUCTURE_FILTERS, type IpcContext } from './ipc.ts';
import { buildMenu } from './menu.ts';
import { ShellMemory } from './window-state.ts';

app.enableSandbox();

// The bundle is an ES module: no __dirname, so take the folder from import.meta.url (out/main).
const here = dirname(fileURLToPath(import.meta.url));
const devUrl = process.env.ELECTRON_RENDERER_URL;
const rendererIndex = join(here, '../renderer/index.html');
const rendererUrl = pathToFileURL(rendererIndex).href;
const demoDir = app.isPackaged ? join(process.resourcesPath, 'demo') : join(app.getAppPath(), 'resources', 'demo');

let win: BrowserWindow | null = null;
let memory: ShellMemory;

function trusted(url: string): boolean {
  if (devUrl && url.startsWith(devUrl)) return true;
  return url === rendererUrl || url.startsWith(rendererUrl + '#') || url.startsWith(rendererUrl + '?');
}

const service = createAppService({ spawn: () => makeWorker({}), demoDir });

function send(command: string): void {
  win?.webContents.send('pw:menu', command);
}

function rebuildMenu(ctx: IpcContext): void {
  Menu.setApplicationMenu(
    buildMenu(memory.state.recent, {
      send,
      openStructures: () => {
        void (async () => {
          const r = await dialog.showOpenDialog(win!, { properties: ['openFile', 'multiSelections'], filters: STRUCTURE_FILTERS });
          if (r.canceled) return;
          await openPaths(ctx, r.filePaths);
        })();
      },
      openRecent: (p) => void openPaths(ctx, [p]),
      clearRecent: () => {
        memory.state.recent = [];
        app.clearRecentDocuments();
        void memory.save();
        rebuildMenu(ctx);
      },
      openProject: () => send('open-project'),
      about: () =>
        void dialog.showMessageBox(win!, {
          type: 'info',
          title: 'About Polarweave',
          message: `Polarweave ${app.getVersion()}`,
          detail: 'Learns polarisability and optical dielectric tensors of condensed phases from atomic structures.\n\nPredictions are model estimates; check them against measured or computed reference data before relying on them.',
        }),
    }),
  );
}

async function openPaths(ctx: IpcContext, paths: string[]): Promise<void> {
  try {
    await openStructurePaths(ctx, paths);
    send('state-changed');
  } catch (e) {
    const err = toApiError(e);
    await dialog.showMessageBox(win!, { type: 'error', title: 'Could not open the file', message: err.message, detail: err.hint ?? '' });
  }
}

function lockDown(): void {
  const ses = session.defaultSession;
  ses.setPermissionRequestHandler((_wc, _permission, callback) => callback(false));
  ses.setPermissionCheckHandler(() => false);
  // No remote content: only our own files (and the dev server while developing).
  ses.webRequest.onBeforeRequest((details, callback) => {
    const u = details.url;
    const ok = u.startsWith('file:') || u.startsWith('devtools:') || u.startsWith('data:') || u.startsWith('blob:') || (devUrl !== undefined && (u.startsWith(devUrl) || u.startsWith(devUrl.replace(/^http/, 'ws'))));
    callback({ cancel: !ok });
  });
  ses.webRequest.onHeadersReceived((details, callback) => {
    callback({ responseHeaders: { ...details.responseHeaders, 'Content-Security-Policy': [devUrl ? CONTENT_SECURITY_POLICY.replace("connect-src 'self'", "connect-src 'self' ws:") : CONTENT_SECURITY_POLICY] } });
  });
}

function visibleBounds(): Electron.Rectangle | undefined {
  const b = memory.state.bounds;
  if (!b) return undefined;
  const area = screen.getDisplayMatching(b).workArea;
  const overlaps = b.x < area.x + area.width && b.x + b.width > area.x && b.y < area.y + area.height && b.y + b.height > area.y;
  return overlaps ? b : undefined;
}

function createWindow(): void {
  const bounds = visibleBounds();
  win = new BrowserWindow({
    width: bounds?.width ?? 1360,
    height: bounds?.height ?? 880,
    x: bounds?.x,
    y: bounds?.y,
    minWidth: 900,
    minHeight: 600,
    title: 'Polarweave',
    icon: join(app.getAppPath(), 'resources', 'icon.png'),
    show: false,
    webPreferences: {
      preload: join(here, '../preload/preload.cjs'),
      contextIsolation: true,
      sandbox: true,
      nodeIntegration: false,
      nodeIntegrationInWorker: false,
      webSecurity: true,
      allowRunningInsecureContent: false,
      webviewTag: false,
      spellcheck: false,
    },
  });
  if (memory.state.maximised) win.maximize();
  win.once('ready-to-show', () => win?.show());
  const wc = win.webContents;
  wc.setWindowOpenHandler(() => ({ action: 'deny' }));
  wc.on('will-navigate', (e, url) => {
    if (!trusted(url)) e.preventDefault();
  });
  wc.on('will-redirect', (e, url) => {
    if (!trusted(url)) e.preventDefault();
  });
  wc.on('will-attach-webview', (e) => e.preventDefault());
  win.on('close', () => {
    if (!win) return;
    memory.state.maximised = win.isMaximized();
    if (!win.isMaximized() && !win.isMinimized()) memory.state.bounds = win.getBounds();
    void memory.save();
  });
  win.on('closed', () => {
    win = null;
  });
  if (devUrl) void win.loadURL(devUrl);
  else void win.loadFile(rendererIndex);
}

app.on('web-contents-created', (_e, contents) => {
  contents.setWindowOpenHandler(() => ({ action: 'deny' }));
});

app.whenReady().then(() => {
  memory = new ShellMemory(app.getPath('userData'));
  lockDown();
  const ctx: IpcContext = {
    service,
    window: () => win,
    trusted,
    rememberRecent: (p) => {
      memory.addRecent(p);
      app.addRecentDocument(p);
      void memory.save();
      rebuildMenu(ctx);
    },
  };
  registerIpc(ctx);
  rebuildMenu(ctx);
  createWindow();
  app.on('activate', () => {
    if (BrowserWindow.getAllWindows().length === 0) createWindow();
  });
});

app.on('window-all-closed', () => {
  service.dispose();
  if (process.platform !== 'darwin') app.quit();
});
