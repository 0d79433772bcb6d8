// The window's one way to the computation. At start it picks the Electron bridge (window.polarweave, from
// the preload) or the browser host (HTTP on 127.0.0.1 with the per-run token from the URL fragment); the
// views call `client.call(method, input)` and never know which.
import type { ApiError, ApiInput, ApiMethod, ApiOutput, ApiResponse, AppState, DatasetSummary } from '../../src-main/api/contract.ts';

/** A file handed to a save dialog or a download. */
export interface SaveRequest {
  fileName: string;
  mime: string;
  text?: string;
  /** Binary content (PNG), base64. */
  base64?: string;
}

/** What the preload exposes (src-main/shell/preload.ts); keep the two in step. */
export interface ShellBridge {
  call(method: string, payload: unknown): Promise<ApiResponse<unknown>>;
  openStructuresDialog(): Promise<ApiResponse<DatasetSummary[]>>;
  openProjectDialog(): Promise<ApiResponse<(AppState & { ui: Record<string, unknown> | null }) | null>>;
  saveFile(request: SaveRequest): Promise<ApiResponse<{ saved: boolean; path?: string }>>;
  onMenu(listener: (command: string) => void): void;
}

declare global {
  interface Window {
    polarweave?: ShellBridge;
  }
}

export class CallError extends Error {
  constructor(readonly error: ApiError) {
    super(error.message);
    this.name = error.name;
  }
}

export interface Client {
  kind: 'electron' | 'browser';
  call<M extends ApiMethod>(method: M, input: ApiInput<M>): Promise<ApiOutput<M>>;
  /** Asks for structure files (dialog or file picker) and opens them. */
  openStructures(): Promise<DatasetSummary[]>;
  /** Opens files dropped on the window. */
  openDropped(files: FileList | File[]): Promise<DatasetSummary[]>;
  openProject(): Promise<(AppState & { ui: Record<string, unknown> | null }) | null>;
  save(request: SaveRequest): Promise<{ saved: boolean; path?: string }>;
  onMenu(listener: (command: string) => void): void;
}

function unwrap<T>(r: ApiResponse<T>): T {
  if (r.ok) return r.value;
  throw new CallError(r.error);
}

/** A file's bytes as they are (the service recognises gzip and the kind: one place, the file registry). */
async function fileToPayload(file: File): Promise<{ name: string; base64: string }> {
  const bytes = new Uint8Array(await file.arrayBuffer());
  let binary = '';
  for (let i = 0; i < bytes.length; i += 0x8000) binary += String.fromCharCode(...bytes.subarray(i, i + 0x8000));
  return { name: file.name, base64: btoa(binary) };
}

/** The structure extensions of the file registry (io/read-structures.ts STRUCTURE_EXTENSIONS; a test holds them equal). */
export const STRUCTURE_ACCEPT = '.xyz,.extxyz,.exyz,.cif,.gz';

/** The browser's file picker; resolves with the chosen files, or none when cancelled. `accept` '' takes any file. */
export function pickFiles(accept: string, multiple: boolean): Promise<File[]> {
  return new Promise((resolve) => {
    const input = document.createElement('input');
    input.type = 'file';
    if (accept) input.accept = accept;
    input.multiple = multiple;
    input.style.display = 'none';
    input.addEventListener('change', () => {
      resolve(input.files ? [...input.files] : []);
      input.remove();
    });
    input.addEventListener('cancel', () => {
      resolve([]);
      input.remove();
    });
    document.body.appendChild(input);
    input.click();
  });
}

function download(request: SaveRequest): void {
  let blob: Blob;
  if (request.base64 !== undefined) {
    const bin = atob(request.base64);
    const bytes = new Uint8Array(bin.length);
    for (let i = 0; i < bin.length; i++) bytes[i] = bin.charCodeAt(i);
    blob = new Blob([bytes], { type: request.mime });
  } else blob = new Blob([request.text ?? ''], { type: request.mime });
  const url = URL.createObjectURL(blob);
  const a = document.createElement('a');
  a.href = url;
  a.download = request.fileName;
  document.body.appendChild(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

function electronClient(bridge: ShellBridge): Client {
  const call = async <M extends ApiMethod>(method: M, input: ApiInput<M>) => unwrap(await bridge.call(method, input)) as ApiOutput<M>;
  return {
    kind: 'electron',
    call,
    openStructures: async () => unwrap(await bridge.openStructuresDialog()),
    openDropped: async (files) => {
      const out: DatasetSummary[] = [];
      for (const f of [...files]) out.push(await call('openStructures', await fileToPayload(f)));
      return out;
    },
    openProject: async () => unwrap(await bridge.openProjectDialog()),
    save: async (request) => unwrap(await bridge.saveFile(request)),
    onMenu: (l) => bridge.onMenu(l),
  };
}

export const TOKEN_HEADER = 'x-polarweave-token';
/** The browser host keeps one session per tab by this id (src-main/host/sessions.ts, SESSION_HEADER). */
export const SESSION_HEADER = 'x-polarweave-session';
/** How often an open tab tells the host it is still there (src-main/host/sessions.ts, SIGN_OF_LIFE_MS). */
const SIGN_OF_LIFE_MS = 30_000;
const SESSION_KEY = 'pw-session';

/**
 * This tab's session id. Kept in the tab's sessionStorage, so a reload keeps the tab's work on the host; a new tab
 * makes its own. A tab duplicated from another gets a copy of its sessionStorage, so at start the tab asks the
 * other open tabs of this address (BroadcastChannel) whether one of them already holds the id, and takes a new one
 * if so. Two tabs starting at the same moment with the same id: the one with the smaller random name keeps it.
 */
function tabSession(): { id: () => string; ready: Promise<void>; renew: () => void } {
  const fresh = () => {
    const made = crypto.randomUUID();
    sessionStorage.setItem(SESSION_KEY, made);
    return made;
  };
  let id = sessionStorage.getItem(SESSION_KEY) ?? fresh();
  const me = crypto.randomUUID();
  let settled = false;
  let ready = Promise.resolve();
  if (typeof BroadcastChannel === 'function') {
    const channel = new BroadcastChannel('polarweave-tabs');
    channel.onmessage = (e: MessageEvent) => {
      const m = e.data as { type?: string; id?: string; from?: string; to?: string } | null;
      if (m?.type === 'who' && m.id === id && m.from !== me && (settled || me < (m.from ?? ''))) channel.postMessage({ type: 'mine', id, to: m.from });
      if (m?.type === 'mine' && m.to === me && m.id === id && !settled) id = fresh();
    };
    ready = new Promise((resolve) => {
      channel.postMessage({ type: 'who', id, from: me });
      setTimeout(() => {
        settled = true;
        resolve();
      }, 200);
    });
  } else settled = true;
  // an ended session: this page keeps its id (every call says the session ended), the next load takes a new one
  return { id: () => id, ready, renew: () => sessionStorage.setItem(SESSION_KEY, crypto.randomUUID()) };
}

function browserClient(token: string): Client {
  const session = tabSession();
  const post = async (path: string, body: unknown): Promise<Response> => {
    await session.ready;
    return fetch(path, {
      method: 'POST',
      headers: { 'content-type': 'application/json', [TOKEN_HEADER]: token, [SESSION_HEADER]: session.id() },
      body: JSON.stringify(body ?? {}),
    });
  };
  const call = async <M extends ApiMethod>(method: M, input: ApiInput<M>): Promise<ApiOutput<M>> => {
    let res: Response;
    try {
      res = await post(`/api/${method}`, input);
    } catch {
      throw new CallError({ name: 'ConnectionError', message: 'the app’s computation process is not answering (was `npm start` stopped?)' });
    }
    const body = (await res.json().catch(() => null)) as ApiResponse<ApiOutput<M>> | null;
    if (!body) throw new CallError({ name: 'ConnectionError', message: `unexpected answer from the host (HTTP ${res.status})` });
    if (!body.ok && body.error.name === 'SessionEnded') session.renew();
    return unwrap(body);
  };
  // the sign of life that keeps this tab's session while the tab is open (a closed tab's session can make room)
  setInterval(() => void post('/session/alive', {}).catch(() => undefined), SIGN_OF_LIFE_MS);
  const openFiles = async (files: File[]) => {
    const out: DatasetSummary[] = [];
    for (const f of files) out.push(await call('openStructures', await fileToPayload(f)));
    return out;
  };
  return {
    kind: 'browser',
    call,
    openStructures: async () => openFiles(await pickFiles(STRUCTURE_ACCEPT, true)),
    openDropped: async (files) => openFiles([...files]),
    openProject: async () => {
      const [f] = await pickFiles('.json,.pwproj', false);
      if (!f) return null;
      return call('openProject', { name: f.name, text: await f.text() });
    },
    save: async (request) => {
      download(request);
      return { saved: true };
    },
    onMenu: () => {},
  };
}

/** The browser host's token: from the URL fragment on first load, then from this tab's session storage. */
function hostToken(): string | null {
  const m = /(?:^#|&)token=([0-9a-f]+)/.exec(location.hash);
  if (m) {
    sessionStorage.setItem('pw-token', m[1]);
    history.replaceState(null, '', location.pathname + location.search);
    return m[1];
  }
  return sessionStorage.getItem('pw-token');
}

export function makeClient(): Client | null {
  if (window.polarweave) return electronClient(window.polarweave);
  const token = hostToken();
  return token ? browserClient(token) : null;
}
