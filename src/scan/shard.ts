// Scans that outgrow one machine: deterministic shards balanced by estimated cost (the job-array
// script is written in batch.ts, shard folders are merged in merge.ts, and the command line reads
// the scheduler's array environment).
//
// A shard is a set of whole line pieces (so warm starts still chain), chosen by the greedy
// longest-processing-time rule over the estimated cost of each piece: every shard computes the
// same assignment from the spec alone, with no coordination.

import type { ScanPlan } from './plan.js';

export interface Shard {
  /** 1-based: shard `index` of `count`. */
  index: number;
  count: number;
  /** Where the shard came from, for messages: "--shard" or the scheduler's variables. */
  source: string;
}

/** Line pieces: at least three per shard where lines allow, so costs can be balanced. */
function pieces(plan: ScanPlan, count: number): number[][] {
  const perLine = count <= 1 ? 1 : Math.max(1, Math.ceil((3 * count) / plan.lines.length));
  const out: number[][] = [];
  for (const line of plan.lines) {
    const size = Math.max(1, Math.ceil(line.length / perLine));
    for (let s = 0; s < line.length; s += size) out.push(line.slice(s, s + size));
  }
  return out;
}

/** Point indices of every shard (ascending), balanced by estimated cost; deterministic. */
export function assignShards(plan: ScanPlan, costs: number[], count: number): number[][] {
  const units = pieces(plan, count).map((points) => ({ points, cost: points.reduce((s, i) => s + costs[i], 0) }));
  units.sort((a, b) => b.cost - a.cost || a.points[0] - b.points[0]);
  const load = new Array<number>(count).fill(0);
  const shards: number[][] = Array.from({ length: count }, () => []);
  for (const unit of units) {
    let best = 0;
    for (let s = 1; s < count; s++) if (load[s] < load[best]) best = s;
    load[best] += unit.cost;
    shards[best].push(...unit.points);
  }
  return shards.map((s) => s.sort((a, b) => a - b));
}
