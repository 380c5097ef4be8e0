// Entry of a compute worker thread. The services run their TypeScript sources without a build
// step, and a worker thread does not inherit the main thread's loader, so it registers tsx's
// loader itself before importing the task.
import { register } from 'tsx/esm/api';

register();
const { runComputeTask } = await import('./worker-task.ts');

/** Piscina calls the default export with the task; the result is structured-cloned back. */
export default function computeTask(task) {
  return runComputeTask(task);
}
