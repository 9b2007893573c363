// Helper thread of a sector-by-sector solve: takes whole sectors from the shared counter and posts
// each one's states back. The work lives in src/sectorSolve.ts.
import { workerData } from 'node:worker_threads';
import { runSectorHelper } from '../src/sectorSolve.js';

runSectorHelper(workerData);
