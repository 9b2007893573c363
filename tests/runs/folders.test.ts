// The default run folder: the same spec (and shard) gives the same folder, so the same command resumes.
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { defaultRunDir } from '../../src/runs/folders.js';

describe('defaultRunDir', () => {
  const identity = '0123456789abcdef';

  it('runs/<spec name without .toml or .json>-<first 8 characters of the identity>', () => {
    expect(defaultRunDir('specs/chain.toml', identity)).toBe(path.join('runs', 'chain-01234567'));
    expect(defaultRunDir('/abs/Chain.JSON', identity)).toBe(path.join('runs', 'Chain-01234567'));
    expect(defaultRunDir('notes.txt', identity)).toBe(path.join('runs', 'notes.txt-01234567'));
  });

  it('a shard gets a folder of its own below the scan folder', () => {
    expect(defaultRunDir('chain.toml', identity, { index: 2, count: 5 })).toBe(
      path.join('runs', 'chain-01234567', 'shard-2of5'),
    );
    expect(defaultRunDir('chain.toml', identity, null)).toBe(path.join('runs', 'chain-01234567'));
  });
});
