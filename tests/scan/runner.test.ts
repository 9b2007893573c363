import os from 'node:os';
import { describe, expect, it } from 'vitest';
import { chooseParallelism } from '../../src/scan/runner.js';

// The split of cores between points and products (common practice: parallelize the outer loop when
// it has enough independent work, the inner one when it does not).
describe('point-parallel or product-parallel', () => {
  const cores = Math.max(1, os.availableParallelism());
  it('many similar points: one worker per core, one thread per product', () => {
    expect(chooseParallelism(Array(40).fill(1000))).toEqual({
      workers: Math.min(cores, 40),
      threadsPerPoint: Math.max(1, Math.floor(cores / Math.min(cores, 40))),
    });
  });
  it('a single point gets every core for its products', () => {
    expect(chooseParallelism([5e7])).toEqual({ workers: 1, threadsPerPoint: cores });
  });
  it('one point heavier than all the others together runs alone with every core', () => {
    expect(chooseParallelism([1e9, 1e3, 1e3])).toEqual({ workers: 1, threadsPerPoint: cores });
  });
  it('an explicit worker count is kept, and spare cores go to the products', () => {
    expect(chooseParallelism(Array(10).fill(1), 1)).toEqual({ workers: 1, threadsPerPoint: cores });
  });
});
