// Worker entry for the streaming predictor: serves the 'predict-chunk' task (app/predict/predict-tasks.ts).
// The app's own worker entry can serve the same task by spreading `predictTasks` into its registry.
import { predictTasks } from './predict-tasks.ts';
import { serveTasks } from '../../jobs/serve.ts';
import { useRadialTableCache } from '../../io/radial-table-store.ts';

// radial tables from the command's cache folder (each thread has its own module state, so each worker sets it)
useRadialTableCache();
serveTasks(predictTasks);
