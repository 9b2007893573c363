// Observables of the ground state (or the average over a degenerate ground space).
// All of MODEL.md's pinned observables are diagonal in the level basis, so they follow from the
// probability of each basis state, computed once.

import type { PinnedBasis } from './basis.js';

export interface Observables {
  populations: number[][];
  level_mean: number[];
  spread: number[];
  string_width: number;
  pair_separation: number[][];
  [extra: string]: unknown;
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
export function pinnedObservables(basis: PinnedBasis, probabilities: Float64Array): Observables {
  const L = basis.sites;
  const N = basis.levels;
  const dim = basis.dim;
  const h = Math.floor(L / 2);
  const lowSize = N ** h;
  const highSize = dim / lowSize;
  const lowDigits = digitTable(h, N);
  const highDigits = digitTable(L - h, N);
  const lowColumns = Array.from({ length: h }, (_, i) => Float64Array.from({ length: lowSize }, (_, lo) => lowDigits[lo * h + i]));
  const pLow = new Float64Array(lowSize);
  const pHigh = new Float64Array(highSize);
  const cross = new Float64Array(highSize * h); // sum over lo of p(hi, lo) n_i(lo), for low sites i
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
    for (let i = 0; i < h; i++) {
      const column = lowColumns[i];
      let m = 0;
      for (let lo = 0; lo < lowSize; lo++) m += probabilities[base + lo] * column[lo];
      cross[hi * h + i] = m;
    }
  }
  // Site i's digit in a half, and that half's marginal.
  const half = (i: number) => (i < h ? { size: lowSize, digits: lowDigits, width: h, at: i, p: pLow } : { size: highSize, digits: highDigits, width: L - h, at: i - h, p: pHigh });
  const pop = new Float64Array(L * N);
  for (let i = 0; i < L; i++) {
    const { size, digits, width, at, p } = half(i);
    for (let x = 0; x < size; x++) pop[i * N + digits[x * width + at]] += p[x];
  }
  const pairMoment = new Float64Array(L * L); // <n_i n_j>, i < j
  for (let i = 0; i < L; i++) {
    for (let j = i + 1; j < L; j++) {
      let sum = 0;
      if ((i < h) === (j < h)) {
        const a = half(i);
        const b = half(j);
        for (let x = 0; x < a.size; x++) sum += a.p[x] * a.digits[x * a.width + a.at] * b.digits[x * b.width + b.at];
      } else {
        // i is a low site, j a high one (i < j)
        for (let hi = 0; hi < highSize; hi++) sum += highDigits[hi * (L - h) + (j - h)] * cross[hi * h + i];
      }
      pairMoment[i * L + j] = sum;
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
  return { populations, level_mean: levelMean, spread, string_width: width, pair_separation: pairSeparation };
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
