// One continued-fraction run from a start vector, doubling its levels until the broadened curve
// stops changing (src/spectrum/continuedFraction.ts has the recurrence); used by the ground-state
// spectrum per copy and sector, and by the finite-temperature one per exact low state.

import type { HermitianOperator } from '../operator/hermitian.js';
import { ThreadedOperator } from '../operator/threaded.js';
import type { VectorArena } from '../simd/arena.js';
import type { SpectrumSection } from '../spec/spectrumSection.js';
import {
  broadenedCurve,
  chainPoles,
  FULL_ORTHOGONALIZATION_DOUBLES,
  LanczosChain,
  productOn,
  type LineShape,
} from './continuedFraction.js';

/** Levels of the first curve; each further one doubles them. */
const FIRST_LEVELS = 32;

/** Every run's poles (on the frequency axis) and the sum of their curves. */
export interface Collected {
  positions: number[];
  weights: number[];
  residuals: number[];
  curve: Float64Array;
}

export interface RunOutcome {
  levels: number;
  check: number;
  converged: boolean;
  exact: boolean;
  full: boolean;
  products: number;
}

export interface RunSettings {
  section: SpectrumSection;
  frequencies: Float64Array;
  shape: LineShape;
  e0: number;
  unitScale: number;
}

/**
 * One continued fraction from `start` (interleaved complex, of the operator's dimension) carrying
 * `weight`: levels double from FIRST_LEVELS until its curve changes by at most the tolerance
 * relative to the larger of its own peak and the peak of the runs before it (runs of tiny weight do
 * not chase their own rounding), the Krylov space is exhausted, or max_levels is reached. Its poles
 * and curve are added to `collected`.
 */
export function runPiece(
  op: HermitianOperator,
  arena: VectorArena | null,
  start: Float64Array,
  weight: number,
  settings: RunSettings,
  collected: Collected,
): RunOutcome {
  const { section, frequencies, shape, e0, unitScale } = settings;
  const dim = op.dim;
  const complex = op.isComplex || !imaginaryZero(start);
  const home = op instanceof ThreadedOperator && op.arena ? op.arena : arena;
  const allocate = (n: number) => (home ? home.vector(n) : new Float64Array(n));
  const length = (complex ? 2 : 1) * dim;
  const full = length * Math.min(section.maxLevels, dim + 1) <= FULL_ORTHOGONALIZATION_DOUBLES;
  const chain = new LanczosChain(
    productOn(op, complex, allocate),
    complex ? start : realPart(start, dim),
    complex,
    full,
    allocate,
  );
  const polesAt = (levels: number) => {
    const p = chainPoles(chain, levels, weight);
    return {
      positions: Array.from(p.positions, (x) => (x - e0) * unitScale),
      weights: p.weights,
      residuals: Array.from(p.residuals, (r) => r * Math.abs(unitScale)),
    };
  };
  const curveAt = (levels: number) => {
    const p = polesAt(levels);
    return broadenedCurve(p.positions, p.weights, frequencies, shape);
  };
  let before = 0;
  for (let f = 0; f < collected.curve.length; f++) before = Math.max(before, Math.abs(collected.curve[f]));
  let levels = Math.min(FIRST_LEVELS, section.maxLevels);
  chain.extendTo(levels);
  let curve = curveAt(levels);
  let check = Infinity;
  while (!(chain.exhausted && chain.levels <= levels) && levels < section.maxLevels) {
    const next = Math.min(2 * levels, section.maxLevels);
    chain.extendTo(next);
    const nextCurve = curveAt(next);
    let peak = before;
    let change = 0;
    for (let f = 0; f < nextCurve.length; f++) {
      peak = Math.max(peak, Math.abs(nextCurve[f]));
      change = Math.max(change, Math.abs(nextCurve[f] - curve[f]));
    }
    check = peak > 0 ? change / peak : 0;
    curve = nextCurve;
    levels = next;
    if (check <= section.tolerance) break;
  }
  const exact = chain.exhausted && chain.levels <= levels;
  const poles = polesAt(levels);
  for (const x of poles.positions) collected.positions.push(x);
  for (let j = 0; j < poles.weights.length; j++) {
    collected.weights.push(poles.weights[j]);
    collected.residuals.push(poles.residuals[j]);
  }
  for (let f = 0; f < curve.length; f++) collected.curve[f] += curve[f];
  return {
    levels: Math.min(chain.levels, levels),
    check: exact ? 0 : check,
    converged: exact || check <= section.tolerance,
    exact,
    full,
    products: chain.products,
  };
}

function imaginaryZero(v: Float64Array): boolean {
  for (let k = 1; k < v.length; k += 2) if (v[k] !== 0) return false;
  return true;
}

function realPart(v: Float64Array, dim: number): Float64Array {
  const out = new Float64Array(dim);
  for (let s = 0; s < dim; s++) out[s] = v[2 * s];
  return out;
}
