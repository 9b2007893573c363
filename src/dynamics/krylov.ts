// Krylov-subspace propagation psi(t) = exp(-i H t) psi(0) through the HermitianOperator interface.
//
// From the current state a Lanczos basis V_m of modest size m is built (full reorthogonalization),
// giving H V_m = V_m T_m + h v_{m+1} e_m^T with T_m real symmetric tridiagonal. The approximation
// psi_m(s) = beta V_m exp(-i s T_m) e_1 (Park and Light, J. Chem. Phys. 85, 5870 (1986)) obeys
// i psi_m' = H psi_m - delta(s), delta(s) = beta h (e_m^T exp(-i s T_m) e_1) v_{m+1}, so with H
// Hermitian the error after a step of length tau is bounded a posteriori by
//     ||psi(tau) - psi_m(tau)|| <= beta h integral_0^tau |e_m^T exp(-i s T_m) e_1| ds
// (the defect-based estimate of Hochbruck and Lubich, SIAM J. Numer. Anal. 34, 1911 (1997)).
// The step is the longest tau whose bound stays within the error budget `rate * tau`; with rate =
// tolerance / total time the errors of all steps add up to at most the tolerance, because unitary
// propagation never amplifies an earlier error.
//
// Vectors are complex, interleaved re,im, length 2*dim, even when H is real.

import { symmetricEigen } from '../linalg/symmetricEigen.js';
import { ConvergenceError } from '../errors/errors.js';
import type { HermitianOperator } from '../operator/hermitian.js';

/** A Hermitian operator acting on interleaved complex vectors (length 2*dim). */
export interface ComplexOperator {
  readonly dim: number;
  apply(x: Float64Array, y: Float64Array): void;
}

/** Views any HermitianOperator as acting on complex vectors; a real H is applied to the real and imaginary parts. */
export function complexView(op: HermitianOperator): ComplexOperator {
  if (op.isComplex) return op;
  const dim = op.dim;
  const xr = new Float64Array(dim);
  const xi = new Float64Array(dim);
  const yr = new Float64Array(dim);
  const yi = new Float64Array(dim);
  return {
    dim,
    apply(x: Float64Array, y: Float64Array): void {
      for (let s = 0; s < dim; s++) {
        xr[s] = x[2 * s];
        xi[s] = x[2 * s + 1];
      }
      op.apply(xr, yr);
      op.apply(xi, yi);
      for (let s = 0; s < dim; s++) {
        y[2 * s] = yr[s];
        y[2 * s + 1] = yi[s];
      }
    },
  };
}

/** A real vector as an interleaved complex one (imaginary parts zero); complex input is copied. */
export function toComplex(v: Float64Array, dim: number): Float64Array {
  if (v.length === 2 * dim) return Float64Array.from(v);
  const out = new Float64Array(2 * dim);
  for (let s = 0; s < dim; s++) out[2 * s] = v[s];
  return out;
}

/** <a, b> = sum conj(a) b for interleaved complex vectors. */
export function complexDot(a: Float64Array, b: Float64Array): { re: number; im: number } {
  let re = 0;
  let im = 0;
  for (let k = 0; k < a.length; k += 2) {
    const ar = a[k];
    const ai = a[k + 1];
    const br = b[k];
    const bi = b[k + 1];
    re += ar * br + ai * bi;
    im += ar * bi - ai * br;
  }
  return { re, im };
}

export function vectorNorm(v: Float64Array): number {
  let s = 0;
  for (let k = 0; k < v.length; k++) s += v[k] * v[k];
  return Math.sqrt(s);
}

/** <v|H|v> (real for Hermitian H); `scratch` receives H v. */
export function expectation(op: ComplexOperator, v: Float64Array, scratch: Float64Array): number {
  op.apply(v, scratch);
  return complexDot(v, scratch).re;
}

/** Entries processed per block: a block of w stays in cache while the basis vectors stream past. */
const BLOCK = 2048;

/** w -= sum_k <v_k, w> v_k over basis[0..count), classical Gram–Schmidt in cache-sized blocks. */
function orthogonalize(w: Float64Array, basis: Float64Array[], count: number, coef: Float64Array): void {
  const len = w.length;
  coef.fill(0, 0, 2 * count);
  for (let start = 0; start < len; start += BLOCK) {
    const end = Math.min(start + BLOCK, len);
    for (let k = 0; k < count; k++) {
      const v = basis[k];
      let re = 0;
      let im = 0;
      for (let t = start; t < end; t += 2) {
        re += v[t] * w[t] + v[t + 1] * w[t + 1];
        im += v[t] * w[t + 1] - v[t + 1] * w[t];
      }
      coef[2 * k] += re;
      coef[2 * k + 1] += im;
    }
  }
  for (let start = 0; start < len; start += BLOCK) {
    const end = Math.min(start + BLOCK, len);
    for (let k = 0; k < count; k++) {
      const v = basis[k];
      const cr = coef[2 * k];
      const ci = coef[2 * k + 1];
      for (let t = start; t < end; t += 2) {
        w[t] -= cr * v[t] - ci * v[t + 1];
        w[t + 1] -= cr * v[t + 1] + ci * v[t];
      }
    }
  }
}

// 4-point Gauss–Legendre nodes and weights on [-1, 1] (Abramowitz and Stegun, table 25.4).
const GL_NODES = [-0.8611363115940526, -0.3399810435848563, 0.3399810435848563, 0.8611363115940526];
const GL_WEIGHTS = [0.3478548451374538, 0.6521451548625461, 0.6521451548625461, 0.3478548451374538];

/** A new Lanczos direction shorter than this (relative to ||H v||) means the Krylov space is invariant. */
const BREAKDOWN_RATIO = 1e-13;

export interface KrylovStep {
  /** Length of the accepted step (model time). */
  tau: number;
  /** A posteriori bound on the 2-norm error of the state after the whole step. */
  errorBound: number;
  /** Krylov dimension used (smaller than requested after a happy breakdown). */
  size: number;
  /** Writes psi(s) = exp(-i s H) psi(0) for 0 <= s <= tau into `out` (length 2*dim). */
  evaluate(s: number, out: Float64Array): void;
}

/**
 * Propagates with one operator. The Lanczos vectors are allocated once (m+1 complex vectors) and
 * reused from step to step.
 */
export class KrylovPropagator {
  readonly dim: number;
  readonly maxSize: number;
  private readonly op: ComplexOperator;
  private readonly basis: Float64Array[] = [];
  private readonly w: Float64Array;
  private readonly coef: Float64Array;
  /** Matrix-vector products used so far. */
  matvecs = 0;

  constructor(op: ComplexOperator, krylovSize: number) {
    this.op = op;
    this.dim = op.dim;
    // The Krylov space of a vector never exceeds the dimension.
    this.maxSize = Math.max(1, Math.min(krylovSize, op.dim));
    this.w = new Float64Array(2 * op.dim);
    this.coef = new Float64Array(2 * this.maxSize);
  }

  private vector(j: number): Float64Array {
    while (this.basis.length <= j) this.basis.push(new Float64Array(2 * this.dim));
    return this.basis[j];
  }

  /**
   * Builds the Krylov space of `psi` and takes the longest step up to `maxTau` whose error bound
   * is at most `rate * tau` (or `maxTau` outright if the space is invariant). The space stops
   * growing early once it already covers all of `maxTau` (short pieces of a ramp need few vectors).
   */
  step(psi: Float64Array, maxTau: number, rate: number): KrylovStep {
    const m = this.maxSize;
    const alpha = new Float64Array(m);
    const beta = new Float64Array(m); // beta[j] = ||w|| after step j: couples v_j to v_{j+1}
    const beta0 = vectorNorm(psi);
    if (beta0 === 0) {
      return { tau: maxTau, errorBound: 0, size: 0, evaluate: (_s, out) => out.fill(0) };
    }
    const v0 = this.vector(0);
    for (let k = 0; k < psi.length; k++) v0[k] = psi[k] / beta0;

    const w = this.w;
    let analysis: TridiagonalAnalysis | null = null;
    for (let j = 0; j < m; j++) {
      const vj = this.basis[j];
      this.op.apply(vj, w);
      this.matvecs++;
      const hvNorm = vectorNorm(w);
      const a = complexDot(vj, w).re;
      alpha[j] = a;
      // Three-term recurrence, then full reorthogonalization against every earlier vector (one
      // classical Gram–Schmidt pass, a second when the first removes much: Daniel, Gragg, Kaufman
      // and Stewart 1976), which keeps T_m faithful for the small m used here.
      const previous = j > 0 ? this.basis[j - 1] : null;
      const bPrev = j > 0 ? beta[j - 1] : 0;
      for (let t = 0; t < w.length; t++) {
        w[t] -= a * vj[t] + (previous ? bPrev * previous[t] : 0);
      }
      for (let pass = 0; pass < 2; pass++) {
        const before = vectorNorm(w);
        orthogonalize(w, this.basis, j + 1, this.coef);
        if (vectorNorm(w) > Math.SQRT1_2 * before) break;
      }
      const b = vectorNorm(w);
      beta[j] = b;
      if (b <= BREAKDOWN_RATIO * Math.max(hvNorm, Math.abs(a), 1e-300)) {
        // Happy breakdown: the space is invariant and the step is exact for any length.
        analysis = analyseTridiagonal(alpha, beta, j + 1, 0, beta0);
        break;
      }
      if (j + 1 === m) {
        analysis = analyseTridiagonal(alpha, beta, m, b, beta0);
        break;
      }
      if (j + 1 >= 4) {
        const trial = analyseTridiagonal(alpha, beta, j + 1, b, beta0);
        // A space of j vectors resolves at most ~j phase turns; only then is the check worth its quadrature.
        if (maxTau * trial.spreadT <= 2 * (j + 1) && trial.bound(maxTau) <= rate * maxTau) {
          analysis = trial;
          break;
        }
      }
      // v_{m+1} itself is never needed: only its coefficient h enters the error bound.
      const next = this.vector(j + 1);
      for (let t = 0; t < w.length; t++) next[t] = w[t] / b;
    }
    const { size, lambda, Q, first, centre, spreadT, h, bound } = analysis as TridiagonalAnalysis;

    // Past a few thousand phase turns no Krylov step of this size is accurate; keep the quadrature honest.
    let tau = h === 0 || spreadT === 0 ? maxTau : Math.min(maxTau, (4096 * Math.PI) / spreadT);
    let errorBound = bound(tau);
    if (errorBound > rate * tau) {
      // The bound grows like tau^(m+1) for short steps: shrink until a step is accepted, then
      // bisect on log(tau) for the longest acceptable one.
      let good = 0;
      let bad = tau;
      let probe = tau;
      for (let k = 0; k < 200; k++) {
        probe /= 4;
        if (bound(probe) <= rate * probe) {
          good = probe;
          break;
        }
        bad = probe;
      }
      if (good === 0) {
        throw new ConvergenceError(
          `time evolution: no Krylov step of size ${m} meets the tolerance (bound per unit time ${rate.toExponential(2)}); ` +
            'raise evolve.tolerance or evolve.krylov',
        );
      }
      for (let k = 0; k < 40 && bad / good > 1 + 1e-3; k++) {
        const mid = Math.sqrt(good * bad);
        if (bound(mid) <= rate * mid) good = mid;
        else bad = mid;
      }
      tau = good;
      errorBound = bound(tau);
    }

    const basis = this.basis;
    const coefRe = new Float64Array(size);
    const coefIm = new Float64Array(size);
    const evaluate = (s: number, out: Float64Array): void => {
      // c = beta Q exp(-i s (Lambda - centre)) Q^T e_1, times the global phase exp(-i s centre).
      const gr = Math.cos(-s * centre);
      const gi = Math.sin(-s * centre);
      coefRe.fill(0);
      coefIm.fill(0);
      for (let k = 0; k < size; k++) {
        const phase = -s * (lambda[k] - centre);
        const er = Math.cos(phase) * first[k] * beta0;
        const ei = Math.sin(phase) * first[k] * beta0;
        const zr = er * gr - ei * gi;
        const zi = er * gi + ei * gr;
        for (let j = 0; j < size; j++) {
          const q = Q[k * size + j];
          coefRe[j] += q * zr;
          coefIm[j] += q * zi;
        }
      }
      out.fill(0);
      for (let j = 0; j < size; j++) {
        const v = basis[j];
        const cr = coefRe[j];
        const ci = coefIm[j];
        for (let t = 0; t < out.length; t += 2) {
          out[t] += cr * v[t] - ci * v[t + 1];
          out[t + 1] += cr * v[t + 1] + ci * v[t];
        }
      }
    };
    return { tau, errorBound, size, evaluate };
  }
}

interface TridiagonalAnalysis {
  size: number;
  lambda: Float64Array;
  /** Q[k * size + j]: component j of the Ritz vector of lambda[k]. */
  Q: Float64Array;
  /** first[k] = Q[k * size]: the start vector's weight on each Ritz vector. */
  first: Float64Array;
  /** Midpoint of the Ritz values, split off as a global phase for accuracy. */
  centre: number;
  spreadT: number;
  /** beta_m: the coupling of the space to the next Krylov direction (0 when invariant). */
  h: number;
  /** A posteriori error bound of a step of length tau. */
  bound: (tau: number) => number;
}

/** Eigen-decomposition of T_size (exp(-i s T) e_1 = Q exp(-i s Lambda) Q^T e_1) and the step error bound. */
function analyseTridiagonal(
  alpha: Float64Array,
  beta: Float64Array,
  size: number,
  h: number,
  beta0: number,
): TridiagonalAnalysis {
  const T = new Float64Array(size * size);
  for (let j = 0; j < size; j++) {
    T[j * size + j] = alpha[j];
    if (j + 1 < size) {
      T[j * size + j + 1] = beta[j];
      T[(j + 1) * size + j] = beta[j];
    }
  }
  const eig = symmetricEigen(T, size);
  const lambda = eig.values;
  const Q = eig.vectors!;
  const first = new Float64Array(size);
  const lastTimesFirst = new Float64Array(size);
  for (let k = 0; k < size; k++) {
    first[k] = Q[k * size];
    lastTimesFirst[k] = Q[k * size + size - 1] * first[k];
  }
  let lo = Infinity;
  let hi = -Infinity;
  for (const l of lambda) {
    lo = Math.min(lo, l);
    hi = Math.max(hi, l);
  }
  const spreadT = hi - lo;
  const centre = (hi + lo) / 2;
  // |e_m^T exp(-i s T) e_1|
  const defect = (s: number): number => {
    let re = 0;
    let im = 0;
    for (let k = 0; k < size; k++) {
      const phase = -s * (lambda[k] - centre);
      re += lastTimesFirst[k] * Math.cos(phase);
      im += lastTimesFirst[k] * Math.sin(phase);
    }
    return Math.hypot(re, im);
  };
  // Composite Gauss–Legendre: panels short enough that the integrand's phases turn by under pi.
  const bound = (tau: number): number => {
    if (h === 0) return 0;
    const panels = Math.max(1, Math.ceil((tau * spreadT) / Math.PI));
    const width = tau / panels;
    let integral = 0;
    for (let p = 0; p < panels; p++) {
      const mid = (p + 0.5) * width;
      for (let g = 0; g < GL_NODES.length; g++)
        integral += GL_WEIGHTS[g] * (width / 2) * defect(mid + (GL_NODES[g] * width) / 2);
    }
    return beta0 * h * integral;
  };
  return { size, lambda, Q, first, centre, spreadT, h, bound };
}
