// Worker thread of a shared matrix-vector product: rebuilds the operator over shared memory and
// serves its slice of rows until told to stop.
import { workerData } from 'node:worker_threads';
import { runProductWorker } from '../src/operator/threaded.js';

runProductWorker(workerData as Parameters<typeof runProductWorker>[0]);
