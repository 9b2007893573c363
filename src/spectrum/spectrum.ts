// Linear-response spectra at zero temperature (issue 22, docs/model.md "Spectra"):
//     A(omega) = (1/g) sum_k sum_{n outside the ground space} |<n|O|psi_k>|^2 delta(omega - (E_n - E_0))
// over the g copies psi_k of the ground level, by the Lanczos continued fraction started from the
// connected part (1 - P_0) O |psi_k> of each copy. The elastic part |<0|O|0>|^2 = ||P_0 O psi_k||^2
// (averaged) is reported on its own. The ground state comes from solvePoint, expanded to the full
// basis when it was found in symmetry sectors; the continued fraction runs on the full space.
// At spectrum.temperature > 0 the Boltzmann-weighted Lehmann sum replaces it (./thermalSpectrum.ts).

import { buildBasis, type Basis } from '../basis/basis.js';
import { ConvergenceError, ResourceError, SpecError } from '../errors/errors.js';
import { buildOperator } from '../operator/build.js';
import { planFockOperator } from '../operator/fock.js';
import { defaultProductThreads, withThreads } from '../operator/threaded.js';
import { VectorArena } from '../simd/arena.js';
import {
  assertWithinMemory,
  defaultMemoryLimit,
  largestSector,
  RUNTIME_BASELINE_BYTES,
  type MemoryEstimate,
} from '../point/memory.js';
import {
  planPoint,
  solvePoint,
  type PointPlan,
  type PointRecord,
  type SolvedPoint,
  type SolveOptions,
} from '../point/solvePoint.js';
import { latticeOf } from '../spec/lattice.js';
import type { Spec } from '../spec/spec.js';
import type { SpectrumSection } from '../spec/spectrumSection.js';
import { labUnits } from '../spec/units.js';
import { buildModel, type Model } from '../model/model.js';
import { basisDimension } from '../basis/basis.js';
import { applyProbe, buildProbe, type Probe } from './probe.js';
import { splitIntoSectors } from './sectors.js';
import { runPiece, type Collected, type RunOutcome } from './runs.js';
import { thermalSpectrum, thermalSpectrumMethod } from './thermalSpectrum.js';
import { buildSectorOperator } from '../symmetry/sectorOperator.js';
import type { SectorLabel, SymmetryName } from '../symmetry/group.js';
import {
  complexDotInto,
  dotRe,
  FULL_ORTHOGONALIZATION_DOUBLES,
  strongestLines,
  weightInside,
  type LineShape,
} from './continuedFraction.js';

/** A connected weight below this fraction of <O+ O> is rounding of an exact zero: no lines. */
const ZERO_WEIGHT = 1e-12;

export interface SpectrumResult {
  probe: {
    kind: 'drive' | 'level' | 'coordinate';
    link: number | null;
    level: number | null;
    phase: number;
    sites: number[] | 'all';
    momentum: number | number[];
    /** The wave vector q, radians per lattice step, one per lattice direction. */
    q: number[];
  };
  /** In `temperature_unit`; 0 for the ground state. */
  temperature: number;
  temperature_unit: 'model' | 'nK' | 'kHz';
  /** k_B T in model units. */
  temperature_model: number;
  /** The continued fraction from the ground level (T = 0), or the finite-temperature method. */
  method: 'continued_fraction' | 'exact' | 'lanczos';
  /** Finite-temperature Lanczos only: random vectors, steps per chain, seed. */
  thermal: { vectors: number; steps: number; seed: number } | null;
  frequency_unit: 'model' | 'khz';
  broadening: { lorentzian: number; gaussian: number };
  frequencies: number[];
  /** A(omega) per frequency unit: integrates to `weight` over the whole axis. */
  intensity: number[];
  /** One standard error per frequency: the jackknife over random vectors (Lanczos at T > 0), else 0. */
  intensity_error: number[];
  /**
   * The strongest lines: position (E_n - E_0 in the frequency unit), weight, and the Ritz residual
   * (an eigenvalue of H lies within it of the position; 0 for exact lines).
   */
  lines: { position: number; weight: number; residual: number }[];
  /** The sum rule: <O+ O> - |<0|O|0>|^2, the connected weight the lines carry. */
  weight: number;
  elastic_weight: number;
  /** <O+ O> in the ground level (at T > 0: in the thermal state). */
  total_weight: number;
  /** Standard errors of the three weights (Lanczos at T > 0), else 0. */
  weight_error: number;
  elastic_weight_error: number;
  total_weight_error: number;
  /** The sum of every pole's weight (equal to `weight` up to rounding). */
  lines_weight: number;
  /** The part of the broadened curve inside the frequency window [from, to]. */
  window_weight: number;
  ground_energy: number;
  ground_copies: number;
  /** False when the ground level may have copies the solve did not find (then the average covers those found). */
  ground_copies_complete: boolean;
  continued_fraction: {
    /** Levels of the final curve (per copy of the ground level, the largest). */
    levels: number;
    /** The curve's largest change between the last two level counts, relative to its peak (0 when exact). */
    check: number;
    tolerance: number;
    converged: boolean;
    /** The Krylov space of every start vector was exhausted: the poles are the exact lines. */
    exact: boolean;
    orthogonalization: 'full' | 'none';
    /** The symmetry sectors the continued fraction ran in (one run per sector and ground copy), or null for the full space. */
    sectors: SectorLabel[] | null;
    products: number;
    seconds_per_level: number;
  };
  dimension: number;
  seconds: { ground_state: number; spectrum: number };
}

export interface SpectrumOutcome {
  spectrum: SpectrumResult;
  record: PointRecord;
}

/** The spec's [spectrum] section, or an error saying it is missing. */
export function spectrumSection(spec: Spec): SpectrumSection {
  const section = spec.extra.spectrum as SpectrumSection | undefined;
  if (!section)
    throw new SpecError('spectrum', 'the spec has no [spectrum] section: add one with probe and frequencies');
  return section;
}

/** Solves the ground state of `spec` and computes the spectrum its [spectrum] section asks for. */
export function computeSpectrum(spec: Spec, options: SolveOptions = {}): SpectrumOutcome {
  prepareSpectrum(spec, options);
  const solved = solvePoint(spec, { ...options, keepStates: 'ground' });
  return { record: solved.record, spectrum: spectrumOfSolved(spec, solved, options) };
}

/**
 * The checks to make before the ground state is solved: the probe against the geometry (a
 * SpecError naming its key) and the spectrum's memory beside one ground copy.
 */
export function prepareSpectrum(spec: Spec, options: SolveOptions = {}): void {
  const section = spectrumSection(spec);
  const model = buildModel(spec);
  buildProbe(section.probe, model, buildBasis(model), latticeOf(spec));
  const limit = options.maxMemory ?? defaultMemoryLimit();
  assertWithinMemory(
    spectrumMemory(spec, planPoint(spec, { maxMemory: limit })),
    limit,
    'the spectrum',
    options.memoryLimitName,
  );
}

/** The spectrum of a point solved with `keepStates: 'ground'` (its ground copies on the full basis). */
export function spectrumOfSolved(
  spec: Spec,
  solved: SolvedPoint,
  options: Pick<SolveOptions, 'maxMemory' | 'memoryLimitName' | 'threads'> = {},
): SpectrumResult {
  const section = spectrumSection(spec);
  const model = buildModel(spec);
  const basis = buildBasis(model);
  const probe = buildProbe(section.probe, model, basis, latticeOf(spec));
  const limit = options.maxMemory ?? defaultMemoryLimit();
  const record = solved.record;
  const groundSeconds = record.solver.seconds;
  if (section.modelTemperature > 0)
    return finiteTemperature(spec, section, model, basis, probe, groundSeconds, limit, options);
  if (!record.solver.converged)
    throw new ConvergenceError(
      `the ground state did not converge to solve.tolerance ${spec.solve.tolerance}: its spectrum would not mean much`,
    );
  const ground = solved.kept?.vectors ?? solved.groundStates;
  if (ground.length === 0) throw new ResourceError('the ground states could not be kept on the full space');
  const sectorsUsed = record.solver.symmetries?.length
    ? (Object.fromEntries(
        (['translation', 'reflection', 'level_flip', 'charge'] as SymmetryName[]).map((n) => [
          n,
          record.solver.symmetries!.includes(n),
        ]),
      ) as Record<SymmetryName, boolean>)
    : null;
  assertWithinMemory(
    estimateSpectrumMemory(model, ground.length, section, sectorsUsed),
    limit,
    'the spectrum',
    options.memoryLimitName,
  );
  const started = performance.now();
  const dim = basis.dim;
  const e0 = record.energies[0];

  // O psi_k for every copy, then its parts inside and outside the ground space.
  const groundComplex = ground.map((g) => (g.length === 2 * dim ? g : toInterleaved(g, dim)));
  const probed = groundComplex.map((g) => {
    const out = new Float64Array(2 * dim);
    applyProbe(probe, basis, g, out);
    return out;
  });
  const c = new Float64Array(2);
  let elastic = 0;
  let total = 0;
  for (const phi of probed) {
    total += dotRe(phi, phi);
    // Twice, so the rounding of the first projection is removed too.
    for (let pass = 0; pass < 2; pass++) {
      for (const g of groundComplex) {
        complexDotInto(g, phi, c);
        if (pass === 0) elastic += c[0] * c[0] + c[1] * c[1];
        for (let k = 0; k < phi.length; k += 2) {
          phi[k] -= c[0] * g[k] - c[1] * g[k + 1];
          phi[k + 1] -= c[0] * g[k + 1] + c[1] * g[k];
        }
      }
    }
  }
  const copies = ground.length;
  elastic /= copies;
  total /= copies;
  const connected = probed.map((phi) => dotRe(phi, phi));
  const weight = connected.reduce((a, b) => a + b, 0) / copies;

  const unitScale = frequencyScale(spec, section);
  const shape: LineShape = { lorentzian: section.lorentzian, gaussian: section.gaussian };
  const frequencies = Float64Array.from(
    { length: section.steps },
    (_, k) => section.from + ((section.to - section.from) * k) / (section.steps - 1),
  );
  const zero = ZERO_WEIGHT * Math.max(total, Number.MIN_VALUE);
  const threadsFor = (work: number) =>
    Math.max(
      1,
      Math.min(
        spec.solve.threads === 'auto' ? defaultProductThreads(work) : spec.solve.threads,
        options.threads ?? Infinity,
      ),
    );
  // One Lanczos run per start vector: per ground copy, and per symmetry sector it reaches when the
  // ground state was solved in sectors (the sector's stored matrix is much smaller than the space).
  const symmetries = record.solver.symmetries ?? [];
  const sectorPieces =
    basis.kind === 'pinned' && symmetries.length > 0 ? splitIntoSectors(model, basis, symmetries, probed, zero) : null;
  const runs: RunOutcome[] = [];
  const collected: Collected = { positions: [], weights: [], residuals: [], curve: new Float64Array(section.steps) };
  const settings = { section, frequencies, shape, e0, unitScale };
  if (sectorPieces && basis.kind === 'pinned') {
    for (const group of sectorPieces.groups) {
      const arena = VectorArena.acquire();
      const stored = buildSectorOperator(model, basis, group.sector, arena);
      const threaded = withThreads(stored, threadsFor(stored.nonzeros()));
      try {
        for (const piece of group.pieces)
          runs.push(runPiece(threaded, arena, piece.coefficients, piece.weight / copies, settings, collected));
      } finally {
        threaded.close();
        arena?.recycle();
      }
    }
  } else {
    // A stored matrix is built in an arena and vectors are kept in one, so products run in WebAssembly.
    const arena = VectorArena.acquire();
    const op = buildOperator(model, basis, basis.kind === 'pinned' ? null : arena);
    const threaded = withThreads(op, threadsFor(op.nonzeros()), model, basis.kind === 'pinned' ? basis : undefined);
    try {
      probed.forEach((phi, k) => {
        if (connected[k] <= zero) return;
        runs.push(runPiece(threaded, arena, phi, connected[k] / copies, settings, collected));
      });
    } finally {
      threaded.close();
      arena?.recycle();
    }
  }
  const curve = collected.curve;
  const exact = runs.every((r) => r.exact);
  const check = exact ? 0 : Math.max(0, ...runs.map((r) => r.check));
  const used = Math.max(0, ...runs.map((r) => r.levels));
  const poles = collected;
  // Ghost copies from a run without full orthogonalization sit within rounding of the true line.
  const scale = Math.max(1, ...poles.positions.map(Math.abs));
  const lines = strongestLines(poles.positions, poles.weights, poles.residuals, 1e-8 * scale, section.lines).filter(
    (l) => l.weight > zero,
  );
  const full = runs.every((r) => r.full);
  const products = runs.reduce((sum, r) => sum + r.products, 0);
  const spectrumSeconds = (performance.now() - started) / 1000;
  const p = section.probe;
  return {
    probe: {
      kind: p.kind,
      link: p.link,
      level: p.level,
      phase: p.phase,
      sites: p.sites ?? 'all',
      momentum: p.momentum,
      q: probe.wavevector,
    },
    temperature: 0,
    temperature_unit: section.temperatureUnit,
    temperature_model: 0,
    method: 'continued_fraction',
    thermal: null,
    intensity_error: new Array<number>(section.steps).fill(0),
    weight_error: 0,
    elastic_weight_error: 0,
    total_weight_error: 0,
    frequency_unit: section.frequencyUnit,
    broadening: shape,
    frequencies: Array.from(frequencies),
    intensity: Array.from(curve),
    lines,
    weight,
    elastic_weight: elastic,
    total_weight: total,
    lines_weight: poles.weights.reduce((a, b) => a + b, 0),
    window_weight: weightInside(poles.positions, poles.weights, section.from, section.to, shape),
    ground_energy: e0,
    ground_copies: copies,
    ground_copies_complete: record.solver.degeneracy_complete,
    continued_fraction: {
      levels: used,
      check,
      tolerance: section.tolerance,
      converged: runs.every((r) => r.converged),
      sectors: sectorPieces ? sectorPieces.labels : null,
      exact,
      orthogonalization: full ? 'full' : 'none',
      products,
      seconds_per_level: products > 0 ? spectrumSeconds / products : 0,
    },
    dimension: dim,
    seconds: { ground_state: groundSeconds, spectrum: spectrumSeconds },
  };
}

/** The spectrum at spectrum.temperature > 0: the exact Lehmann sum or the finite-temperature Lanczos method. */
function finiteTemperature(
  spec: Spec,
  section: SpectrumSection,
  model: Model,
  basis: Basis,
  probe: Probe,
  groundSeconds: number,
  limit: number,
  options: Pick<SolveOptions, 'memoryLimitName'>,
): SpectrumResult {
  const plan = planPoint(spec, { maxMemory: limit });
  const method = finiteTemperatureMethod(section, plan);
  assertWithinMemory(spectrumMemory(spec, plan), limit, 'the spectrum', options.memoryLimitName);
  const started = performance.now();
  const unitScale = frequencyScale(spec, section);
  const shape: LineShape = { lorentzian: section.lorentzian, gaussian: section.gaussian };
  const frequencies = Float64Array.from(
    { length: section.steps },
    (_, k) => section.from + ((section.to - section.from) * k) / (section.steps - 1),
  );
  const t = thermalSpectrum({
    model,
    basis,
    probe,
    section,
    symmetries: basis.kind === 'pinned' ? plan.used : null,
    method,
    frequencies,
    shape,
    unitScale,
  });
  // a loop, not a spread: the exact method may list millions of pairs
  let scale = 1;
  for (const x of t.positions) scale = Math.max(scale, Math.abs(x));
  const zero = ZERO_WEIGHT * Math.max(Math.abs(t.total), Number.MIN_VALUE);
  const lines = strongestLines(t.positions, t.weights, t.residuals, 1e-8 * scale, section.lines).filter(
    (l) => l.weight > zero,
  );
  const runs = t.runs ?? [];
  const spectrumSeconds = (performance.now() - started) / 1000;
  const p = section.probe;
  return {
    probe: {
      kind: p.kind,
      link: p.link,
      level: p.level,
      phase: p.phase,
      sites: p.sites ?? 'all',
      momentum: p.momentum,
      q: probe.wavevector,
    },
    temperature: section.temperature,
    temperature_unit: section.temperatureUnit,
    temperature_model: section.modelTemperature,
    method: t.method,
    thermal:
      t.method === 'lanczos' ? { vectors: section.vectors, steps: section.thermalSteps, seed: section.seed } : null,
    frequency_unit: section.frequencyUnit,
    broadening: shape,
    frequencies: Array.from(frequencies),
    intensity: Array.from(t.curve),
    intensity_error: Array.from(t.curveError),
    lines,
    weight: t.weight,
    elastic_weight: t.elastic,
    total_weight: t.total,
    weight_error: t.weightError,
    elastic_weight_error: t.elasticError,
    total_weight_error: t.totalError,
    lines_weight: t.linesWeight,
    window_weight: weightInside(t.positions, t.weights, section.from, section.to, shape),
    ground_energy: t.groundEnergy,
    ground_copies: t.groundCopies,
    ground_copies_complete: true,
    continued_fraction: {
      levels: Math.max(0, ...runs.map((r) => r.levels)),
      check: Math.max(0, ...runs.map((r) => (r.exact ? 0 : r.check))),
      tolerance: section.tolerance,
      converged: runs.every((r) => r.converged),
      exact: t.method === 'exact' || runs.every((r) => r.exact),
      orthogonalization: 'full',
      sectors: t.sectors,
      products: t.products,
      seconds_per_level: t.products > 0 ? spectrumSeconds / t.products : 0,
    },
    dimension: basis.dim,
    seconds: { ground_state: groundSeconds, spectrum: spectrumSeconds },
  };
}

/** The finite-temperature method for a point: `auto` by the largest block's real-form size. */
function finiteTemperatureMethod(section: SpectrumSection, plan: PointPlan): 'exact' | 'lanczos' {
  const model = plan.model;
  const largest =
    plan.used && model.kind === 'pinned'
      ? largestSector(plan.dimension, model, plan.used).entries
      : plan.dimension * (model.isComplex ? 2 : 1);
  return thermalSpectrumMethod(section, largest);
}

/** Model energies to the output's frequency unit: 1, or the energy unit in kHz. */
function frequencyScale(spec: Spec, section: SpectrumSection): number {
  if (section.frequencyUnit === 'model') return 1;
  return labUnits(spec)!.energyUnitHz / 1e3;
}

/** The memory the spectrum of `spec` takes after its point's solve (`check`, scans, and before solving). */
export function spectrumMemory(spec: Spec, plan: PointPlan): MemoryEstimate {
  const section = spectrumSection(spec);
  if (section.modelTemperature > 0) return thermalSpectrumMemory(plan, section, finiteTemperatureMethod(section, plan));
  return estimateSpectrumMemory(plan.model, 1, section, plan.used);
}

/**
 * Peak memory of a finite-temperature spectrum. Exact: every block's eigenvectors (at most the
 * dimension times the largest block, real form), the largest dense block in the eigensolver, and
 * the lines (a pair of states each, at most dimension times the largest block, with what
 * listing the strongest needs). Lanczos: the full-space operator, the two kept chains of complex vectors, the ground copies.
 */
function thermalSpectrumMemory(plan: PointPlan, section: SpectrumSection, method: 'exact' | 'lanczos'): MemoryEstimate {
  const model = plan.model;
  const dim = plan.dimension;
  const vector = 16 * dim;
  const parts: Record<string, number> = { runtime: RUNTIME_BASELINE_BYTES };
  if (method === 'exact') {
    const block =
      plan.used && model.kind === 'pinned'
        ? largestSector(dim, model, plan.used).entries
        : dim * (model.isComplex ? 2 : 1);
    parts.dense_block = 4 * block * block * 8;
    parts.eigenvectors = dim * block * 8;
    // per pair of states: position, weight, residual, the sort's index and its merged line
    parts.lines = 60 * dim * block;
    parts.probed_states = 2 * vector;
    if (plan.used) parts.orbit_maps = 2 * dim * 6;
  } else {
    parts.operator = model.kind === 'pinned' ? 8 * dim : planFockOperator(model, dim).bytes;
    parts.chains = (2 * Math.min(section.thermalSteps, dim) + 4) * vector;
    parts.ground_level = 2 * vector;
    // a line per pair of Ritz values per random vector: position, weight, residual, its copy for
    // the round's curve, and what listing the strongest takes
    parts.lines = section.vectors * Math.min(section.thermalSteps, dim) ** 2 * 100;
  }
  return { parts, totalBytes: Object.values(parts).reduce((x, y) => x + y, 0) };
}

/**
 * Peak memory of the spectrum after the ground solve: the ground copies kept on the full basis and
 * O psi of each (complex), then either the full-space operator with one run's Lanczos vectors, or
 * (symmetry sectors in use) the orbit maps, every copy's sector parts (together at most the full
 * vector) and the largest sector's stored matrix with its Lanczos vectors.
 */
export function estimateSpectrumMemory(
  model: Model,
  copies: number,
  section: SpectrumSection,
  used: Record<SymmetryName, boolean> | null,
): MemoryEstimate {
  const dim = basisDimension(model);
  const vector = 16 * dim;
  const parts: Record<string, number> = {
    runtime: RUNTIME_BASELINE_BYTES,
    ground_states: copies * vector,
    probed_states: copies * vector,
  };
  const lanczosFor = (length: number) =>
    2 * length * Math.min(section.maxLevels, length + 1) <= FULL_ORTHOGONALIZATION_DOUBLES
      ? 8 * FULL_ORTHOGONALIZATION_DOUBLES
      : 6 * 16 * length; // three vectors, the real product's two buffers, rounding up
  if (used && model.kind === 'pinned') {
    const { sectorDim, nnz } = largestSector(dim, model, used);
    parts.orbit_maps = 2 * dim * 6;
    parts.sector_parts = copies * vector;
    parts.sector_matrix = 2 * (nnz * (4 + 16) + 8 * (sectorDim + 1));
    parts.lanczos = lanczosFor(sectorDim);
  } else {
    parts.operator = model.kind === 'pinned' ? 8 * dim : planFockOperator(model, dim).bytes;
    parts.lanczos = lanczosFor(dim);
  }
  return { parts, totalBytes: Object.values(parts).reduce((x, y) => x + y, 0) };
}

function toInterleaved(v: Float64Array, dim: number): Float64Array {
  const out = new Float64Array(2 * dim);
  for (let s = 0; s < dim; s++) out[2 * s] = v[s];
  return out;
}
