// The application menu: files, views (Ctrl+1…7), display, help. Commands that the window handles are sent
// to it as 'pw:menu' messages; the rest (dialogs, recent files) run here in the main process.
import { Menu, type MenuItemConstructorOptions } from 'electron';

export interface MenuActions {
  send(command: string): void;
  openStructures(): void;
  openRecent(path: string): void;
  clearRecent(): void;
  openProject(): void;
  about(): void;
}

const viewNames = ['Data', 'Model', 'Checks', 'Structure', 'Trajectory', 'Transfer', 'Export'];

export function buildMenu(recent: string[], a: MenuActions): Menu {
  const isMac = process.platform === 'darwin';
  const template: MenuItemConstructorOptions[] = [
    ...(isMac ? [{ role: 'appMenu' as const }] : []),
    {
      label: 'File',
      submenu: [
        { label: 'Open Structures…', accelerator: 'CmdOrCtrl+O', click: () => a.openStructures() },
        {
          label: 'Open Recent',
          submenu: recent.length
            ? [...recent.map((p) => ({ label: p, click: () => a.openRecent(p) })), { type: 'separator' as const }, { label: 'Clear List', click: () => a.clearRecent() }]
            : [{ label: 'No recent files', enabled: false }],
        },
        { label: 'Load Demo', accelerator: 'CmdOrCtrl+D', click: () => a.send('load-demo') },
        { type: 'separator' },
        { label: 'Open Project…', accelerator: 'CmdOrCtrl+Shift+O', click: () => a.openProject() },
        { label: 'Save Project…', accelerator: 'CmdOrCtrl+S', click: () => a.send('save-project') },
        { type: 'separator' },
        isMac ? { role: 'close' } : { role: 'quit' },
      ],
    },
    { role: 'editMenu' },
    {
      label: 'View',
      submenu: [
        ...viewNames.map((name, i) => ({ label: name, accelerator: `CmdOrCtrl+${i + 1}`, click: () => a.send(`view:${name.toLowerCase()}`) })),
        { type: 'separator' },
        { label: 'Dark Theme', accelerator: 'CmdOrCtrl+Shift+D', click: () => a.send('toggle-theme') },
        { label: 'Large Text (projector)', accelerator: 'CmdOrCtrl+Shift+L', click: () => a.send('toggle-large') },
        { type: 'separator' },
        { role: 'resetZoom' },
        { role: 'zoomIn' },
        { role: 'zoomOut' },
        { role: 'togglefullscreen' },
      ],
    },
    { label: 'Help', submenu: [{ label: 'About Polarweave', click: () => a.about() }] },
  ];
  return Menu.buildFromTemplate(template);
}
