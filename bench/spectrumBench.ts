// Part of `npm run bench` (issue 22): the spectrum of a drive on link 0 at q = 0 of a 12 x 4
// periodic chain (16.8 million states), after its ground state: the ground-state solve (in symmetry
// sectors, then expanded to the full basis) beside the continued fraction, its levels and the time
// per level. Also a 10 x 4 chain, with the curve's largest change between the full spectrum's last
// two level counts. Then finite temperature beside zero temperature on smaller chains of 3 levels:
// the exact method (every eigenpair per sector) and the finite-temperature Lanczos method, their
// times, weights with error bars, and the Lanczos curve's largest deviation from the exact one.
//
// usage: node dist/bench/spectrumBench.js [--sites 10,12] [--max-levels N] [--thermal-sites 6,8]

import { computeSpectrum } from '../src/spectrum/spectrum.js';
import { validateSpec } from '../src/spec/spec.js';
import { fmt, table } from '../src/format/tables.js';
import { formatBytes } from '../src/format/bytes.js';

function argument(name: string): string | undefined {
  const at = process.argv.indexOf(name);
  return at >= 0 ? process.argv[at + 1] : undefined;
}

const sizes = (argument('--sites') ?? '10,12').split(',').map(Number);
const maxLevels = Number(argument('--max-levels') ?? 400);

const rows: string[][] = [];
for (const sites of sizes) {
  const spec = validateSpec({
    chain: { sites, boundary: 'periodic' },
    levels: { count: 4, tunnelling: 1 },
    exchange: { strength: 1.5 },
    solve: { states: 1, tolerance: 1e-9, entanglement: 'none' },
    spectrum: {
      probe: { link: 0 },
      frequencies: { from: 0, to: 10, steps: 401 },
      broadening: 0.2,
      tolerance: 1e-4,
      max_levels: maxLevels,
    },
  });
  const { spectrum: s } = computeSpectrum(spec);
  const cf = s.continued_fraction;
  const strongest = [...s.lines].sort((a, b) => b.weight - a.weight)[0];
  rows.push([
    `${sites}x4`,
    String(s.dimension),
    fmt(s.seconds.ground_state, 3),
    fmt(s.seconds.spectrum, 3),
    fmt(s.seconds.spectrum / s.seconds.ground_state, 3),
    String(cf.levels),
    fmt(cf.seconds_per_level, 3),
    cf.check.toExponential(2),
    String(cf.converged),
    fmt(s.weight, 6),
    strongest ? `${fmt(strongest.position, 6)} (${fmt(strongest.weight, 4)})` : '-',
    formatBytes(process.memoryUsage().rss),
  ]);
  console.log(`${sites}x4 done`);
}
console.log(
  '\nspectrum of a drive on link 0, q = 0, periodic chains of 4 levels, J = 1, V = 1.5, Lorentzian 0.2, tolerance 1e-4',
);
console.log(
  table(
    [
      'chain',
      'dimension',
      'ground s',
      'spectrum s',
      'ratio',
      'levels',
      's/level',
      'check',
      'converged',
      'weight',
      'strongest line',
      'rss now',
    ],
    rows,
  ),
);

// Finite temperature beside zero temperature.
const thermalSizes = (argument('--thermal-sites') ?? '6,8').split(',').map(Number);
const hotRows: string[][] = [];
for (const sites of thermalSizes) {
  const raw = (temperature: number, method: string) => ({
    chain: { sites, boundary: 'periodic' },
    levels: { count: 3, tunnelling: 1 },
    exchange: { strength: 1.5 },
    solve: { states: 1, tolerance: 1e-9, entanglement: 'none' },
    spectrum: {
      probe: { link: 0 },
      frequencies: { from: -6, to: 8, steps: 281 },
      broadening: 0.2,
      tolerance: 1e-4,
      temperature,
      method,
    },
  });
  const cases: [string, number, string][] = [
    ['T = 0', 0, 'auto'],
    ['T = 1', 1, 'exact'],
    ['T = 1', 1, 'lanczos'],
  ];
  let exactCurve: number[] | null = null;
  for (const [label, temperature, method] of cases) {
    const { spectrum: s } = computeSpectrum(validateSpec(raw(temperature, method)));
    // The whole Lehmann sum, the elastic line drawn at 0: the Lanczos method splits the elastic part
    // off only where the Ritz values of its two chains agree, so only this compares across methods.
    const eta = s.broadening.lorentzian;
    const whole = s.intensity.map(
      (x, k) => x + (s.elastic_weight * eta) / Math.PI / (s.frequencies[k] ** 2 + eta * eta),
    );
    if (s.method === 'exact') exactCurve = whole;
    const peak = Math.max(...s.intensity);
    const at = s.intensity.indexOf(peak);
    const deviation =
      s.method === 'lanczos' && exactCurve
        ? fmt(Math.max(...whole.map((x, k) => Math.abs(x - exactCurve![k]))) / Math.max(...exactCurve), 3)
        : '-';
    const withError = (x: number, e: number) => (s.method === 'lanczos' ? `${fmt(x, 5)} +- ${fmt(e, 2)}` : fmt(x, 6));
    hotRows.push([
      `${sites}x3`,
      String(s.dimension),
      label,
      s.method,
      fmt(s.seconds.spectrum, 3),
      withError(s.weight, s.weight_error),
      withError(s.elastic_weight, s.elastic_weight_error),
      `${fmt(peak, 4)} at ${fmt(s.frequencies[at], 3)}${s.method === 'lanczos' ? ` +- ${fmt(s.intensity_error[at], 2)}` : ''}`,
      deviation,
      formatBytes(process.memoryUsage().rss),
    ]);
    console.log(`${sites}x3 ${label} ${s.method} done`);
  }
}
console.log(
  '\nfinite temperature beside zero: drive on link 0, q = 0, periodic chains of 3 levels, J = 1, V = 1.5, Lorentzian 0.2; Lanczos with 20 vectors, 100 steps',
);
console.log(
  table(
    [
      'chain',
      'dimension',
      'temperature',
      'method',
      'spectrum s',
      'weight',
      'elastic',
      'peak',
      'whole curve vs exact (of peak)',
      'rss now',
    ],
    hotRows,
  ),
);
