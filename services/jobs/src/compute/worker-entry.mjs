// Entry of a compute worker thread. The services run their TypeScript sources without a build
// step, and a worker thread does not inherit the main thread's loader, so it registers tsx's
// loader itself before importing the task.
import { move, transferableSymbol, valueSymbol } from 'piscina';
import { register } from 'tsx/esm/api';

register();
const { runComputeTask } = await import('./worker-task.ts');

/**
 * Piscina calls the default export with the task. The result goes back as a Transferable: the
 * COPY body's buffer (a megabyte or two per task) is moved to the main thread, not cloned.
 */
export default function computeTask(task) {
  const result = runComputeTask(task);
  return move({
    get [transferableSymbol]() {
      return [result.body.buffer];
    },
    get [valueSymbol]() {
      return result;
    },
  });
}
