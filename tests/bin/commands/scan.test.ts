// Where a scan's shard comes from: --shard i/n, or the batch scheduler's array variables.
import { describe, expect, it } from 'vitest';
import { parseShard, shardFromEnvironment } from '../../../bin/commands/scan.js';

describe('the shard of a scan', () => {
  it('i/n parsing and the Slurm array variables', () => {
    expect(parseShard('2/5')).toMatchObject({ index: 2, count: 5 });
    expect(() => parseShard('0/5')).toThrow(/1 <= i <= n/);
    expect(() => parseShard('6/5')).toThrow(/1 <= i <= n/);
    expect(shardFromEnvironment({})).toBeNull();
    // Slurm's sbatch documentation: array tasks get SLURM_ARRAY_TASK_ID, _MIN, _MAX and _COUNT.
    expect(
      shardFromEnvironment({ SLURM_ARRAY_TASK_ID: '7', SLURM_ARRAY_TASK_MIN: '5', SLURM_ARRAY_TASK_COUNT: '4' }),
    ).toMatchObject({ index: 3, count: 4 });
    expect(
      shardFromEnvironment({ SLURM_ARRAY_TASK_ID: '0', SLURM_ARRAY_TASK_MIN: '0', SLURM_ARRAY_TASK_COUNT: '2' }),
    ).toMatchObject({ index: 1, count: 2 });
    expect(() =>
      shardFromEnvironment({ SLURM_ARRAY_TASK_ID: '9', SLURM_ARRAY_TASK_MIN: '0', SLURM_ARRAY_TASK_COUNT: '2' }),
    ).toThrow(/contiguous/);
  });
});
