import { Worker } from 'node:worker_threads';
import { describe, expect, it } from 'vitest';
import { claimNext, newClaims, takeTail, unclaimed } from '../../src/scan/claims.js';

// Each point of a task must be solved by exactly one worker, whichever way claims and cuts
// interleave (a property of the protocol itself; no outside source needed).

describe('claims on a task', () => {
  it('the worker takes points in order until the end', () => {
    const claims = newClaims(3);
    expect([claimNext(claims), claimNext(claims), claimNext(claims), claimNext(claims)]).toEqual([0, 1, 2, null]);
    expect(unclaimed(claims)).toBe(0);
  });

  it('a cut takes the second half of the unclaimed points, and the worker stops before it', () => {
    const claims = newClaims(10);
    claimNext(claims);
    claimNext(claims);
    expect(takeTail(claims, 2)).toEqual([6, 10]);
    const rest: (number | null)[] = [];
    for (let k = 0; k < 5; k++) rest.push(claimNext(claims));
    expect(rest).toEqual([2, 3, 4, 5, null]);
  });

  it('no cut smaller than the minimum', () => {
    const claims = newClaims(3);
    claimNext(claims);
    expect(takeTail(claims, 2)).toBeNull(); // 2 unclaimed: half is 1
    expect(takeTail(claims, 1)).toEqual([2, 3]);
    expect(takeTail(claims, 1)).toBeNull(); // 1 unclaimed: nothing to halve
  });

  it('a worker thread claiming flat out while this thread keeps cutting: every point claimed exactly once', async () => {
    const count = 50_000;
    const claims = newClaims(count);
    const source = new URL('../../dist/src/scan/claims.js', import.meta.url).href;
    const worker = new Worker(
      `const { workerData, parentPort } = require('node:worker_threads');
       import(workerData.source).then(({ claimNext }) => {
         const taken = [];
         let spin = 0;
         for (let k; (k = claimNext(workerData.claims)) !== null; ) {
           taken.push(k);
           for (let i = 0; i < 10000; i++) spin += i; // a little work per point, so cuts land mid-run
         }
         if (spin < 0) throw new Error('unreachable');
         parentPort.postMessage(taken);
       });`,
      { eval: true, workerData: { claims, source } },
    );
    const taken = new Promise<number[]>((resolve, reject) => {
      worker.once('message', resolve);
      worker.once('error', reject);
    });
    // Cut only while the worker is claiming, and let it claim more between cuts.
    const deadline = Date.now() + 10_000;
    while (unclaimed(claims) === count && Date.now() < deadline) {
      /* wait for the worker's first claim */
    }
    const cut: number[] = [];
    let cuts = 0;
    for (let left = unclaimed(claims); left > 1 && Date.now() < deadline;) {
      const piece = takeTail(claims, 1);
      if (piece) {
        cuts++;
        for (let k = piece[0]; k < piece[1]; k++) cut.push(k);
      }
      const before = unclaimed(claims);
      while ((left = unclaimed(claims)) > 0 && before - left < 50 && Date.now() < deadline) {
        /* the worker claims on */
      }
    }
    const byWorker = await taken;
    await worker.terminate();
    const all = [...byWorker, ...cut].sort((a, b) => a - b);
    // Every cut landed while the worker was claiming (after its first claim, with points left).
    expect(cuts).toBeGreaterThanOrEqual(2);
    expect(all).toHaveLength(count);
    expect(all.every((k, i) => k === i)).toBe(true);
    // The worker claims a prefix, in order, up to where the first cut began.
    expect(byWorker.every((k, i) => k === i)).toBe(true);
  });
});
