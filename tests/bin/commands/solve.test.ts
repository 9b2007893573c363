// `solve --save-states` and `check --save-states` as a user runs them (the built command line).
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runCli } from '../../support/cli.js';
import { FileSystemError } from '../../../src/errors/errors.js';
import { assertWritableFile } from '../../../src/point/stateFile.js';
import { planPoint } from '../../../src/point/solvePoint.js';
import { validateSpec } from '../../../src/spec/spec.js';

const folder = fs.mkdtempSync(path.join(os.tmpdir(), 'rungchain-save-'));
afterAll(() => fs.rmSync(folder, { recursive: true, force: true }));

// A real open chain solved on the full space: 3^3 = 27 columns of float64.
const spec = path.join(folder, 'chain.json');
fs.writeFileSync(
  spec,
  JSON.stringify({
    chain: { sites: 3 },
    levels: { count: 3, tunnelling: 0.6, detuning: [0, 0.3, -0.1] },
    exchange: { strength: 1.1 },
    solve: { states: 3, symmetries: 'none' },
  }),
);

describe('solve --save-states', () => {
  it('check says the size solve then writes: rows x dim x 8 bytes plus the 128-byte header', () => {
    // NumPy's format: 10 preamble bytes and the dict padded to a multiple of 64 (here 128 in all).
    const expected = 128 + 3 * 27 * 8;
    const check = runCli(['check', spec, '--save-states', path.join(folder, 'x.npy'), '--save-states-all']);
    expect(check.code).toBe(0);
    expect(check.stdout).toContain(`(${expected} bytes) for 3 solved states`);
    const file = path.join(folder, 'all.npy');
    const solve = runCli(['solve', spec, '--save-states', file, '--save-states-all']);
    expect(solve.code).toBe(0);
    expect(fs.statSync(file).size).toBe(expected);
    const sidecar = JSON.parse(fs.readFileSync(`${file}.json`, 'utf8'));
    expect(sidecar.shape).toEqual([3, 27]);
    expect(sidecar.dtype).toBe('float64');
    expect(sidecar.basis.ordering).toMatch(/site 0 fastest/);

    const ground = path.join(folder, 'ground.npy');
    expect(runCli(['solve', spec, '--save-states', ground]).code).toBe(0);
    expect(fs.statSync(ground).size).toBe(128 + 27 * 8);
  });

  it('a path that cannot be written is refused before solving, naming it, with exit code 2', () => {
    const bad = path.join(folder, 'no-such-folder', 'states.npy');
    const r = runCli(['solve', spec, '--save-states', bad]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(bad);
    expect(() => assertWritableFile(bad)).toThrow(FileSystemError);
    expect(() => assertWritableFile(folder)).toThrow(FileSystemError);
  });

  // A chain with nothing on (no tunnelling, no exchange) has H = 0: every basis state is a ground
  // state, a ground level of levels^sites copies (elementary).
  const flat = (sites: number) => {
    const file = path.join(folder, `flat${sites}.json`);
    fs.writeFileSync(
      file,
      JSON.stringify({
        chain: { sites, boundary: 'periodic' },
        levels: { count: 2, tunnelling: 0 },
        exchange: { strength: 0 },
        solve: { states: 1 },
      }),
    );
    return file;
  };

  it('a ground level with more copies than are expanded is refused naming --save-states, exit code 2', () => {
    // 2^7 = 128 copies, more than the 64 ever expanded to the full space.
    const r = runCli(['solve', flat(7), '--save-states', path.join(folder, 'flat7.npy')]);
    expect(r.code).toBe(2);
    expect(r.stderr.trim()).toBe(
      'rungchain: the ground level has 128 copies, more than the 64 that are ever expanded to the full space; --save-states cannot save its states',
    );
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
  });

  it('a ground level with more copies than fit in the memory limit is refused naming --save-states', () => {
    const file = flat(4);
    // Without a tight limit its 2^4 = 16 copies are saved.
    const saved = path.join(folder, 'flat4.npy');
    expect(runCli(['solve', file, '--save-states', saved]).code).toBe(0);
    expect(JSON.parse(fs.readFileSync(`${saved}.json`, 'utf8')).shape).toEqual([16, 16]);
    // A limit 100 bytes above the estimate leaves room for no copy beyond the one state asked for.
    const estimate = planPoint(validateSpec(JSON.parse(fs.readFileSync(file, 'utf8'))), {
      groundStates: false,
      keepStates: 'ground',
    }).memory.totalBytes;
    const r = runCli(['solve', file, '--save-states', saved, '--max-memory', String(estimate + 100)]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(
      'the ground level has 16 copies, more than the 1 that fit in memory on the full space; --save-states cannot save its states',
    );
  });

  it('--save-states-all alone names the option it needs', () => {
    const r = runCli(['solve', spec, '--save-states-all']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('--save-states FILE');
  });
});
