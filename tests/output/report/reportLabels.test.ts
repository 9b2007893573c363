import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { renderReport } from '../../../src/output/report/report.js';
import { reportInputFromRun } from '../../../src/output/report/reportInputFromRun.js';
import { loadScanRun } from '../../../src/scan/scanRun.js';
import { runCli } from '../../support/cli.js';

// Labels a physicist reads: V is "dipolar exchange" only when the exchange has its dipolar tail,
// and the low-spectrum lines are states counted by n (on a ring "k" would read as a momentum).

function reportFor(range: 'nearest' | 'dipolar'): string {
  const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-labels-'));
  const spec = path.join(dir, `${range}.toml`);
  writeFileSync(
    spec,
    `[chain]\nsites = 4\nboundary = "periodic"\n[levels]\ncount = 2\ntunnelling = 1\n[exchange]\nstrength = 1.0\nrange = "${range}"\n` +
      '[solve]\nstates = 3\n[[scan.axis]]\nkey = "exchange.strength"\nvalues = [0.5, 1, 2]\n',
  );
  const out = path.join(dir, 'run');
  expect(runCli(['scan', spec, '--out', out, '--quiet']).code).toBe(0);
  return renderReport(reportInputFromRun(loadScanRun(out)));
}

describe('report labels', () => {
  it('nearest-neighbour exchange is labelled "V, exchange", dipolar exchange "V, dipolar exchange"', () => {
    const nearest = reportFor('nearest');
    expect(nearest).toContain('V, exchange [');
    expect(nearest).not.toContain('dipolar exchange');
    expect(reportFor('dipolar')).toContain('V, dipolar exchange [');
  });

  it('the low spectrum names its lines "state n"', () => {
    const html = reportFor('nearest');
    expect(html).toContain('state 1');
    expect(html).toContain('state 2');
    expect(html).not.toMatch(/k = \d/);
  });
});
