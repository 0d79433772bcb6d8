// The IPC handlers of the window: the API call (validated by api-dispatch against api/contract.ts's schemas) and
// the few things only the main process may do — file dialogs and writing the files the user chose.
// Each handler first checks that the message comes from our own page.
import { readFile } from 'node:fs/promises';
import { basename } from 'node:path';
import { dialog, ipcMain, type BrowserWindow, type IpcMainInvokeEvent } from 'electron';
import { z } from 'zod';
import { toApiError, type ApiResponse, type DatasetSummary } from '../api/contract.ts';
import type { AppService } from '../app/service.ts';
import { dispatch } from '../api/dispatch.ts';
import { writeFileAtomic } from '../io/atomic.ts';

const saveSchema = z
  .object({
    fileName: z.string().min(1).max(255).refine((n) => basename(n) === n && !n.startsWith('.'), 'a plain file name'),
    mime: z.string().max(100),
    text: z.string().optional(),
    base64: z.string().optional(),
  })
  .strict()
  .refine((r) => (r.text === undefined) !== (r.base64 === undefined), 'give text or base64, not both');

const STRUCTURE_FILTERS = [
  { name: 'Structures (extended XYZ, CIF)', extensions: ['xyz', 'extxyz', 'gz', 'cif'] },
  { name: 'All files', extensions: ['*'] },
];

export interface IpcContext {
  service: AppService;
  window: () => BrowserWindow | null;
  /** Is this the URL of our own page (file:// of the bundle, or the dev server)? */
  trusted: (url: string) => boolean;
  rememberRecent: (path: string) => void;
}

function fail(e: unknown): ApiResponse<never> {
  return { ok: false, error: toApiError(e) };
}

export async function openStructurePaths(ctx: IpcContext, paths: string[]): Promise<DatasetSummary[]> {
  const out: DatasetSummary[] = [];
  for (const path of paths) {
    // every caller holds a path the user chose: a dialog, a drop, the command line or the recent-files menu
    ctx.service.paths.grantFile(path);
    out.push(await ctx.service.openStructures({ path }));
    ctx.rememberRecent(path);
  }
  return out;
}

export function registerIpc(ctx: IpcContext): void {
  const guard = (e: IpcMainInvokeEvent) => {
    const url = e.senderFrame?.url ?? '';
    if (!ctx.trusted(url)) throw new Error(`refused an IPC call from an unknown page (${url || 'no URL'})`);
  };

  ipcMain.handle('pw:call', async (e, method: unknown, payload: unknown) => {
    try {
      guard(e);
      if (typeof method !== 'string') throw new Error('the method name must be a string');
      // Files reach the main process only through dialogs or drag and drop: the window may not name paths.
      if (method === 'openStructures' && payload && typeof payload === 'object' && 'path' in payload) {
        throw new Error('the window cannot open files by path; use File ▸ Open or drop the file');
      }
      const outcome = await dispatch(ctx.service, method, payload);
      return outcome.response;
    } catch (err) {
      return fail(err);
    }
  });

  ipcMain.handle('pw:open-structures-dialog', async (e) => {
    try {
      guard(e);
      const win = ctx.window();
      const r = win
        ? await dialog.showOpenDialog(win, { title: 'Open structures', properties: ['openFile', 'multiSelections'], filters: STRUCTURE_FILTERS })
        : await dialog.showOpenDialog({ title: 'Open structures', properties: ['openFile', 'multiSelections'], filters: STRUCTURE_FILTERS });
      if (r.canceled) return { ok: true, value: [] };
      return { ok: true, value: await openStructurePaths(ctx, r.filePaths) };
    } catch (err) {
      return fail(err);
    }
  });

  ipcMain.handle('pw:open-project-dialog', async (e) => {
    try {
      guard(e);
      const opts = { title: 'Open project', properties: ['openFile' as const], filters: [{ name: 'Polarweave project', extensions: ['json', 'pwproj'] }] };
      const win = ctx.window();
      const r = win ? await dialog.showOpenDialog(win, opts) : await dialog.showOpenDialog(opts);
      if (r.canceled || !r.filePaths[0]) return { ok: true, value: null };
      const path = r.filePaths[0];
      const value = await ctx.service.openProject({ name: basename(path), text: await readFile(path, 'utf8') }, true);
      ctx.rememberRecent(path);
      return { ok: true, value };
    } catch (err) {
      return fail(err);
    }
  });

  ipcMain.handle('pw:save-file', async (e, request: unknown) => {
    try {
      guard(e);
      const parsed = saveSchema.safeParse(request);
      if (!parsed.success) throw new Error(`bad save request: ${parsed.error.issues[0]?.message}`);
      const req = parsed.data;
      const ext = req.fileName.includes('.') ? req.fileName.split('.').pop()! : '';
      const opts = { title: 'Save', defaultPath: req.fileName, filters: ext ? [{ name: ext.toUpperCase(), extensions: [ext] }] : [] };
      const win = ctx.window();
      const r = win ? await dialog.showSaveDialog(win, opts) : await dialog.showSaveDialog(opts);
      if (r.canceled || !r.filePath) return { ok: true, value: { saved: false } };
      await writeFileAtomic(r.filePath, req.text !== undefined ? req.text : Buffer.from(req.base64 ?? '', 'base64'));
      return { ok: true, value: { saved: true, path: r.filePath } };
    } catch (err) {
      return fail(err);
    }
  });
}
