// One scan task run in this thread: points in order, each announced, solved and recorded, and the
// fault-injection seam tests/support/faults.mjs relies on called around every point.
import type { MessagePort } from 'node:worker_threads';
import { afterEach, describe, expect, it } from 'vitest';
import { runScanTask, setScanTaskHooks, startVector, type ScanTask, type TaskMessage } from '../../src/scan/task.js';

const raw = (strength: number) => ({
  chain: { sites: 3 },
  levels: { count: 2, tunnelling: 0.5 },
  exchange: { strength },
  solve: { states: 2 },
});

function task(strengths: number[]): ScanTask {
  return {
    points: strengths.map((V, index) => ({ index, params: { 'exchange.strength': V }, raw: raw(V) })),
    maxMemory: 2 ** 30,
    warmStart: true,
    // Messages go to the post callback below, never to a port.
    port: null as unknown as MessagePort,
  };
}

afterEach(() => setScanTaskHooks({}));

describe('runScanTask', () => {
  it('announces, solves and records every point in order; the first of a line has no overlap', () => {
    const messages: TaskMessage[] = [];
    expect(runScanTask(task([0.5, 1]), (m) => messages.push(m))).toBe(2);
    expect(messages.map((m) => (m.kind === 'start' ? `start ${m.index}` : `record ${m.record.index}`))).toEqual([
      'start 0',
      'record 0',
      'start 1',
      'record 1',
    ]);
    const records = messages.flatMap((m) => (m.kind === 'record' ? [m.record] : []));
    expect(records.map((r) => r.status)).toEqual(['done', 'done']);
    expect(records[0].overlap_previous).toBeNull();
    expect(records[1].overlap_previous).toBeGreaterThan(0);
    expect(records[1].overlap_previous).toBeLessThanOrEqual(1 + 1e-12);
  });

  it('calls the hooks after a point is announced and before its record is posted', () => {
    const events: string[] = [];
    setScanTaskHooks({
      pointStarting: (index) => events.push(`starting ${index}`),
      pointFinished: (index) => events.push(`finished ${index}`),
    });
    runScanTask(task([0.5, 1]), (m) =>
      events.push(m.kind === 'start' ? `start ${m.index}` : `record ${m.record.index}`),
    );
    expect(events).toEqual([
      'start 0',
      'starting 0',
      'finished 0',
      'record 0',
      'start 1',
      'starting 1',
      'finished 1',
      'record 1',
    ]);
  });
});

describe('startVector', () => {
  it('the normalized sum of the low eigenvectors', () => {
    const s = startVector([Float64Array.from([1, 0]), Float64Array.from([0, 1])])!;
    expect(s[0]).toBeCloseTo(Math.SQRT1_2, 15);
    expect(s[1]).toBeCloseTo(Math.SQRT1_2, 15);
    expect(startVector([])).toBeUndefined();
  });
});
