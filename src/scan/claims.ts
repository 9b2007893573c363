// Claims: a scan task's worker takes its points one by one through a few shared words, so the
// main thread can cut the unstarted tail off a busy task and give it to a worker that ran out of
// work (points along a line differ in cost, and a worker can run slower than its twin). A tiny
// lock keeps a claim and a cut from crossing: each point is solved by exactly one worker.
// (Its own small module: the main thread needs it without loading the solver.)

import { spinLocked } from '../threads/team.js';

const CLAIM_LOCK = 0;
const CLAIM_NEXT = 1;
const CLAIM_END = 2;

/** Claims over `count` points, in shared memory (it travels to the worker with the task). */
export function newClaims(count: number): Int32Array {
  const claims = new Int32Array(new SharedArrayBuffer(3 * Int32Array.BYTES_PER_ELEMENT));
  claims[CLAIM_END] = count;
  return claims;
}

const locked = <T>(claims: Int32Array, body: () => T): T => spinLocked(claims, CLAIM_LOCK, body);

/** The next point's position in the task, or null when the task has no more points for this worker. */
export function claimNext(claims: Int32Array): number | null {
  return locked(claims, () => {
    const next = claims[CLAIM_NEXT];
    if (next >= claims[CLAIM_END]) return null;
    claims[CLAIM_NEXT] = next + 1;
    return next;
  });
}

/** Points not yet claimed. */
export function unclaimed(claims: Int32Array): number {
  return locked(claims, () => claims[CLAIM_END] - claims[CLAIM_NEXT]);
}

/**
 * Cuts off the unclaimed tail's second half when it holds at least `minimum` points: returns
 * [from, to), the positions the caller now owns (the task's worker stops before `from`), or null.
 */
export function takeTail(claims: Int32Array, minimum: number): [number, number] | null {
  return locked(claims, () => {
    const next = claims[CLAIM_NEXT];
    const end = claims[CLAIM_END];
    const taken = Math.floor((end - next) / 2);
    if (taken < Math.max(1, minimum)) return null;
    claims[CLAIM_END] = end - taken;
    return [end - taken, end];
  });
}
