// Helper thread of the solver's vector kernels: runs its slice of every kernel over the shared
// arena until told to stop.
import { workerData } from 'node:worker_threads';
import { runKernelWorker } from '../src/linalg/kernelTeam.js';

runKernelWorker(workerData as Parameters<typeof runKernelWorker>[0]);
