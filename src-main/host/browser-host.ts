// Starts the browser host from source (npm start without Electron, the UI tests, the screenshots): the app
// service with tsx-loaded workers, serving out/renderer on 127.0.0.1.
import { fileURLToPath } from 'node:url';
import { createAppService } from '../app/wiring.ts';
import type { AppService } from '../app/service.ts';
import { PathAccess } from '../app/path-access.ts';
import { tsWorkerFactory } from '../jobs/spawn-ts.ts';
import { startHost, type Host } from './server.ts';

const root = fileURLToPath(new URL('../..', import.meta.url));

export interface RunningHost extends Host {
  service: AppService;
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
}

export async function startBrowserHost(options: BrowserHostOptions = {}): Promise<RunningHost> {
  const service = createAppService({
    paths: new PathAccess({ files: options.files, folders: options.folder ? [options.folder] : [] }),
    spawn: tsWorkerFactory(new URL('../app/worker.ts', import.meta.url)),
    // POLARWEAVE_DEMO_DIR: another demo folder (development and tests only).
    demoDir: options.demoDir ?? process.env.POLARWEAVE_DEMO_DIR ?? `${root}resources/demo`,
  });
  const host = await startHost({ service, rendererDir: options.rendererDir ?? `${root}out/renderer`, port: options.port });
  return {
    ...host,
    service,
    stop: async () => {
      service.dispose();
      await host.close();
    },
  };
}
