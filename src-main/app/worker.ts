// The app's worker entry: serves the train, validate and predict tasks (app-tasks.ts). The Electron bundle
// loads it with `?nodeWorker`; source runs load it through tsWorkerFactory (spawn-ts.ts).
import { appTasks } from './tasks.ts';
import { serveTasks } from '../jobs/serve.ts';

serveTasks(appTasks);
