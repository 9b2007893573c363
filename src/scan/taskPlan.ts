// A scan's pending points cut into tasks: runs of neighbouring points on one line, so warm starts
// chain within a task, largest first.

import type { ScanPlan, ScanPoint } from './plan.js';

export interface PlannedTask {
  points: ScanPoint[];
  /** The line's point before points[0], solved first for its overlap (see ScanTask.leadIn). */
  leadIn?: ScanPoint;
  cost: number;
}

/** Whether neighbours along a line can share a basis: every axis that moves along a line numeric, none a size. */
export function linesAreContinuous(plan: ScanPlan): boolean {
  const moving = plan.section.zip ? plan.section.axes : plan.section.axes.slice(-1);
  return moving.every(
    (a) =>
      a.values.every((v) => typeof v === 'number') &&
      !['chain.sites', 'levels.count', 'particles.number'].includes(a.key),
  );
}

/**
 * Splits the pending points into tasks: each a run of consecutive pending points of one line, so
 * warm starts chain within it; ordered by cost, largest first, so a long night ends on small work
 * and no big point starts last. Lines are cut into pieces only when there are too few of them to
 * keep every worker busy (two tasks per worker), as each cut costs a lead-in solve.
 */
export function planTasks(plan: ScanPlan, pending: Set<number>, costs: number[], workers: number): PlannedTask[] {
  const busyLines = plan.lines.filter((line) => line.some((i) => pending.has(i))).length;
  // Points of about equal cost split evenly, one piece per worker (each cut costs a lead-in solve);
  // uneven ones in two pieces per worker, so a worker that drew the cheap end can take more.
  const pendingCosts = [...pending].map((i) => costs[i]);
  const even = pendingCosts.length > 0 && Math.max(...pendingCosts) <= 1.5 * Math.min(...pendingCosts);
  const piecesPerLine = workers <= 1 ? 1 : Math.max(1, Math.ceil(((even ? 1 : 2) * workers) / Math.max(1, busyLines)));
  const tasks: PlannedTask[] = [];
  for (const line of plan.lines) {
    const pendingOnLine = line.filter((i) => pending.has(i)).length;
    const chunk = Math.max(1, Math.ceil(pendingOnLine / piecesPerLine));
    let run: ScanPoint[] = [];
    const flush = (): void => {
      for (let s = 0; s < run.length; s += chunk) {
        const points = run.slice(s, s + chunk);
        tasks.push({ points, cost: points.reduce((sum, p) => sum + costs[p.index], 0) });
      }
      run = [];
    };
    for (const index of line) {
      if (pending.has(index)) run.push(plan.points[index]);
      else flush();
    }
    flush();
  }
  // A task that starts inside a line gets the point before it as a lead-in, so the overlaps of
  // neighbours along the line have no holes where lines were cut or a run resumed.
  if (linesAreContinuous(plan)) {
    const before = new Map<number, number>();
    for (const line of plan.lines) line.forEach((index, k) => k > 0 && before.set(index, line[k - 1]));
    for (const task of tasks) {
      const lead = before.get(task.points[0].index);
      if (lead !== undefined) {
        task.leadIn = plan.points[lead];
        task.cost += costs[lead];
      }
    }
  }
  return tasks.sort((a, b) => b.cost - a.cost || a.points[0].index - b.points[0].index);
}
