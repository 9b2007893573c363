// Finite-size fits: a quantity measured at several sizes (chain length L or level count N) fitted
// against 1/size^p by weighted linear least squares, y = a0 + a1 x + a2 x^2 + ..., x = 1/size^p,
// so a0 is the value extrapolated to infinite size.
//
// With uncertainties sigma_i the weights are 1/sigma_i^2 and the coefficient errors come from the
// covariance (X^T W X)^-1; without them every point weighs the same and the covariance is scaled
// by the residual variance RSS/(n - terms) (Press et al., Numerical Recipes, 3rd ed., sec. 15.4).

import { Matrix, inverse } from 'ml-matrix';
import { InputError } from '../errors/errors.js';

export interface FitOptions {
  /** Power p in x = 1/size^p (default 1). */
  power?: number;
  /** Number of coefficients: 2 is a straight line in x (default), 3 adds x^2. */
  terms?: number;
  /** One uncertainty per point (all positive), or none for equal weights. */
  sigmas?: (number | null | undefined)[];
  /** A value the quantity never goes below (0 for a gap): an extrapolation below it is reported as it. */
  lowerBound?: number;
}

export interface FitResult {
  power: number;
  terms: number;
  sizes: number[];
  values: number[];
  /** The uncertainties used as weights, or null for equal weights. */
  sigmas: number[] | null;
  /** a0, a1, ... of y = sum_k a_k x^k with x = 1/size^p. */
  coefficients: number[];
  /** Standard errors of the coefficients; null when there are no more points than coefficients. */
  errors: (number | null)[];
  /** a0: the fitted value at infinite size (the lower bound when a0 fell below it, see `bounded`). */
  extrapolated: number;
  /** True when a0 fell below the quantity's lower bound and `extrapolated` is that bound (a0 stays in `coefficients`). */
  bounded: boolean;
  extrapolated_error: number | null;
  /** y_i - fit(x_i), in the order of `sizes`. */
  residuals: number[];
  /** sum of squared (weighted, when sigmas are given) residuals. */
  chi2: number;
  dof: number;
}

/** Fits values measured at the given sizes against 1/size^power. */
export function finiteSizeFit(sizes: number[], values: number[], options: FitOptions = {}): FitResult {
  const power = options.power ?? 1;
  const terms = options.terms ?? 2;
  if (sizes.length !== values.length)
    throw new RangeError(`finiteSizeFit: ${sizes.length} sizes but ${values.length} values`);
  if (!(power > 0) || !Number.isFinite(power))
    throw new InputError(`fit power must be a positive number, got ${power}`);
  if (!Number.isInteger(terms) || terms < 1) throw new InputError(`fit terms must be a positive integer, got ${terms}`);
  const n = sizes.length;
  if (new Set(sizes).size < terms) {
    throw new InputError(
      `a fit with ${terms} coefficients needs at least ${terms} different sizes, got ${new Set(sizes).size}`,
    );
  }
  for (const s of sizes) if (!(s > 0)) throw new InputError(`sizes must be positive, got ${s}`);
  let sigmas: number[] | null = null;
  if (options.sigmas && options.sigmas.some((s) => s !== null && s !== undefined)) {
    sigmas = options.sigmas.map((s, i) => {
      if (typeof s !== 'number' || !(s > 0) || !Number.isFinite(s)) {
        throw new InputError(`uncertainty of the point at size ${sizes[i]} must be a positive number, got ${s}`);
      }
      return s;
    });
  }

  const xs = sizes.map((s) => 1 / Math.pow(s, power));
  const weights = sigmas ? sigmas.map((s) => 1 / (s * s)) : new Array<number>(n).fill(1);
  // Normal equations A a = b with A = X^T W X, b = X^T W y; at most a handful of coefficients.
  const A = Matrix.zeros(terms, terms);
  const b = Matrix.zeros(terms, 1);
  for (let i = 0; i < n; i++) {
    for (let r = 0; r < terms; r++) {
      const xr = Math.pow(xs[i], r);
      b.set(r, 0, b.get(r, 0) + weights[i] * xr * values[i]);
      for (let c = 0; c < terms; c++) A.set(r, c, A.get(r, c) + weights[i] * xr * Math.pow(xs[i], c));
    }
  }
  const covariance = inverse(A);
  const coefficients = covariance.mmul(b).getColumn(0);
  const fitted = xs.map((x) => coefficients.reduce((sum, a, k) => sum + a * Math.pow(x, k), 0));
  const residuals = values.map((y, i) => y - fitted[i]);
  const chi2 = residuals.reduce((sum, r, i) => sum + weights[i] * r * r, 0);
  const dof = n - terms;
  let errors: (number | null)[];
  if (sigmas) errors = coefficients.map((_, k) => Math.sqrt(covariance.get(k, k)));
  else if (dof > 0) errors = coefficients.map((_, k) => Math.sqrt((covariance.get(k, k) * chi2) / dof));
  else errors = coefficients.map(() => null);
  // A gap extrapolated below zero says the gap closes, not that it turns negative.
  const bounded = options.lowerBound !== undefined && coefficients[0] < options.lowerBound;
  return {
    power,
    terms,
    sizes: [...sizes],
    values: [...values],
    sigmas,
    coefficients,
    errors,
    extrapolated: bounded ? (options.lowerBound as number) : coefficients[0],
    bounded,
    extrapolated_error: errors[0],
    residuals,
    chi2,
    dof,
  };
}
