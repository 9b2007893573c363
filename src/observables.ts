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

export function pinnedObservables(basis: PinnedBasis, probabilities: Float64Array): Observables {
  const L = basis.sites;
  const N = basis.levels;
  const dim = basis.dim;
  const pop = new Float64Array(L * N);
  const pairMoment = new Float64Array(L * L); // <n_i n_j>
  let width = 0;
  const digits = new Int32Array(L);
  // Walk the states in index order, incrementing the mixed-radix digits instead of dividing.
  for (let s = 0; s < dim; s++) {
    const p = probabilities[s];
    if (p !== 0) {
      let sum = 0;
      let sumSq = 0;
      for (let i = 0; i < L; i++) {
        const n = digits[i];
        pop[i * N + n] += p;
        sum += n;
        sumSq += n * n;
        for (let j = i + 1; j < L; j++) pairMoment[i * L + j] += p * n * digits[j];
      }
      const mean = sum / L;
      width += p * (sumSq / L - mean * mean);
    }
    for (let i = 0; i < L; i++) {
      if (++digits[i] < N) break;
      digits[i] = 0;
    }
  }
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
