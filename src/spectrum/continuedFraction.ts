// The Lanczos continued fraction (Gagliano and Balseiro, Phys. Rev. Lett. 59, 2999 (1987)):
// from a start vector phi, the Lanczos recurrence
//     b_{j+1} v_{j+1} = H v_j - a_j v_j - b_j v_{j-1},    v_0 = phi / ||phi||,
// gives the tridiagonal T (a on the diagonal, b beside it), and
//     <phi| (z - H)^{-1} |phi> = ||phi||^2 / (z - a_0 - b_1^2 / (z - a_1 - b_2^2 / ...)).
// Its poles are T's eigenvalues theta_j with weights ||phi||^2 u_{0j}^2 (u_{0j} the first component
// of the eigenvector): the Gauss quadrature of the spectral measure of phi, whose moments up to
// order 2n - 1 are exact after n levels. The broadened curve is the sum of the poles' line shapes,
// which for a Lorentzian is -(1/pi) Im of the continued fraction at z = omega + i eta.
//
// Small spaces keep every Lanczos vector and orthogonalize against all of them (twice), so the
// recurrence ends exactly when the Krylov space is invariant. Large ones run the plain three-term
// recurrence on three vectors: orthogonality is lost once lines converge and copies ("ghosts") of
// them appear, but the quadrature stays accurate (Greenbaum, Linear Algebra Appl. 113, 7 (1989)),
// so the curve converges all the same; the copies of a line are merged when lines are listed.

import { tridiagonalEigen } from '../linalg/symmetricEigen.js';
import type { HermitianOperator } from '../operator/hermitian.js';

/** A new direction shorter than this, relative to the largest coefficient, means the Krylov space is invariant. */
const INVARIANT_RATIO = 1e-12;
/** Keep every vector (and orthogonalize fully) while the kept vectors take at most this many doubles. */
export const FULL_ORTHOGONALIZATION_DOUBLES = 1 << 20;

/**
 * One Lanczos run from a start vector, extended on demand. Vectors are real (length dim, a real
 * operator) or interleaved complex (length 2 dim); `apply` is the operator's product on them.
 */
export class LanczosChain {
  readonly diagonal: number[] = [];
  /** off[j] = b_{j+1}, between levels j and j + 1. */
  readonly off: number[] = [];
  /** The Krylov space is invariant: the tridiagonal matrix holds the whole spectrum of the start vector. */
  exhausted = false;
  products = 0;
  private previous: Float64Array;
  private current: Float64Array;
  private readonly work: Float64Array;
  private readonly kept: Float64Array[] | null;
  private readonly coefficients: Float64Array;

  constructor(
    private readonly apply: (x: Float64Array, y: Float64Array) => void,
    start: Float64Array,
    private readonly complex: boolean,
    fullOrthogonalization: boolean,
    /** Where vectors live: an arena, so the operator's SIMD product works on them in place. */
    private readonly allocate: (length: number) => Float64Array = (length) => new Float64Array(length),
  ) {
    const norm = Math.sqrt(dotRe(start, start));
    this.current = allocate(start.length);
    for (let k = 0; k < start.length; k++) this.current[k] = start[k] / norm;
    this.previous = allocate(start.length);
    this.work = allocate(start.length);
    this.kept = fullOrthogonalization ? [this.current] : null;
    this.coefficients = new Float64Array(2);
  }

  get levels(): number {
    return this.diagonal.length;
  }

  /** Runs the recurrence until `levels` levels are known or the Krylov space is invariant. */
  extendTo(levels: number, onLevel?: () => void): void {
    while (!this.exhausted && this.diagonal.length < levels) {
      const w = this.work;
      const v = this.current;
      this.apply(v, w);
      this.products++;
      const a = dotRe(v, w);
      const b = this.off.length > 0 ? this.off[this.off.length - 1] : 0;
      const u = this.previous;
      for (let k = 0; k < w.length; k++) w[k] -= a * v[k] + b * u[k];
      if (this.kept) for (let pass = 0; pass < 2; pass++) for (const q of this.kept) this.subtractProjection(q, w);
      this.diagonal.push(a);
      const next = Math.sqrt(dotRe(w, w));
      const scale = Math.max(...this.diagonal.map(Math.abs), ...this.off, next);
      if (next <= INVARIANT_RATIO * scale) {
        this.exhausted = true;
        onLevel?.();
        break;
      }
      this.off.push(next);
      // The old previous vector becomes the next one (unless kept), saving an allocation per level.
      const fresh = this.kept ? this.allocate(w.length) : this.previous;
      for (let k = 0; k < w.length; k++) fresh[k] = w[k] / next;
      this.previous = this.current;
      this.current = fresh;
      this.kept?.push(fresh);
      onLevel?.();
    }
  }

  /** w -= <q, w> q (complex coefficients for complex vectors). */
  private subtractProjection(q: Float64Array, w: Float64Array): void {
    if (!this.complex) {
      const c = dotRe(q, w);
      for (let k = 0; k < w.length; k++) w[k] -= c * q[k];
      return;
    }
    complexDotInto(q, w, this.coefficients);
    const cr = this.coefficients[0];
    const ci = this.coefficients[1];
    for (let k = 0; k < w.length; k += 2) {
      w[k] -= cr * q[k] - ci * q[k + 1];
      w[k + 1] -= cr * q[k + 1] + ci * q[k];
    }
  }
}

/** Sum of x_k y_k: the real part of <x, y> for interleaved complex vectors too. */
export function dotRe(x: Float64Array, y: Float64Array): number {
  let s = 0;
  for (let k = 0; k < x.length; k++) s += x[k] * y[k];
  return s;
}

/** out = <a, b> = sum conj(a) b, interleaved complex. */
export function complexDotInto(a: Float64Array, b: Float64Array, out: Float64Array): void {
  let re = 0;
  let im = 0;
  for (let k = 0; k < a.length; k += 2) {
    re += a[k] * b[k] + a[k + 1] * b[k + 1];
    im += a[k] * b[k + 1] - a[k + 1] * b[k];
  }
  out[0] = re;
  out[1] = im;
}

export interface Poles {
  /** Eigenvalues of the tridiagonal matrix (absolute energies), ascending. */
  positions: Float64Array;
  /** Their weights; they add up to the start vector's squared norm. */
  weights: Float64Array;
  /**
   * Ritz residuals b_n |u_(n-1)j|: an eigenvalue of H lies within this of each position (0 when
   * the Krylov space is exhausted).
   */
  residuals: Float64Array;
}

/** The poles of the first `levels` levels of a chain, for a start vector of squared norm `weight`. */
export function chainPoles(chain: LanczosChain, levels: number, weight: number): Poles {
  const n = Math.min(levels, chain.levels);
  const { values, firstComponents, lastComponents } = tridiagonalEigen(
    chain.diagonal.slice(0, n),
    chain.off.slice(0, n - 1),
  );
  // The coupling to the next level (none once the Krylov space is exhausted).
  const next = n - 1 < chain.off.length ? chain.off[n - 1] : 0;
  return {
    positions: values,
    weights: Float64Array.from(firstComponents, (u) => weight * u * u),
    residuals: Float64Array.from(lastComponents, (u) => Math.abs(next * u)),
  };
}

/** Line shape: a Lorentzian or a Gaussian, by its half width at half maximum; each integrates to 1. */
export interface LineShape {
  lorentzian: number;
  gaussian: number;
}

/** sum_j weight_j shape(omega - position_j) at each frequency (positions already shifted to the frequency axis). */
export function broadenedCurve(
  positions: ArrayLike<number>,
  weights: ArrayLike<number>,
  frequencies: Float64Array,
  shape: LineShape,
): Float64Array {
  if (shape.lorentzian > 0 && shape.gaussian > 0) return voigtCurve(positions, weights, frequencies, shape);
  const out = new Float64Array(frequencies.length);
  if (shape.lorentzian > 0) {
    const eta = shape.lorentzian;
    for (let j = 0; j < positions.length; j++) {
      const w = weights[j] * (eta / Math.PI);
      if (w === 0) continue;
      const x = positions[j];
      for (let f = 0; f < frequencies.length; f++) {
        const d = frequencies[f] - x;
        out[f] += w / (d * d + eta * eta);
      }
    }
    return out;
  }
  // Half width at half maximum gamma = sigma sqrt(2 ln 2).
  const sigma = shape.gaussian / Math.sqrt(2 * Math.LN2);
  const norm = 1 / (sigma * Math.sqrt(2 * Math.PI));
  for (let j = 0; j < positions.length; j++) {
    const w = weights[j] * norm;
    if (w === 0) continue;
    const x = positions[j];
    for (let f = 0; f < frequencies.length; f++) {
      const d = (frequencies[f] - x) / sigma;
      out[f] += w * Math.exp(-0.5 * d * d);
    }
  }
  return out;
}

/** Fine steps per Lorentzian half width in the Voigt convolution (see voigtCurve). */
const VOIGT_STEPS_PER_WIDTH = 6;
/** The Gaussian is cut at this many standard deviations (exp(-8.5^2/2) is below 1e-15). */
const VOIGT_REACH = 8.5;

/** The Voigt convolution's fine grid: steps per output step, fine step, points each side (spectrum.broadening bounds the total). */
function voigtGrid(
  from: number,
  to: number,
  steps: number,
  shape: LineShape,
): { perStep: number; h: number; reach: number; points: number } {
  const delta = (to - from) / (steps - 1);
  const perStep = Math.max(1, Math.ceil((VOIGT_STEPS_PER_WIDTH * delta) / shape.lorentzian));
  const h = delta / perStep;
  const sigma = shape.gaussian / Math.sqrt(2 * Math.LN2);
  const reach = Math.ceil((VOIGT_REACH * sigma) / h);
  return { perStep, h, reach, points: (steps - 1) * perStep + 1 + 2 * reach };
}

/**
 * Lorentzian and Gaussian together: the Voigt profile, the Gaussian's convolution with the
 * Lorentzian-broadened curve, integral G(s) C_L(omega - s) ds. As a function of s the integrand
 * is analytic in the strip |Im s| < eta (the Lorentzian's poles), so the trapezoid rule with step
 * h converges like exp(-2 pi eta / h) (Trefethen and Weideman, SIAM Rev. 56, 385 (2014)): h = eta/6
 * leaves about 4e-17. The output grid is uniform, so every C_L value needed lies on one fine grid
 * of step h, evaluated once from the poles.
 */
function voigtCurve(
  positions: ArrayLike<number>,
  weights: ArrayLike<number>,
  frequencies: Float64Array,
  shape: LineShape,
): Float64Array {
  const n = frequencies.length;
  const { perStep, h, reach, points } = voigtGrid(frequencies[0], frequencies[n - 1], n, shape);
  const eta = shape.lorentzian;
  const start = frequencies[0] - reach * h;
  const fine = new Float64Array(points);
  for (let j = 0; j < positions.length; j++) {
    const w = weights[j] * (eta / Math.PI);
    if (w === 0) continue;
    const x = positions[j];
    for (let i = 0; i < points; i++) {
      const d = start + i * h - x;
      fine[i] += w / (d * d + eta * eta);
    }
  }
  const sigma = shape.gaussian / Math.sqrt(2 * Math.LN2);
  const gauss = Float64Array.from({ length: 2 * reach + 1 }, (_, k) => {
    const s = (k - reach) * h;
    return (h * Math.exp((-0.5 * s * s) / (sigma * sigma))) / (sigma * Math.sqrt(2 * Math.PI));
  });
  const out = new Float64Array(n);
  for (let f = 0; f < n; f++) {
    // omega_f sits at fine index reach + f perStep; s_k = (k - reach) h pairs with omega_f - s_k
    const centre = reach + f * perStep;
    let sum = 0;
    for (let k = 0; k < gauss.length; k++) sum += gauss[k] * fine[centre - (k - reach)];
    out[f] = sum;
  }
  return out;
}

/**
 * The part of the broadened curve inside [from, to], integrated exactly line by line (closed
 * forms: arctan for a Lorentzian, erf for a Gaussian; a Voigt line's arctans averaged over the
 * Gaussian by the trapezoid rule, as in voigtCurve).
 */
export function weightInside(
  positions: ArrayLike<number>,
  weights: ArrayLike<number>,
  from: number,
  to: number,
  shape: LineShape,
): number {
  let inside = 0;
  for (let j = 0; j < positions.length; j++) {
    const a = from - positions[j];
    const b = to - positions[j];
    if (shape.lorentzian > 0 && shape.gaussian > 0) {
      const eta = shape.lorentzian;
      const sigma = shape.gaussian / Math.sqrt(2 * Math.LN2);
      const h = eta / VOIGT_STEPS_PER_WIDTH;
      const reach = Math.ceil((VOIGT_REACH * sigma) / h);
      let sum = 0;
      for (let k = -reach; k <= reach; k++) {
        const s = k * h;
        const g = (h * Math.exp((-0.5 * s * s) / (sigma * sigma))) / (sigma * Math.sqrt(2 * Math.PI));
        sum += g * (Math.atan((b - s) / eta) - Math.atan((a - s) / eta));
      }
      inside += (weights[j] * sum) / Math.PI;
    } else if (shape.lorentzian > 0) {
      const eta = shape.lorentzian;
      inside += (weights[j] * (Math.atan(b / eta) - Math.atan(a / eta))) / Math.PI;
    } else {
      const s = (shape.gaussian / Math.sqrt(2 * Math.LN2)) * Math.SQRT2;
      inside += (weights[j] * (erf(b / s) - erf(a / s))) / 2;
    }
  }
  return inside;
}

/** The error function, to an absolute 1.5e-7 (Abramowitz and Stegun 7.1.26): enough for a reported window weight. */
function erf(x: number): number {
  const sign = x < 0 ? -1 : 1;
  const t = 1 / (1 + 0.3275911 * Math.abs(x));
  const y =
    1 -
    ((((1.061405429 * t - 1.453152027) * t + 1.421413741) * t - 0.284496736) * t + 0.254829592) * t * Math.exp(-x * x);
  return sign * y;
}

/**
 * Merges poles closer than `within` into one line at their weighted mean (ghost copies of a line
 * from a run without full orthogonalization, and the copies of a degenerate ground space), then
 * returns the `count` strongest, ordered by position.
 */
export function strongestLines(
  positions: ArrayLike<number>,
  weights: ArrayLike<number>,
  residuals: ArrayLike<number>,
  within: number,
  count: number,
): { position: number; weight: number; residual: number }[] {
  // Typed arrays throughout: a finite-temperature spectrum may hand over millions of pairs.
  const n = positions.length;
  const order = new Uint32Array(n);
  for (let k = 0; k < n; k++) order[k] = k;
  order.sort((p, q) => positions[p] - positions[q]);
  const mergedPosition = new Float64Array(n);
  const mergedWeight = new Float64Array(n);
  const mergedResidual = new Float64Array(n);
  let merged = 0;
  let sum = 0;
  let moment = 0;
  let residual = 0;
  let last = -Infinity;
  const close = () => {
    mergedPosition[merged] = moment / sum;
    mergedWeight[merged] = sum;
    mergedResidual[merged] = residual;
    merged++;
  };
  for (const k of order) {
    if (positions[k] - last > within && sum > 0) {
      close();
      sum = 0;
      moment = 0;
      residual = 0;
    }
    const starting = sum === 0;
    if (starting) last = positions[k];
    sum += weights[k];
    moment += weights[k] * positions[k];
    // A merged line is as certain as its best-converged copy.
    residual = starting ? residuals[k] : Math.min(residual, residuals[k]);
  }
  if (sum > 0) close();
  const strongest = new Uint32Array(merged);
  for (let k = 0; k < merged; k++) strongest[k] = k;
  strongest.sort((p, q) => mergedWeight[q] - mergedWeight[p]);
  return Array.from(strongest.subarray(0, Math.min(count, merged)), (k) => ({
    position: mergedPosition[k],
    weight: mergedWeight[k],
    residual: mergedResidual[k],
  })).sort((a, b) => a.position - b.position);
}

/** The operator's product on the chain's vectors: real ones directly, complex ones part by part for a real operator. */
export function productOn(
  op: HermitianOperator,
  complex: boolean,
  allocate: (length: number) => Float64Array = (length) => new Float64Array(length),
): (x: Float64Array, y: Float64Array) => void {
  if (!complex || op.isComplex) return (x, y) => op.apply(x, y);
  const dim = op.dim;
  const xr = allocate(dim);
  const yr = allocate(dim);
  return (x, y) => {
    for (let part = 0; part < 2; part++) {
      for (let s = 0; s < dim; s++) xr[s] = x[2 * s + part];
      op.apply(xr, yr);
      for (let s = 0; s < dim; s++) y[2 * s + part] = yr[s];
    }
  };
}
