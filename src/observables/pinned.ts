// Observables of the ground state (or the average over a degenerate ground space).
// All of docs/model.md's pinned observables are diagonal in the level basis, so they follow from the
// probability of each basis state, computed once.

import type { PinnedBasis } from '../basis/basis.js';
import { levelCorrelationBySeparation, type SeparationClass, type SeparationCorrelation } from './separation.js';

export interface Observables {
  populations: number[][];
  level_mean: number[];
  spread: number[];
  string_width: number;
  pair_separation: number[][];
  /** <n_i n_j> - <n_i><n_j>; only when asked for (solved points, not time traces). */
  level_correlation?: number[][];
  /** (1/L) sum_{ij} e^{i q (i-j)} level_correlation[i][j] at q = 2 pi m / L; null on open chains. */
  level_structure_factor?: number[] | null;
  /** level_correlation averaged over the pairs of each minimum-image separation vector; null without translations. */
  level_correlation_by_separation?: SeparationCorrelation[] | null;
  [extra: string]: unknown;
}

/** Asks for the connected level correlations and, on a periodic chain, their structure factor. */
export interface CorrelationRequest {
  periodic: boolean;
  /** The site pairs grouped by separation vector (src/observables/separation.ts); null or absent without translations. */
  separations?: readonly SeparationClass[] | null;
}

/** p(s) = (1/g) sum_k |psi_k(s)|^2 over the given normalized states (real or interleaved complex). */
export function basisProbabilities(states: Float64Array[], dim: number, isComplex: boolean): Float64Array {
  const p = new Float64Array(dim);
  const w = 1 / states.length;
  for (const psi of states) {
    if (isComplex) {
      for (let s = 0; s < dim; s++) p[s] += w * (psi[2 * s] * psi[2 * s] + psi[2 * s + 1] * psi[2 * s + 1]);
    } else {
      for (let s = 0; s < dim; s++) p[s] += w * psi[s] * psi[s];
    }
  }
  return p;
}

/**
 * The observables from the probability of each basis state. Every one of them is built from
 * single-site populations and pair moments <n_i n_j>, so one sweep splits each state index into
 * its low half (sites 0..h-1, the fast digits) and high half: the sweep sums the probabilities per
 * low part and per high part, and per high part the moments sum_lo p n_i(lo) of the low sites
 * (h dot products a block). Pairs within a half then come from its marginal; pairs across the
 * halves from those moments. That is about (h+1) operations a state instead of L^2/2.
 */
export function pinnedObservables(
  basis: PinnedBasis,
  probabilities: Float64Array,
  correlations?: CorrelationRequest,
): Observables {
  const L = basis.sites;
  const N = basis.levels;
  const h = Math.floor(L / 2);
  const low = halfOf(h, N);
  const high = halfOf(L - h, N);
  const { pLow, pHigh, cross } = halfMarginals(probabilities, low, high.size);
  const pop = new Float64Array(L * N);
  for (let i = 0; i < L; i++) {
    if (i < h) addPopulations(pop, i * N, low, i, pLow);
    else addPopulations(pop, i * N, high, i - h, pHigh);
  }
  const pairMoment = new Float64Array(L * L); // <n_i n_j>, i < j
  for (let i = 0; i < L; i++) {
    for (let j = i + 1; j < L; j++) {
      // Pairs within a half come from its marginal; a low site i with a high site j from `cross`.
      if (j < h) pairMoment[i * L + j] = pairWithinHalf(low, i, j, pLow);
      else if (i >= h) pairMoment[i * L + j] = pairWithinHalf(high, i - h, j - h, pHigh);
      else pairMoment[i * L + j] = pairAcrossHalves(high, j - h, cross, h, i);
    }
  }
  // String width: the mean over states of the variance of the levels along the chain,
  // (1/L) sum_i <n_i^2> - (1/L^2) <(sum_i n_i)^2>.
  let sumSquares = 0;
  for (let i = 0; i < L; i++) for (let n = 0; n < N; n++) sumSquares += n * n * pop[i * N + n];
  let pairs = 0;
  for (let i = 0; i < L; i++) for (let j = i + 1; j < L; j++) pairs += pairMoment[i * L + j];
  const width = sumSquares / L - (sumSquares + 2 * pairs) / (L * L);
  const populations: number[][] = [];
  const levelMean: number[] = [];
  const spread: number[] = [];
  const meanSq: number[] = [];
  for (let i = 0; i < L; i++) {
    const row: number[] = [];
    let m1 = 0;
    let m2 = 0;
    for (let n = 0; n < N; n++) {
      const q = pop[i * N + n];
      row.push(q);
      m1 += n * q;
      m2 += n * n * q;
    }
    populations.push(row);
    levelMean.push(m1);
    spread.push(m2 - m1 * m1);
    meanSq.push(m2);
  }
  const pairSeparation: number[][] = [];
  for (let i = 0; i < L; i++) {
    const row: number[] = [];
    for (let j = 0; j < L; j++) {
      if (i === j) row.push(0);
      else {
        const a = Math.min(i, j);
        const b = Math.max(i, j);
        row.push(meanSq[i] + meanSq[j] - 2 * pairMoment[a * L + b]);
      }
    }
    pairSeparation.push(row);
  }
  const result: Observables = {
    populations,
    level_mean: levelMean,
    spread,
    string_width: width,
    pair_separation: pairSeparation,
  };
  if (correlations) {
    const correlation: number[][] = [];
    for (let i = 0; i < L; i++) {
      const row: number[] = [];
      for (let j = 0; j < L; j++) {
        const a = Math.min(i, j);
        const b = Math.max(i, j);
        row.push(i === j ? spread[i] : pairMoment[a * L + b] - levelMean[i] * levelMean[j]);
      }
      correlation.push(row);
    }
    result.level_correlation = correlation;
    result.level_structure_factor = levelStructureFactor(correlation, correlations.periodic);
    result.level_correlation_by_separation = levelCorrelationBySeparation(
      correlation,
      correlations.separations ?? null,
    );
  }
  return result;
}

/**
 * S(q) = (1/L) sum_{ij} cos(q (i - j)) C[i][j] at q = 2 pi m / L, m = 0..L-1: real because C is
 * real and symmetric. Null on open chains, where q is not a good quantum number.
 */
export function levelStructureFactor(correlation: number[][], periodic: boolean): number[] | null {
  if (!periodic) return null;
  const L = correlation.length;
  const out: number[] = [];
  for (let m = 0; m < L; m++) {
    const q = (2 * Math.PI * m) / L;
    let s = 0;
    for (let i = 0; i < L; i++) for (let j = 0; j < L; j++) s += Math.cos(q * (i - j)) * correlation[i][j];
    out.push(s / L);
  }
  return out;
}

/** One half of the chain: its number of states, sites and digit table (table[x * width + i]). */
interface Half {
  size: number;
  width: number;
  digits: Int32Array;
}

function halfOf(width: number, N: number): Half {
  return { size: N ** width, width, digits: digitTable(width, N) };
}

/**
 * The marginals of the low half (sites 0..h-1, the fast digits) and of the high half, and per
 * high part the moments sum over lo of p(hi, lo) n_i(lo) of each low site i: cross[hi * h + i].
 */
function halfMarginals(
  probabilities: Float64Array,
  low: Half,
  highSize: number,
): { pLow: Float64Array; pHigh: Float64Array; cross: Float64Array } {
  const lowSize = low.size;
  const h = low.width;
  const lowColumns = Array.from({ length: h }, (_, i) =>
    Float64Array.from({ length: lowSize }, (_, lo) => low.digits[lo * h + i]),
  );
  const pLow = new Float64Array(lowSize);
  const pHigh = new Float64Array(highSize);
  const cross = new Float64Array(highSize * h);
  for (let hi = 0; hi < highSize; hi++) {
    const base = hi * lowSize;
    let total = 0;
    for (let lo = 0; lo < lowSize; lo++) {
      const p = probabilities[base + lo];
      total += p;
      pLow[lo] += p;
    }
    pHigh[hi] = total;
    if (total === 0) continue;
    for (let i = 0; i < h; i++) cross[hi * h + i] = weightedSum(probabilities, base, lowColumns[i], lowSize);
  }
  return { pLow, pHigh, cross };
}

function weightedSum(p: Float64Array, base: number, weights: Float64Array, count: number): number {
  let m = 0;
  for (let x = 0; x < count; x++) m += p[base + x] * weights[x];
  return m;
}

/** pop[offset + n] += probability that site `at` of the half holds level n. */
function addPopulations(pop: Float64Array, offset: number, half: Half, at: number, marginal: Float64Array): void {
  for (let x = 0; x < half.size; x++) pop[offset + half.digits[x * half.width + at]] += marginal[x];
}

/** <n_a n_b> for two sites of one half, from its marginal. */
function pairWithinHalf(half: Half, a: number, b: number, marginal: Float64Array): number {
  let sum = 0;
  for (let x = 0; x < half.size; x++)
    sum += marginal[x] * half.digits[x * half.width + a] * half.digits[x * half.width + b];
  return sum;
}

/** <n_i n_j> for low site i and high site j (index `at` in the high half). */
function pairAcrossHalves(high: Half, at: number, cross: Float64Array, h: number, i: number): number {
  let sum = 0;
  for (let hi = 0; hi < high.size; hi++) sum += high.digits[hi * high.width + at] * cross[hi * h + i];
  return sum;
}

/** Digits of every index below N^sites, site 0 fastest: table[x * sites + i]. */
function digitTable(sites: number, N: number): Int32Array {
  const size = N ** sites;
  const table = new Int32Array(size * sites);
  for (let x = 0; x < size; x++) {
    let rest = x;
    for (let i = 0; i < sites; i++) {
      table[x * sites + i] = rest % N;
      rest = Math.floor(rest / N);
    }
  }
  return table;
}
