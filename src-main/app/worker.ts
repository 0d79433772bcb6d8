// The app's worker entry: serves the train, validate and predict tasks (tasks.ts) and the choice of frames for
// DFT (select-task.ts). The Electron bundle loads it with `?nodeWorker`; source runs load it through
// tsWorkerFactory (spawn-ts.ts).
import { appTasks } from './tasks.ts';
import { selectTask } from './select-task.ts';
import { serveTasks } from '../jobs/serve.ts';
import { useRadialTableCache } from '../io/radial-table-store.ts';

// radial tables from the cache folder the command uses too (a short job would spend a good share building one)
useRadialTableCache();
serveTasks({ ...appTasks, select: selectTask });
