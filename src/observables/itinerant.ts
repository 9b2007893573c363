// Ground-state observables of itinerant particles (hard-core bosons, soft-core bosons, fermions).
//
// The pinned set of docs/model.md, read over the particles present:
//   populations[i][n]     <n_{i,n}>, the mean occupation of mode (i, n); a row sums to site i's density
//   level_mean[i]         <sum_n n n_{i,n}> / <N_i>: the mean level of the particles found at site i,
//                         each particle counted once (a doubly occupied site counts both)
//   spread[i]             <sum_n n^2 n_{i,n}> / <N_i> - level_mean[i]^2, the variance of that level
//   pair_separation[i][j] <sum_{a,b} (a - b)^2 n_{i,a} n_{j,b}> / <N_i N_j>: the mean squared level
//                         difference over pairs of particles, one at i and one at j
//   string_width          mean over configurations of (1/Np) sum over particles (n_p - nbar)^2,
//                         nbar the mean level of that configuration's particles
// A site (or pair of sites) that is never occupied (expected count below 1e-12) has no particles
// to average over; its level_mean, spread and pair_separation are reported as 0.
// With one particle on every site these are exactly the pinned definitions.
//
// Added for itinerant kinds:
//   density[i]                   <N_i>
//   double_occupancy[i]          <N_i (N_i - 1) / 2>, the mean number of particle pairs sharing site i
//                                (for two fermion levels, <n_{i,0} n_{i,1}>; always 0 for hard-core)
//   one_body_density_matrix      rho[i][j] = sum_n <a+_{i,n} a_{j,n}> (real part; the imaginary part
//                                is one_body_density_matrix_imag when the state is complex)
//   condensate_fraction          largest eigenvalue of rho divided by the particle number
//                                (Penrose and Onsager, Phys. Rev. 104, 576 (1956))
//   momentum_distribution[m]     n(k) = (1/L) sum_{ij} e^{i k (i - j)} rho[i][j] at k = 2 pi m / L,
//                                m = 0..L-1, on periodic chains; null on open chains
//   level_correlation[i][j]      <n_i n_j> - <n_i><n_j> with n_i = sum_a a n_{i,a}, the level index
//                                summed over site i's particles (0 on an empty site); when asked for
//   level_structure_factor[m]    its Fourier transform at q = 2 pi m / L on periodic chains, as for
//                                pinned chains; null on open chains
// For a degenerate ground space every quantity is the average over the space (the condensate
// fraction is that of the averaged rho; the connected correlation is that of the mixture).

import { realFormEigen } from '../linalg/hermitianEigen.js';
import type { FockBasis } from '../basis/fock.js';
import { levelStructureFactor, type CorrelationRequest, type Observables } from './pinned.js';
import { levelCorrelationBySeparation } from './separation.js';

/** Expected counts below this are "never occupied". */
const EMPTY = 1e-12;

export interface ItinerantObservables extends Observables {
  density: number[];
  double_occupancy: number[];
  one_body_density_matrix: number[][];
  one_body_density_matrix_imag?: number[][];
  condensate_fraction: number;
  momentum_distribution: number[] | null;
}

/** Observables of normalized ground states `states` (real, or interleaved complex) on a Fock basis. */
export function itinerantObservables(
  basis: FockBasis,
  states: Float64Array[],
  isComplex: boolean,
  periodic: boolean,
  correlations?: CorrelationRequest,
): ItinerantObservables {
  const L = basis.sites;
  const N = basis.levels;
  const Np = basis.particles;
  const d = basis.local.dim;
  const { occupation, count } = basis.local;
  const weight = 1 / states.length;

  // Per local state: particle count, sum of levels, sum of squared levels.
  const s1 = new Float64Array(d);
  const s2 = new Float64Array(d);
  for (let s = 0; s < d; s++) {
    for (let n = 0; n < N; n++) {
      s1[s] += n * occupation[s * N + n];
      s2[s] += n * n * occupation[s * N + n];
    }
  }

  const pop = new Float64Array(L * N);
  const density = new Float64Array(L);
  const pairsOnSite = new Float64Array(L);
  const bothOccupied = new Float64Array(L * L); // <N_i N_j>, i < j
  const squaredDifference = new Float64Array(L * L); // <sum_ab (a-b)^2 n_ia n_jb>, i < j
  const levelMoment = new Float64Array(L * L); // <n_i n_j>, n_i = sum_a a n_ia, i <= j
  let width = 0;

  const cursor = basis.cursor();
  const state = cursor.state;
  for (let row = 0; row < basis.dim; row++) {
    if (row > 0) cursor.next();
    let p = 0;
    for (const psi of states) {
      p += isComplex ? psi[2 * row] * psi[2 * row] + psi[2 * row + 1] * psi[2 * row + 1] : psi[row] * psi[row];
    }
    p *= weight;
    if (p === 0) continue;
    let total1 = 0;
    let total2 = 0;
    for (let i = 0; i < L; i++) {
      const s = state[i];
      const c = count[s];
      if (c === 0) continue;
      for (let n = 0; n < N; n++) pop[i * N + n] += p * occupation[s * N + n];
      density[i] += p * c;
      pairsOnSite[i] += (p * c * (c - 1)) / 2;
      total1 += s1[s];
      total2 += s2[s];
      levelMoment[i * L + i] += p * s1[s] * s1[s];
      for (let j = i + 1; j < L; j++) {
        const t = state[j];
        const cj = count[t];
        if (cj === 0) continue;
        bothOccupied[i * L + j] += p * c * cj;
        levelMoment[i * L + j] += p * s1[s] * s1[t];
        squaredDifference[i * L + j] += p * (s2[s] * cj + s2[t] * c - 2 * s1[s] * s1[t]);
      }
    }
    const mean = total1 / Np;
    width += p * (total2 / Np - mean * mean);
  }

  const populations: number[][] = [];
  const levelMean: number[] = [];
  const spread: number[] = [];
  const levelCharge: number[] = []; // <n_i>, unnormalized by the density
  for (let i = 0; i < L; i++) {
    const row = Array.from(pop.subarray(i * N, (i + 1) * N));
    populations.push(row);
    let m1 = 0;
    let m2 = 0;
    row.forEach((q, n) => {
      m1 += n * q;
      m2 += n * n * q;
    });
    levelCharge.push(m1);
    if (density[i] < EMPTY) {
      levelMean.push(0);
      spread.push(0);
    } else {
      const mean = m1 / density[i];
      levelMean.push(mean);
      spread.push(m2 / density[i] - mean * mean);
    }
  }
  const pairSeparation: number[][] = [];
  for (let i = 0; i < L; i++) {
    const row: number[] = [];
    for (let j = 0; j < L; j++) {
      const a = Math.min(i, j);
      const b = Math.max(i, j);
      const both = bothOccupied[a * L + b];
      row.push(i === j || both < EMPTY ? 0 : squaredDifference[a * L + b] / both);
    }
    pairSeparation.push(row);
  }

  const { re, im } = oneBodyDensityMatrix(basis, states, isComplex);
  for (let i = 0; i < L; i++) re[i * L + i] = density[i];

  const condensate = largestEigenvalue(re, isComplex ? im : null, L) / Np;
  let momentum: number[] | null = null;
  if (periodic) {
    momentum = [];
    for (let m = 0; m < L; m++) {
      const k = (2 * Math.PI * m) / L;
      let nk = 0;
      for (let i = 0; i < L; i++)
        for (let j = 0; j < L; j++) nk += Math.cos(k * (i - j)) * re[i * L + j] - Math.sin(k * (i - j)) * im[i * L + j];
      momentum.push(nk / L);
    }
  }

  const matrix = (a: Float64Array): number[][] =>
    Array.from({ length: L }, (_, i) => Array.from(a.subarray(i * L, (i + 1) * L)));
  const result: ItinerantObservables = {
    populations,
    level_mean: levelMean,
    spread,
    string_width: width,
    pair_separation: pairSeparation,
    density: Array.from(density),
    double_occupancy: Array.from(pairsOnSite),
    one_body_density_matrix: matrix(re),
    condensate_fraction: condensate,
    momentum_distribution: momentum,
  };
  if (isComplex) result.one_body_density_matrix_imag = matrix(im);
  if (correlations) {
    const correlation = Array.from({ length: L }, (_, i) =>
      Array.from({ length: L }, (_, j) => {
        const a = Math.min(i, j);
        const b = Math.max(i, j);
        return levelMoment[a * L + b] - levelCharge[i] * levelCharge[j];
      }),
    );
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
 * rho[i][j] = sum_n <a+_{i,n} a_{j,n}> for i != j (the diagonal is left 0), averaged over `states`.
 * Each state s with a particle in (j, n) and room at (i, n), i < j, contributes
 * conj(psi(t)) amp psi(s) to rho[i][j], t the state after the move; rho[j][i] is its conjugate.
 * The target's rank is found as in the operator build (src/operator/fock.ts): O(1) per move.
 */
function oneBodyDensityMatrix(
  basis: FockBasis,
  states: Float64Array[],
  isComplex: boolean,
): { re: Float64Array; im: Float64Array } {
  const L = basis.sites;
  const N = basis.levels;
  const Np = basis.particles;
  const P1 = Np + 1;
  const d = basis.local.dim;
  const R = basis.rankTable;
  const fermion = basis.kind === 'fermion';
  const { createTo, createAmp, annihilateTo, annihilateAmp } = basis.local;
  const re = new Float64Array(L * L);
  const im = new Float64Array(L * L);
  const weight = 1 / states.length;
  const rankHere = new Float64Array(L);
  const upChange = new Float64Array(L + 1);

  const cursor = basis.cursor();
  for (const psi of states) {
    cursor.reset();
    const state = cursor.state;
    const prefix = cursor.prefix;
    for (let row = 0; row < basis.dim; row++) {
      if (row > 0) cursor.next();
      const xr = isComplex ? psi[2 * row] : psi[row];
      const xi = isComplex ? psi[2 * row + 1] : 0;
      if (xr === 0 && xi === 0) continue;
      let acc = 0;
      for (let i = 0; i < L; i++) {
        const base = (i * P1 + prefix[i]) * d;
        rankHere[i] = R[base + state[i]];
        upChange[i] = acc;
        if (prefix[i] + 1 <= Np) acc += R[base + d + state[i]] - R[base + state[i]];
      }
      upChange[L] = acc;
      for (let j = 1; j < L; j++) {
        const sj = state[j];
        const Pj = prefix[j];
        for (let n = 0; n < N; n++) {
          const tj = annihilateTo[n * d + sj];
          if (tj < 0) continue;
          const fromJ = weight * annihilateAmp[n * d + sj];
          const rankJ = R[(j * P1 + Pj + 1) * d + tj] - rankHere[j];
          for (let i = 0; i < j; i++) {
            const si = state[i];
            const ti = createTo[n * d + si];
            if (ti < 0) continue;
            const Pi = prefix[i];
            const sign = fermion && (Pi + Pj) % 2 === 1 ? -1 : 1;
            const col = row + rankJ + R[(i * P1 + Pi) * d + ti] - rankHere[i] + (upChange[j] - upChange[i + 1]);
            const amp = sign * fromJ * createAmp[n * d + si];
            if (isComplex) {
              const yr = psi[2 * col];
              const yi = psi[2 * col + 1];
              re[i * L + j] += amp * (yr * xr + yi * xi);
              im[i * L + j] += amp * (yr * xi - yi * xr);
            } else {
              re[i * L + j] += amp * psi[col] * xr;
            }
          }
        }
      }
    }
  }
  for (let i = 0; i < L; i++)
    for (let j = 0; j < i; j++) {
      re[i * L + j] = re[j * L + i];
      im[i * L + j] = -im[j * L + i];
    }
  return { re, im };
}

/** Largest eigenvalue of the Hermitian L x L matrix re + i im (via the real embedding when complex). */
function largestEigenvalue(re: Float64Array, im: Float64Array | null, L: number): number {
  const { values, size } = realFormEigen(re, im, L, false);
  return size > 0 ? values[size - 1] : -Infinity;
}
