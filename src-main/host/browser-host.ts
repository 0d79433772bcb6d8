// Starts the browser host from source (npm start without Electron, the UI tests, the screenshots): one app
// service per browser tab (sessions.ts), all sharing one job runner with tsx-loaded workers, serving out/renderer
// on 127.0.0.1.
import { fileURLToPath } from 'node:url';
import { createAppService, createRunner } from '../app/wiring.ts';
import type { AppService } from '../app/service.ts';
import { PathAccess } from '../app/path-access.ts';
import { tsWorkerFactory } from '../jobs/spawn-ts.ts';
import { startHost, type Host } from './server.ts';
import { SessionPool } from './sessions.ts';

const root = fileURLToPath(new URL('../..', import.meta.url));

export interface RunningHost extends Host {
  /** The sessions of the open tabs. */
  sessions: SessionPool<AppService>;
  /** The session of a tab by the id its page keeps (sessionStorage 'pw-session'), if it is open. */
  session(id: string): AppService | undefined;
  /** Gone: there is one service per tab. Reading it throws, saying what to use instead. */
  readonly service: never;
  stop(): Promise<void>;
}

export interface BrowserHostOptions {
  port?: number;
  rendererDir?: string;
  demoDir?: string;
  /** A folder whose files the page may open by path (given at start); no other path is readable. */
  folder?: string;
  /** Files named on the command line: readable by path. */
  files?: string[];
  /** Bounds of the tabs' sessions (tests): how many at once, and when a silent one ends. */
  sessions?: { maxSessions?: number; idleMs?: number; goneAfterMs?: number };
}

export async function startBrowserHost(options: BrowserHostOptions = {}): Promise<RunningHost> {
  const paths = new PathAccess({ files: options.files, folders: options.folder ? [options.folder] : [] });
  const spawn = tsWorkerFactory(new URL('../app/worker.ts', import.meta.url));
  // one runner for every tab: at most two jobs at once on the machine, whichever tab started them
  const runner = createRunner({ spawn });
  // POLARWEAVE_DEMO_DIR: another demo folder (development and tests only).
  const demoDir = options.demoDir ?? process.env.POLARWEAVE_DEMO_DIR ?? `${root}resources/demo`;
  const sessions = new SessionPool<AppService>({ create: () => createAppService({ paths, spawn, demoDir, runner }), ...options.sessions });
  const sweeper = setInterval(() => sessions.sweep(), 60_000);
  sweeper.unref();
  const host = await startHost({ sessions, rendererDir: options.rendererDir ?? `${root}out/renderer`, port: options.port });
  return {
    ...host,
    sessions,
    session: (id) => sessions.get(id),
    get service(): never {
      throw new Error('the browser host keeps one session per tab: use host.session(id), or sessionOf(page, host) from test/ui/session-of.mjs');
    },
    stop: async () => {
      clearInterval(sweeper);
      sessions.dispose();
      runner.cancelAll();
      await host.close();
    },
  };
}
