// Helper thread of a sector-by-sector solve: either takes whole sectors from the shared counter
// and posts each one's states back, or builds the second half of large sectors' rows on request.
// The work lives in src/symmetry/sectorSolve.ts.
import { workerData } from 'node:worker_threads';
import { runSectorWorker } from '../src/symmetry/sectorSolve.js';

runSectorWorker(workerData as Parameters<typeof runSectorWorker>[0]);
