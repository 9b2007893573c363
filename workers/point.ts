// Worker-thread entry for scans: piscina calls the default export with one task (a run of
// neighbouring points and a port to report each finished point on). The work lives in src/.
// The main thread closes the port once the task settles, after every message has arrived.
import { runScanTask, type ScanTask } from '../src/scan/task.js';

export default function scanWorker(task: ScanTask): number {
  return runScanTask(task);
}
