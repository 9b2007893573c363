import { describe, expect, it } from 'vitest';
import { Matrix, solve } from 'ml-matrix';
import { finiteSizeFit } from '../../src/analysis/fits.js';
import { RungchainError } from '../../src/errors/errors.js';
import { isingGroundEnergy } from '../support/ising.js';

describe('weighted least squares against the textbook straight-line formulas', () => {
  it('with uncertainties: coefficients and errors as in Numerical Recipes, sec. 15.2', () => {
    const sizes = [4, 6, 8, 10, 14];
    const values = [1.31, 1.22, 1.18, 1.15, 1.11];
    const sigmas = [0.02, 0.01, 0.015, 0.01, 0.03];
    const fit = finiteSizeFit(sizes, values, { power: 1, sigmas });
    // S = sum 1/s^2, Sx = sum x/s^2, Sy, Sxx, Sxy; D = S Sxx - Sx^2;
    // a = (Sxx Sy - Sx Sxy)/D, b = (S Sxy - Sx Sy)/D, sigma_a^2 = Sxx/D, sigma_b^2 = S/D.
    let S = 0,
      Sx = 0,
      Sy = 0,
      Sxx = 0,
      Sxy = 0;
    sizes.forEach((L, i) => {
      const x = 1 / L;
      const w = 1 / sigmas[i] ** 2;
      S += w;
      Sx += w * x;
      Sy += w * values[i];
      Sxx += w * x * x;
      Sxy += w * x * values[i];
    });
    const D = S * Sxx - Sx * Sx;
    expect(fit.extrapolated).toBeCloseTo((Sxx * Sy - Sx * Sxy) / D, 12);
    expect(fit.coefficients[1]).toBeCloseTo((S * Sxy - Sx * Sy) / D, 10);
    expect(fit.extrapolated_error!).toBeCloseTo(Math.sqrt(Sxx / D), 12);
    expect(fit.errors[1]!).toBeCloseTo(Math.sqrt(S / D), 10);
    // chi^2 = sum ((y - a - b x)/sigma)^2 with the fitted a, b.
    const a = (Sxx * Sy - Sx * Sxy) / D;
    const b = (S * Sxy - Sx * Sy) / D;
    const chi2 = sizes.reduce((sum, L, i) => sum + ((values[i] - a - b / L) / sigmas[i]) ** 2, 0);
    expect(fit.chi2).toBeCloseTo(chi2, 10);
    expect(fit.dof).toBe(3);
    fit.residuals.forEach((r, i) => expect(r).toBeCloseTo(values[i] - a - b / sizes[i], 12));
  });

  it('without uncertainties: the least-squares solution of ml-matrix, errors scaled by the residual variance', () => {
    const sizes = [3, 4, 5, 6, 7, 9];
    const values = [0.52, 0.61, 0.66, 0.695, 0.72, 0.75];
    const fit = finiteSizeFit(sizes, values, { power: 2, terms: 3 });
    const X = new Matrix(sizes.map((L) => [1, 1 / L ** 2, 1 / L ** 4]));
    const reference = solve(X, Matrix.columnVector(values)).getColumn(0); // QR least squares (general-purpose library)
    fit.coefficients.forEach((c, k) => expect(c).toBeCloseTo(reference[k], 9));
    expect(fit.dof).toBe(3);
    expect(fit.errors.every((e) => e !== null && e > 0)).toBe(true);
  });

  it('interpolates exactly when points equal coefficients, and then has no error estimate', () => {
    const fit = finiteSizeFit([4, 8], [2 + 3 / 4, 2 + 3 / 8]);
    expect(fit.extrapolated).toBeCloseTo(2, 13);
    expect(fit.coefficients[1]).toBeCloseTo(3, 12);
    expect(fit.extrapolated_error).toBeNull();
  });

  it('a gap extrapolated below zero is reported as 0 (a closing gap), with the fitted a0 kept', () => {
    // Points on the line 1/L - 0.01 give a0 = -0.01 exactly (least squares reproduces data on the model).
    const sizes = [4, 6, 8];
    const fit = finiteSizeFit(
      sizes,
      sizes.map((L) => 1 / L - 0.01),
      { lowerBound: 0 },
    );
    expect(fit.coefficients[0]).toBeCloseTo(-0.01, 12);
    expect(fit.extrapolated).toBe(0);
    expect(fit.bounded).toBe(true);
    const open = finiteSizeFit(
      sizes,
      sizes.map((L) => 1 / L + 0.01),
      { lowerBound: 0 },
    );
    expect(open.extrapolated).toBeCloseTo(0.01, 12);
    expect(open.bounded).toBe(false);
  });

  it('rejects fits it cannot make', () => {
    expect(() => finiteSizeFit([4, 4, 4], [1, 2, 3])).toThrow(RungchainError);
    expect(() => finiteSizeFit([4, 6], [1, 2], { power: 0 })).toThrow(/power/);
    expect(() => finiteSizeFit([4, 6], [1, 2], { sigmas: [0.1, 0] })).toThrow(/size 6/);
  });
});

describe('critical Ising ring: ground energy per site against 1/L^2', () => {
  // Conformal field theory (Bloete, Cardy and Nightingale, PRL 56, 742 (1986); Affleck, PRL 56, 746
  // (1986)): E0/L = e_inf - pi c v / (6 L^2) + ..., with c = 1/2 and, for H = -sum sz sz - g sum sx at
  // g = 1, v = 2 (eps_k ~ 2k) and e_inf = -4/pi (Pfeuty 1970).
  it('extrapolates to -4/pi with slope -pi c v / 6 = -pi/6', () => {
    const sizes = [6, 8, 10, 12, 14];
    const energies = sizes.map((L) => isingGroundEnergy(L, 1) / L);
    const line = finiteSizeFit(sizes, energies, { power: 2 });
    expect(line.extrapolated).toBeCloseTo(-4 / Math.PI, 3);
    expect(Math.abs(line.extrapolated + 4 / Math.PI)).toBeLessThan(5 * line.extrapolated_error!);
    expect(line.coefficients[1] / (-Math.PI / 6)).toBeCloseTo(1, 1);
    // With the next correction (1/L^4) in the fit, both land much closer.
    const curve = finiteSizeFit(sizes, energies, { power: 2, terms: 3 });
    expect(curve.extrapolated).toBeCloseTo(-4 / Math.PI, 6);
    expect(curve.coefficients[1] / (-Math.PI / 6)).toBeCloseTo(1, 3);
  });
});
