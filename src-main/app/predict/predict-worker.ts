// Worker entry for the streaming predictor: serves the 'predict-chunk' task (app/predict/predict-tasks.ts).
// The app's own worker entry can serve the same task by spreading `predictTasks` into its registry.
import { predictTasks } from './predict-tasks.ts';
import { serveTasks } from '../../jobs/serve.ts';

serveTasks(predictTasks);
