// Entanglement of pinned chains: the reduced density matrix of a cut, its entropies and spectrum.
//
// A cut `l` (1..L-1) splits sites 0..l-1 (left) from l..L-1 (right). With site 0 fastest in the
// mixed-radix index, a state is the matrix psi[a + dLeft * b] with dLeft = N^l and dRight = N^(L-l):
// left index a contiguous, right index b strided. The entropies are those of the left sites.
//
// A degenerate ground space enters as its average, rho = (1/g) sum_k |psi_k><psi_k|, as every
// other observable (docs/model.md); its entropies then include the mixing, and the two sides of a cut
// no longer share a spectrum. Stacking the states side by side as M[a, (b, k)] = psi_k(a, b) / sqrt g
// gives rho_left = M M^+, whose nonzero spectrum is that of the Gram matrix M^+ M over the right
// index and the copy index k together (dimension g dRight). So the left side's spectrum comes from
// whichever of the two is smaller: O(d * g * dim) for the matrix plus O(d^3) for its eigenvalues.
// For a pure state (g = 1) this is the usual smaller-side shortcut.
//
// A subsystem given as a list of sites A (any geometry) reduces to a cut: the state's digits are
// reordered so that A's sites (ascending) come first, then the rest, and the cut |A| of the
// reordered state is A. For A = 0..l-1 the reordering is the identity and the result is cut l's.

import { hermitianEigenvalues as ascendingHermitianEigenvalues } from '../linalg/hermitianEigen.js';
import { ResourceError } from '../errors/errors.js';

export interface CutEntanglement {
  /** Sites in the left block: the cut splits sites 0..cut-1 from cut..L-1. */
  cut: number;
  /** -tr(rho ln rho), natural logarithm. */
  von_neumann: number;
  /** -ln tr(rho^2). */
  renyi_2: number;
  /** Lowest entanglement energies -ln(lambda), ascending (only weights above rounding noise). */
  spectrum: number[];
}

/** Entanglement of a subsystem A given by its sites (solve.entanglement as site lists). */
export interface SiteSetEntanglement {
  /** The sites of A, as the spec lists them (model site indices). */
  sites: number[];
  von_neumann: number;
  renyi_2: number;
  spectrum: number[];
}

/** "auto" computes the half-chain cut when its smaller side is at most this dimension. */
export const AUTO_ENTANGLEMENT_MAX_SIDE = 256;
/** Largest matrix dimension (entanglementMatrixDimension) computed at all: the matrix and its eigensolve grow as d^2 and d^3. */
export const MAX_ENTANGLEMENT_SIDE = 2048;
/** How many entanglement energies a record keeps per cut. */
export const DEFAULT_SPECTRUM_COUNT = 8;
/** Schmidt weights below this are rounding noise of a normalized state (lambda ~ 1e-16 * dim). */
const WEIGHT_FLOOR = 1e-13;

export type EntanglementRequest = 'none' | 'auto' | 'half' | 'all' | number[];

/** The half-chain cut: floor(L/2) sites on the left. */
export function halfCut(sites: number): number {
  return Math.floor(sites / 2);
}

/** Dimension of the smaller side of cut `cut` of a chain of `sites` sites with `levels` levels. */
export function smallerSideDimension(sites: number, levels: number, cut: number): number {
  return Math.pow(levels, Math.min(cut, sites - cut));
}

/**
 * The cuts a request names for a chain, in ascending order; "auto" gives the half chain only when it
 * is cheap (smaller side at most AUTO_ENTANGLEMENT_MAX_SIDE), else none.
 */
export function cutsFor(request: EntanglementRequest, sites: number, levels: number): number[] {
  if (sites < 2 || request === 'none') return [];
  if (request === 'auto') {
    const cut = halfCut(sites);
    return smallerSideDimension(sites, levels, cut) <= AUTO_ENTANGLEMENT_MAX_SIDE ? [cut] : [];
  }
  if (request === 'half') return [halfCut(sites)];
  if (request === 'all') return Array.from({ length: sites - 1 }, (_, k) => k + 1);
  return [...new Set(request)].sort((a, b) => a - b);
}

/**
 * Dimension of the matrix whose spectrum gives the left side's entanglement of `copies` mixed
 * states: the left side's N^cut, or the right side's N^(L-cut) times the copies, whichever is smaller.
 */
export function entanglementMatrixDimension(sites: number, levels: number, cut: number, copies: number): number {
  return Math.min(Math.pow(levels, cut), copies * Math.pow(levels, sites - cut));
}

/**
 * A Hermitian matrix with the nonzero spectrum of the left side's reduced density matrix at `cut`,
 * for the average of `states` (each normalized, real of length N^L or complex interleaved of length
 * 2 N^L). `side: 'left'`: the reduced density matrix itself, over the left index. `side: 'right'`:
 * the Gram matrix of the stacked states over the right index and the copy index (k dRight + b).
 * Row-major d x d; `im` is null for real states. Only meaningful for the pinned basis's mixed-radix
 * index.
 */
export function reducedDensityMatrix(
  states: Float64Array[],
  sites: number,
  levels: number,
  isComplex: boolean,
  cut: number,
): { dim: number; side: 'left' | 'right'; re: Float64Array; im: Float64Array | null } {
  if (!Number.isInteger(cut) || cut < 1 || cut > sites - 1) {
    throw new RangeError(`cut must be an integer from 1 to ${sites - 1}, got ${cut}`);
  }
  const dLeft = Math.pow(levels, cut);
  const dRight = Math.pow(levels, sites - cut);
  const copies = states.length;
  const side = dLeft <= copies * dRight ? 'left' : 'right';
  const d = side === 'left' ? dLeft : copies * dRight;
  const re = new Float64Array(d * d);
  const im = isComplex ? new Float64Array(d * d) : null;
  const weight = 1 / copies;
  for (const psi of states) {
    if (psi.length !== (isComplex ? 2 : 1) * dLeft * dRight) {
      throw new RangeError(`state length ${psi.length} does not match ${sites} sites x ${levels} levels`);
    }
  }
  if (side === 'left') for (const psi of states) accumulateLeft(psi, dLeft, dRight, weight, re, im);
  else accumulateStackedGram(states, dLeft, dRight, weight, re, im);
  // Only the upper triangle was summed; the lower one is its conjugate.
  for (let r = 0; r < d; r++) {
    for (let c = r + 1; c < d; c++) {
      re[c * d + r] = re[r * d + c];
      if (im) im[c * d + r] = -im[r * d + c];
    }
  }
  return { dim: d, side, re, im };
}

// rho[a, a'] += w sum_b psi(a, b) conj(psi(a', b)): one rank-1 update per right index b, over a
// contiguous column of the state.
function accumulateLeft(
  psi: Float64Array,
  dL: number,
  dR: number,
  w: number,
  re: Float64Array,
  im: Float64Array | null,
): void {
  if (!im) {
    for (let b = 0; b < dR; b++) {
      const base = b * dL;
      for (let a = 0; a < dL; a++) {
        const x = w * psi[base + a];
        if (x === 0) continue;
        const row = a * dL;
        for (let a2 = a; a2 < dL; a2++) re[row + a2] += x * psi[base + a2];
      }
    }
    return;
  }
  for (let b = 0; b < dR; b++) {
    const base = 2 * b * dL;
    for (let a = 0; a < dL; a++) {
      const xr = w * psi[base + 2 * a];
      const xi = w * psi[base + 2 * a + 1];
      if (xr === 0 && xi === 0) continue;
      const row = a * dL;
      for (let a2 = a; a2 < dL; a2++) {
        const yr = psi[base + 2 * a2];
        const yi = psi[base + 2 * a2 + 1];
        // x conj(y)
        re[row + a2] += xr * yr + xi * yi;
        im[row + a2] += xi * yr - xr * yi;
      }
    }
  }
}

// G[(k, b), (k2, b2)] += w sum_a psi_k(a, b) conj(psi_k2(a, b2)): dot products of contiguous
// columns of the stacked states (the complex conjugate of M^+ M, which has the same spectrum),
// taken in blocks of a so that the columns of one block stay in cache across all pairs.
function accumulateStackedGram(
  states: Float64Array[],
  dL: number,
  dR: number,
  w: number,
  re: Float64Array,
  im: Float64Array | null,
): void {
  const BLOCK = 1024;
  const d = states.length * dR;
  for (let start = 0; start < dL; start += BLOCK) {
    const end = Math.min(start + BLOCK, dL);
    for (let c = 0; c < d; c++) {
      const x = states[Math.floor(c / dR)];
      const b = c % dR;
      for (let c2 = c; c2 < d; c2++) {
        const y = states[Math.floor(c2 / dR)];
        const b2 = c2 % dR;
        if (!im) {
          const x0 = b * dL;
          const y0 = b2 * dL;
          let s = 0;
          for (let a = start; a < end; a++) s += x[x0 + a] * y[y0 + a];
          re[c * d + c2] += w * s;
        } else {
          const x0 = 2 * b * dL;
          const y0 = 2 * b2 * dL;
          let sr = 0;
          let si = 0;
          for (let a = start; a < end; a++) {
            const xr = x[x0 + 2 * a];
            const xi = x[x0 + 2 * a + 1];
            const yr = y[y0 + 2 * a];
            const yi = y[y0 + 2 * a + 1];
            sr += xr * yr + xi * yi;
            si += xi * yr - xr * yi;
          }
          re[c * d + c2] += w * sr;
          im[c * d + c2] += w * si;
        }
      }
    }
  }
}

/** Eigenvalues of a Hermitian d x d matrix (row-major re, im), descending. */
export function hermitianEigenvalues(d: number, re: Float64Array, im: Float64Array | null): Float64Array {
  if (d === 1) return Float64Array.of(re[0]);
  return ascendingHermitianEigenvalues(re, im, d).reverse();
}

/** Entropies and entanglement energies from Schmidt weights (eigenvalues of rho, any order). */
export function entropiesFromWeights(
  weights: ArrayLike<number>,
  spectrumCount = DEFAULT_SPECTRUM_COUNT,
): Omit<CutEntanglement, 'cut'> {
  let vonNeumann = 0;
  let purity = 0;
  const kept: number[] = [];
  for (let k = 0; k < weights.length; k++) {
    // Rounding leaves tiny negative weights; they carry no probability.
    const p = Math.max(weights[k], 0);
    if (p > 0) vonNeumann -= p * Math.log(p);
    purity += p * p;
    if (p > WEIGHT_FLOOR) kept.push(p);
  }
  kept.sort((a, b) => b - a);
  const spectrum = kept.slice(0, spectrumCount).map((p) => -Math.log(p));
  return { von_neumann: vonNeumann, renyi_2: -Math.log(purity), spectrum };
}

/** Entanglement of the given cuts of a pinned chain in the (average of the) given states. */
export function pinnedEntanglement(
  states: Float64Array[],
  sites: number,
  levels: number,
  isComplex: boolean,
  cuts: number[],
  spectrumCount = DEFAULT_SPECTRUM_COUNT,
): CutEntanglement[] {
  return cuts.map((cut) => {
    const size = entanglementMatrixDimension(sites, levels, cut, states.length);
    if (size > MAX_ENTANGLEMENT_SIDE) {
      throw new ResourceError(
        `entanglement of cut ${cut}: its smaller side has ${size} states (the right side counted once per state of a ${states.length}-fold ground space), more than the ${MAX_ENTANGLEMENT_SIDE} this computes; choose a cut nearer an end`,
      );
    }
    const rho = reducedDensityMatrix(states, sites, levels, isComplex, cut);
    return { cut, ...entropiesFromWeights(hermitianEigenvalues(rho.dim, rho.re, rho.im), spectrumCount) };
  });
}

/**
 * The state with its site digits reordered: the sites of `subsystem` (in ascending order) become
 * sites 0..|A|-1, the others follow in ascending order. Real (length N^L) or complex interleaved.
 */
export function reorderSites(
  psi: Float64Array,
  sites: number,
  levels: number,
  isComplex: boolean,
  subsystem: readonly number[],
): Float64Array {
  const inA = new Set(subsystem);
  const order = [
    ...[...inA].sort((a, b) => a - b),
    ...Array.from({ length: sites }, (_, i) => i).filter((i) => !inA.has(i)),
  ];
  // weight[i]: site i's place value in the reordered index.
  const weight = new Float64Array(sites);
  order.forEach((site, place) => (weight[site] = Math.pow(levels, place)));
  const stride = isComplex ? 2 : 1;
  const out = new Float64Array(psi.length);
  const digit = new Int32Array(sites);
  const dim = psi.length / stride;
  // Odometer over the original index (site 0 fastest), carrying the reordered index along.
  let target = 0;
  for (let s = 0; s < dim; s++) {
    out[stride * target] = psi[stride * s];
    if (isComplex) out[stride * target + 1] = psi[stride * s + 1];
    for (let i = 0; i < sites; i++) {
      if (digit[i] < levels - 1) {
        digit[i]++;
        target += weight[i];
        break;
      }
      target -= (levels - 1) * weight[i];
      digit[i] = 0;
    }
  }
  return out;
}

/** Entanglement of subsystems given as site lists, in the (average of the) given states of a pinned basis. */
export function pinnedSiteSetEntanglement(
  states: Float64Array[],
  sites: number,
  levels: number,
  isComplex: boolean,
  subsystems: readonly (readonly number[])[],
  spectrumCount = DEFAULT_SPECTRUM_COUNT,
): SiteSetEntanglement[] {
  return subsystems.map((subsystem) => {
    const size = entanglementMatrixDimension(sites, levels, subsystem.length, states.length);
    if (size > MAX_ENTANGLEMENT_SIDE) {
      throw new ResourceError(
        `entanglement of sites [${subsystem.join(', ')}]: the smaller side has ${size} states (the rest counted once per state of a ${states.length}-fold ground space), more than the ${MAX_ENTANGLEMENT_SIDE} this computes; choose fewer sites, or fewer outside`,
      );
    }
    const identity = [...subsystem].sort((a, b) => a - b).every((site, k) => site === k);
    const reordered = identity ? states : states.map((psi) => reorderSites(psi, sites, levels, isComplex, subsystem));
    const rho = reducedDensityMatrix(reordered, sites, levels, isComplex, subsystem.length);
    return {
      sites: [...subsystem],
      ...entropiesFromWeights(hermitianEigenvalues(rho.dim, rho.re, rho.im), spectrumCount),
    };
  });
}
