import { describe, it, expect } from 'vitest';
import { Matrix, EigenvalueDecomposition, QrDecomposition } from 'ml-matrix';
import {
  lowestEigenpairs,
  denseEigen,
  denseThresholdFor,
  denseMatrixOf,
  PARTIAL_MIN_LENGTH,
  STEP_CHECK_MIN_LENGTH,
  type EigenResult,
} from '../../src/solver/eigensolver.js';
import { ConvergenceError, SpecError } from '../../src/errors/errors.js';
import type { HermitianOperator } from '../../src/operator/hermitian.js';
import { denseSpectrum } from '../support/reference.js';

// ---------------------------------------------------------------------------------------------
// Test operators, built independently of the solver: a sparse Hermitian matrix kept as a list
// of entries (its own matvec), and the same entries laid out densely for ml-matrix.

function seeded(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s ^ (s >>> 15), 0x2c1b3c6d) + 0x6d2b79f5) >>> 0;
    s ^= s + Math.imul(s ^ (s >>> 7), s | 61);
    return ((s ^ (s >>> 14)) >>> 0) / 4294967296;
  };
}

/** Hermitian matrix from entries (row, col, re, im); (col, row, re, -im) is added for row != col. */
class SparseHermitian implements HermitianOperator {
  readonly rows: number[] = [];
  readonly cols: number[] = [];
  readonly re: number[] = [];
  readonly im: number[] = [];
  applications = 0;
  /** Distinct vectors the solver ever handed to apply: a view of its working memory. */
  readonly seen = new Set<Float64Array>();
  trackVectors = false;
  constructor(
    readonly dim: number,
    readonly isComplex: boolean,
  ) {}
  add(row: number, col: number, re: number, im = 0): void {
    this.rows.push(row);
    this.cols.push(col);
    this.re.push(re);
    this.im.push(row === col ? 0 : im);
    if (row !== col) {
      this.rows.push(col);
      this.cols.push(row);
      this.re.push(re);
      this.im.push(-im);
    }
  }
  apply(x: Float64Array, y: Float64Array): void {
    this.applications++;
    if (this.trackVectors) {
      this.seen.add(x);
      this.seen.add(y);
    }
    y.fill(0);
    const n = this.rows.length;
    if (!this.isComplex) {
      for (let k = 0; k < n; k++) y[this.rows[k]] += this.re[k] * x[this.cols[k]];
      return;
    }
    for (let k = 0; k < n; k++) {
      const r = this.rows[k];
      const c = this.cols[k];
      const hr = this.re[k];
      const hi = this.im[k];
      y[2 * r] += hr * x[2 * c] - hi * x[2 * c + 1];
      y[2 * r + 1] += hr * x[2 * c + 1] + hi * x[2 * c];
    }
  }
  /** Dense real part and imaginary part, accumulated straight from the entries. */
  dense(): { re: Matrix; im: Matrix } {
    const re = Matrix.zeros(this.dim, this.dim);
    const im = Matrix.zeros(this.dim, this.dim);
    for (let k = 0; k < this.rows.length; k++) {
      re.set(this.rows[k], this.cols[k], re.get(this.rows[k], this.cols[k]) + this.re[k]);
      im.set(this.rows[k], this.cols[k], im.get(this.rows[k], this.cols[k]) + this.im[k]);
    }
    return { re, im };
  }
}

/** Random sparse Hermitian matrix: random diagonal, `perRow` random couplings per row. */
function randomSparse(dim: number, isComplex: boolean, perRow: number, seed: number): SparseHermitian {
  const rand = seeded(seed);
  const h = new SparseHermitian(dim, isComplex);
  for (let i = 0; i < dim; i++) {
    h.add(i, i, 4 * (rand() - 0.5));
    for (let k = 0; k < perRow; k++) {
      const j = Math.floor(rand() * dim);
      if (j === i) continue;
      h.add(i, j, rand() - 0.5, isComplex ? rand() - 0.5 : 0);
    }
  }
  return h;
}

/** Reference spectrum from ml-matrix's dense symmetric eigensolver (outside this project). */
function referenceSpectrum(h: SparseHermitian): number[] {
  const { re, im } = h.dense();
  if (!h.isComplex) {
    return new EigenvalueDecomposition(re, { assumeSymmetric: true }).realEigenvalues.sort((a, b) => a - b);
  }
  // H = A + iB has the spectrum of [[A, -B], [B, A]], each value twice.
  return denseSpectrum({ dim: h.dim, re, im });
}

/** 1D tight-binding ring, hopping -1, with a Peierls phase `flux` per link (complex when flux != 0). */
function ring(n: number, flux = 0): HermitianOperator {
  const c = Math.cos(flux);
  const s = Math.sin(flux);
  const isComplex = flux !== 0;
  return {
    dim: n,
    isComplex,
    apply(x: Float64Array, y: Float64Array): void {
      for (let i = 0; i < n; i++) {
        const p = (i - 1 + n) % n;
        const q = (i + 1) % n;
        if (!isComplex) {
          y[i] = -(x[p] + x[q]);
          continue;
        }
        // (H x)_i = -(e^{i flux} x_{i-1} + e^{-i flux} x_{i+1})
        y[2 * i] = -(c * x[2 * p] - s * x[2 * p + 1] + c * x[2 * q] + s * x[2 * q + 1]);
        y[2 * i + 1] = -(c * x[2 * p + 1] + s * x[2 * p] + c * x[2 * q + 1] - s * x[2 * q]);
      }
    },
  };
}

/** ||H v - E v|| with the test's own operator, and the norm of v. */
function residualOf(op: HermitianOperator, v: Float64Array, e: number): number {
  const hv = new Float64Array(v.length);
  op.apply(v, hv);
  let s = 0;
  for (let i = 0; i < v.length; i++) s += (hv[i] - e * v[i]) ** 2;
  return Math.sqrt(s);
}

/** Largest deviation of the Gram matrix of `vectors` from the identity (complex inner product). */
function orthonormalityError(vectors: Float64Array[], isComplex: boolean): number {
  let worst = 0;
  for (let a = 0; a < vectors.length; a++) {
    for (let b = 0; b < vectors.length; b++) {
      let re = 0;
      let im = 0;
      const u = vectors[a];
      const v = vectors[b];
      if (isComplex) {
        for (let i = 0; i < u.length; i += 2) {
          re += u[i] * v[i] + u[i + 1] * v[i + 1];
          im += u[i] * v[i + 1] - u[i + 1] * v[i];
        }
      } else {
        for (let i = 0; i < u.length; i++) re += u[i] * v[i];
      }
      worst = Math.max(worst, Math.hypot(re - (a === b ? 1 : 0), im));
    }
  }
  return worst;
}

function expectEigenpairs(op: HermitianOperator, result: EigenResult, expected: number[], tolerance: number): void {
  expect(result.converged).toBe(true);
  expect(result.values.length).toBe(expected.length);
  for (let k = 0; k < expected.length; k++) {
    expect(Math.abs(result.values[k] - expected[k])).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(expected[k])));
    expect(result.residuals[k]).toBeLessThanOrEqual(tolerance);
    // Recomputed here with the test's own product, not trusted from the solver.
    expect(residualOf(op, result.vectors[k], result.values[k])).toBeLessThanOrEqual(2 * tolerance);
  }
  expect(orthonormalityError(result.vectors, op.isComplex)).toBeLessThan(1e-11);
}

// ---------------------------------------------------------------------------------------------

describe('Lanczos against a dense reference', () => {
  // Reference: ml-matrix EigenvalueDecomposition (tred2/tql2), an outside dense solver.
  it('random real symmetric sparse matrix, dim 400, 4 states', () => {
    const h = randomSparse(400, false, 4, 11);
    const result = lowestEigenpairs(h, { states: 4, tolerance: 1e-8, denseThreshold: 10 });
    expect(result.method).toBe('lanczos');
    expectEigenpairs(h, result, referenceSpectrum(h).slice(0, 4), 1e-8);
  });

  // Reference: ml-matrix EigenvalueDecomposition of the real embedding [[A,-B],[B,A]].
  it('random complex Hermitian sparse matrix, dim 200, 3 states', () => {
    const h = randomSparse(200, true, 5, 12);
    const result = lowestEigenpairs(h, { states: 3, tolerance: 1e-8, denseThreshold: 10 });
    expect(result.method).toBe('lanczos');
    expectEigenpairs(h, result, referenceSpectrum(h).slice(0, 3), 1e-8);
  });

  // Reference: ml-matrix EigenvalueDecomposition of each 100x100 block; a permutation hides the
  // block structure from the solver, the spectrum is the union of the block spectra.
  it('permuted block-diagonal real matrix, dim 3000, 5 states', () => {
    const blocks = 30;
    const size = 100;
    const dim = blocks * size;
    const rand = seeded(13);
    const perm = Array.from({ length: dim }, (_, i) => i);
    for (let i = dim - 1; i > 0; i--) {
      const j = Math.floor(rand() * (i + 1));
      [perm[i], perm[j]] = [perm[j], perm[i]];
    }
    const h = new SparseHermitian(dim, false);
    const spectrum: number[] = [];
    for (let b = 0; b < blocks; b++) {
      const block = randomSparse(size, false, 3, 100 + b);
      for (let k = 0; k < block.rows.length; k++) {
        const r = block.rows[k];
        const c = block.cols[k];
        if (r > c) continue; // add() mirrors
        h.add(perm[b * size + r], perm[b * size + c], block.re[k]);
      }
      spectrum.push(...referenceSpectrum(block));
    }
    spectrum.sort((a, b) => a - b);
    const result = lowestEigenpairs(h, { states: 5, tolerance: 1e-8, denseThreshold: 10 });
    expectEigenpairs(h, result, spectrum.slice(0, 5), 1e-8);
  });

  // Reference: the complex dense path against ml-matrix on the same operator.
  it('dense path of a random complex Hermitian matrix matches the reference', () => {
    const h = randomSparse(120, true, 6, 14);
    const result = lowestEigenpairs(h, { states: 6, tolerance: 1e-9 });
    expect(result.method).toBe('dense');
    expect(result.matvecs).toBe(120);
    expectEigenpairs(h, result, referenceSpectrum(h).slice(0, 6), 1e-9);
  });
});

describe('degenerate spectra come out with full multiplicity', () => {
  // Handbook fact: the tight-binding ring H = -sum(|i><i+1| + h.c.) has E_k = -2 cos(2 pi k / n),
  // k = 0..n-1, so every level except k = 0 (and k = n/2 for even n) appears twice.
  it('tight-binding ring, n = 151 (Lanczos), 5 states: -2 once, then two pairs', () => {
    const n = 151;
    const op = ring(n);
    const exact = Array.from({ length: n }, (_, k) => -2 * Math.cos((2 * Math.PI * k) / n)).sort((a, b) => a - b);
    const result = lowestEigenpairs(op, { states: 5, tolerance: 1e-9, denseThreshold: 10 });
    expect(result.method).toBe('lanczos');
    expectEigenpairs(op, result, exact.slice(0, 5), 1e-9);
    expect(result.degeneracy).toBe(1);
    // Next level after the ground state is the doubly degenerate k = +-1.
    expect(Math.abs(result.values[1] - result.values[2])).toBeLessThan(1e-9);
  });

  // Same ring threaded by flux with n*flux = pi: E_m = -2 cos((2 pi m + n flux)/n) (textbook
  // Peierls substitution), so m = 0 and m = -1 are degenerate: a doubly degenerate ground state.
  it('complex ring at half a flux quantum has a doubly degenerate ground state', () => {
    const n = 120;
    const flux = Math.PI / n;
    const op = ring(n, flux);
    const exact = Array.from({ length: n }, (_, m) => -2 * Math.cos((2 * Math.PI * m + n * flux) / n)).sort(
      (a, b) => a - b,
    );
    const result = lowestEigenpairs(op, { states: 3, tolerance: 1e-9, denseThreshold: 10 });
    expectEigenpairs(op, result, exact.slice(0, 3), 1e-9);
    expect(result.degeneracy).toBe(2);
  });

  // Reference: ml-matrix EigenvalueDecomposition of the single block; three identical copies of
  // it on the diagonal triple every level.
  it('three identical blocks: every level three times', () => {
    const size = 60;
    const block = randomSparse(size, false, 4, 21);
    const h = new SparseHermitian(3 * size, false);
    for (let copy = 0; copy < 3; copy++) {
      for (let k = 0; k < block.rows.length; k++) {
        if (block.rows[k] > block.cols[k]) continue;
        h.add(copy * size + block.rows[k], copy * size + block.cols[k], block.re[k]);
      }
    }
    const levels = referenceSpectrum(block);
    const expected = [levels[0], levels[0], levels[0], levels[1], levels[1], levels[1], levels[2]];
    const result = lowestEigenpairs(h, { states: 7, tolerance: 1e-9, denseThreshold: 10 });
    expectEigenpairs(h, result, expected, 1e-9);
    expect(result.degeneracy).toBe(3);
  });

  // Found one at a time, as a sector's states are: a run deflated against a copy of a degenerate
  // level that an earlier run found must find another copy. The tight-binding ring's k = +-1 pair
  // (handbook formula above) is the case: the second run sees the other copy only if it starts
  // from another random vector than the first (the same start, deflated, has none of it left).
  it('one state at a time with deflation: the second run finds the other copy of a pair', () => {
    const n = 151;
    const op = ring(n);
    const pair = -2 * Math.cos((2 * Math.PI) / n);
    const opts = { states: 1, tolerance: 1e-10, denseThreshold: 10, verifyDegeneracy: false };
    const ground = lowestEigenpairs(op, opts);
    const first = lowestEigenpairs(op, { ...opts, deflate: [ground.vectors[0]] });
    const second = lowestEigenpairs(op, { ...opts, deflate: [ground.vectors[0], first.vectors[0]] });
    expect(first.values[0]).toBeCloseTo(pair, 9);
    expect(second.values[0]).toBeCloseTo(pair, 9);
    const overlap = first.vectors[0].reduce((sum, x, i) => sum + x * second.vectors[0][i], 0);
    expect(Math.abs(overlap)).toBeLessThan(1e-8);
  });

  // A projector-like operator, diag(0 x 40, 1 x 60) in a random rotation: the Krylov space of any
  // start vector is two-dimensional, so all but one copy must come from restarts or verification.
  it('two levels of high multiplicity', () => {
    const dim = 100;
    const rand = seeded(31);
    const q = new QrDecomposition(
      new Matrix(Array.from({ length: dim }, () => Array.from({ length: dim }, () => rand() - 0.5))),
    ).orthogonalMatrix;
    const h = new SparseHermitian(dim, false);
    for (let i = 0; i < dim; i++) {
      for (let j = i; j < dim; j++) {
        let s = 0;
        for (let k = 40; k < dim; k++) s += q.get(i, k) * q.get(j, k);
        h.add(i, j, s);
      }
    }
    const result = lowestEigenpairs(h, { states: 45, tolerance: 1e-9, denseThreshold: 10 });
    const expected = [...Array(40).fill(0), ...Array(5).fill(1)];
    expectEigenpairs(h, result, expected, 1e-9);
    expect(result.degeneracy).toBe(40);
  });
});

describe('dense path', () => {
  // Textbook: ring with Peierls phase flux per link has E_m = -2 cos((2 pi m + n flux)/n).
  it('complex ring with flux: full spectrum and eigenvectors', () => {
    const n = 60;
    const flux = 0.37;
    const op = ring(n, flux);
    const exact = Array.from({ length: n }, (_, m) => -2 * Math.cos((2 * Math.PI * m + n * flux) / n)).sort(
      (a, b) => a - b,
    );
    const all = denseEigen(op);
    expect(all.values.length).toBe(n);
    for (let k = 0; k < n; k++) {
      expect(Math.abs(all.values[k] - exact[k])).toBeLessThan(1e-12);
      expect(residualOf(op, all.vectors[k], all.values[k])).toBeLessThan(1e-12);
    }
    // Eigenvectors of distinct levels are orthogonal to about eps*||H||/gap (gap >= 3e-3 here).
    expect(orthonormalityError(all.vectors, true)).toBeLessThan(1e-11);
  });

  // Known spectrum by construction: H = U diag(lambda) U^H with U unitary (Gram-Schmidt of random
  // complex columns, done here independently of the solver).
  it('complex Hermitian U diag(lambda) U^H with repeated eigenvalues', () => {
    const n = 30;
    const rand = seeded(41);
    const u: { re: number[]; im: number[] }[] = [];
    while (u.length < n) {
      const re = Array.from({ length: n }, () => rand() - 0.5);
      const im = Array.from({ length: n }, () => rand() - 0.5);
      for (let pass = 0; pass < 2; pass++) {
        for (const w of u) {
          let cr = 0;
          let ci = 0;
          for (let i = 0; i < n; i++) {
            cr += w.re[i] * re[i] + w.im[i] * im[i];
            ci += w.re[i] * im[i] - w.im[i] * re[i];
          }
          for (let i = 0; i < n; i++) {
            re[i] -= cr * w.re[i] - ci * w.im[i];
            im[i] -= cr * w.im[i] + ci * w.re[i];
          }
        }
      }
      const norm = Math.sqrt(re.reduce((s, x) => s + x * x, 0) + im.reduce((s, x) => s + x * x, 0));
      u.push({ re: re.map((x) => x / norm), im: im.map((x) => x / norm) });
    }
    // -1 three times, 0.5 twice, a level 1e-8 above 0.5 (close but distinct), then simple levels.
    const lambda = Array.from({ length: n }, (_, k) => (k < 3 ? -1 : k < 5 ? 0.5 : k === 5 ? 0.5 + 1e-8 : k / 7));
    const h = new SparseHermitian(n, true);
    for (let i = 0; i < n; i++) {
      for (let j = i; j < n; j++) {
        let re = 0;
        let im = 0;
        for (let k = 0; k < n; k++) {
          // U_ik lambda_k conj(U_jk)
          const ar = u[k].re[i];
          const ai = u[k].im[i];
          const br = u[k].re[j];
          const bi = -u[k].im[j];
          re += lambda[k] * (ar * br - ai * bi);
          im += lambda[k] * (ar * bi + ai * br);
        }
        h.add(i, j, re, im);
      }
    }
    const all = denseEigen(h);
    const sorted = lambda.slice().sort((a, b) => a - b);
    for (let k = 0; k < n; k++) {
      expect(Math.abs(all.values[k] - sorted[k])).toBeLessThan(1e-12);
      expect(residualOf(h, all.vectors[k], all.values[k])).toBeLessThan(1e-12);
    }
    expect(orthonormalityError(all.vectors, true)).toBeLessThan(1e-12);
    const lowest = lowestEigenpairs(h, { states: 4, tolerance: 1e-10 });
    expect(lowest.degeneracy).toBe(3);
    expectEigenpairs(h, lowest, sorted.slice(0, 4), 1e-10);
  });

  it('denseMatrixOf reproduces the entries it was given', () => {
    const h = randomSparse(40, true, 3, 51);
    const { re, im } = denseMatrixOf(h);
    const ref = h.dense();
    let worst = 0;
    for (let i = 0; i < 40; i++) {
      for (let j = 0; j < 40; j++) {
        worst = Math.max(
          worst,
          Math.abs(re[i * 40 + j] - ref.re.get(i, j)),
          Math.abs(im![i * 40 + j] - ref.im.get(i, j)),
        );
      }
    }
    expect(worst).toBeLessThan(1e-15);
    expect(denseMatrixOf(ring(5)).im).toBeNull();
  });
});

describe('partial reorthogonalization (Simon, Math. Comp. 42, 115 (1984))', () => {
  /**
   * diag(-12, -11, -10, 3/n, 4/n, ..., (n-1)/n): three far-off levels converge within a few steps
   * and new Lanczos vectors then lose orthogonality toward them fastest (Paige's theorem), while
   * the fourth level sits in a dense cluster and needs many restarts. The eigenpairs of a diagonal
   * matrix are its entries and the unit vectors (handbook fact).
   */
  function farLevelsAndCluster(n: number): { op: HermitianOperator; exact: number[] } {
    const entry = (i: number) => (i < 3 ? -12 + i : i / n);
    const op: HermitianOperator = {
      dim: n,
      isComplex: false,
      apply(x: Float64Array, y: Float64Array): void {
        for (let i = 0; i < n; i++) y[i] = entry(i) * x[i];
      },
    };
    return { op, exact: Array.from({ length: n }, (_, i) => entry(i)).sort((a, b) => a - b) };
  }

  it('converges like full reorthogonalization where orthogonality is lost fastest, skipping most full steps', () => {
    const { op, exact } = farLevelsAndCluster(5000);
    const options = { states: 4, tolerance: 1e-10, denseThreshold: 10, krylovSize: 60 };
    const full = lowestEigenpairs(op, { ...options, reorthogonalization: 'full' });
    const partial = lowestEigenpairs(op, { ...options, reorthogonalization: 'partial' });
    expectEigenpairs(op, full, exact.slice(0, 4), 1e-10);
    expectEigenpairs(op, partial, exact.slice(0, 4), 1e-10);
    // A missed loss of orthogonality shows as residuals that stall above the tolerance: the run
    // then needs far more products (measured: several times more with a rounding term of 1 eps).
    expect(partial.matvecs).toBeLessThanOrEqual(Math.ceil(1.1 * full.matvecs));
    expect(partial.fullSteps).toBeLessThan(0.8 * full.fullSteps);
  });

  // Handbook fact: the tight-binding ring's lowest level is -2 (k = 0). Sixty restarts at a loose
  // tolerance: a residual direction carried into the next cycle still leaning on the kept Ritz
  // vectors once made this run end at -3817 with a vector of norm 1.85 (found in review).
  it('many restarts at a loose tolerance: the same run as with full sweeps', () => {
    const op = ring(2001);
    const options = { states: 1, tolerance: 1e-4, denseThreshold: 10, verifyDegeneracy: false };
    const full = lowestEigenpairs(op, { ...options, reorthogonalization: 'full' });
    const partial = lowestEigenpairs(op, { ...options, reorthogonalization: 'partial' });
    expect(partial.restarts).toBeGreaterThan(20);
    expect(partial.converged).toBe(true);
    // Weinstein: a level lies within the residual of the value (the ring's next level is 1e-5 up).
    expect(Math.abs(partial.values[0] + 2)).toBeLessThanOrEqual(1e-4);
    expect(residualOf(op, partial.vectors[0], partial.values[0])).toBeLessThanOrEqual(2e-4);
    expect(Math.abs(orthonormalityError(partial.vectors, false))).toBeLessThan(1e-10);
    expect(partial.matvecs).toBeLessThanOrEqual(Math.ceil(1.1 * full.matvecs));
    expect(partial.fullSteps).toBeLessThan(full.fullSteps / 4);
  });

  // At loose tolerances the basis may lose up to sqrt(eps) of its orthogonality, and the returned
  // pairs lean on each other by about that much: no reason to redo the solve with full sweeps
  // (which an earlier limit of 1e-10 did, doubling the products).
  it('a loose tolerance does not trigger the full-sweep rerun', () => {
    const { op, exact } = farLevelsAndCluster(40000);
    const options = { states: 4, tolerance: 1e-6, denseThreshold: 10 };
    const full = lowestEigenpairs(op, { ...options, reorthogonalization: 'full' });
    const partial = lowestEigenpairs(op, { ...options, reorthogonalization: 'partial' });
    expect(partial.converged).toBe(true);
    partial.values.forEach((v, k) => expect(Math.abs(v - exact[k])).toBeLessThan(1e-6));
    expect(partial.matvecs).toBeLessThanOrEqual(Math.ceil(1.1 * full.matvecs));
  });

  // Handbook fact (as above): the tight-binding ring's levels -2 cos(2 pi k / n), pairs for k != 0.
  it('degenerate ring levels keep their multiplicity', () => {
    const n = 151;
    const op = ring(n);
    const exact = Array.from({ length: n }, (_, k) => -2 * Math.cos((2 * Math.PI * k) / n)).sort((a, b) => a - b);
    const result = lowestEigenpairs(op, {
      states: 5,
      tolerance: 1e-9,
      denseThreshold: 10,
      reorthogonalization: 'partial',
    });
    expectEigenpairs(op, result, exact.slice(0, 5), 1e-9);
    expect(result.fullSteps).toBeLessThan(result.matvecs / 2);
    expect(Math.abs(result.values[1] - result.values[2])).toBeLessThan(1e-9);
  });

  // Textbook Peierls ring as in the degenerate-spectra block: complex vectors, a degenerate ground state.
  it('complex ring at half a flux quantum', () => {
    const n = 120;
    const flux = Math.PI / n;
    const op = ring(n, flux);
    const exact = Array.from({ length: n }, (_, m) => -2 * Math.cos((2 * Math.PI * m + n * flux) / n)).sort(
      (a, b) => a - b,
    );
    const result = lowestEigenpairs(op, {
      states: 3,
      tolerance: 1e-9,
      denseThreshold: 10,
      reorthogonalization: 'partial',
    });
    expectEigenpairs(op, result, exact.slice(0, 3), 1e-9);
    expect(result.degeneracy).toBe(2);
  });

  // Reference: ml-matrix EigenvalueDecomposition, as in the first block.
  it('random real and complex sparse matrices', () => {
    const real = randomSparse(400, false, 4, 11);
    expectEigenpairs(
      real,
      lowestEigenpairs(real, { states: 4, tolerance: 1e-8, denseThreshold: 10, reorthogonalization: 'partial' }),
      referenceSpectrum(real).slice(0, 4),
      1e-8,
    );
    const complex = randomSparse(200, true, 5, 12);
    expectEigenpairs(
      complex,
      lowestEigenpairs(complex, { states: 3, tolerance: 1e-8, denseThreshold: 10, reorthogonalization: 'partial' }),
      referenceSpectrum(complex).slice(0, 3),
      1e-8,
    );
  });

  // Deflated runs (the sector solve finds states one at a time this way) keep every step
  // orthogonal to the deflation vectors: the next levels of the diagonal come out (handbook fact).
  it('with deflation vectors, the next levels', () => {
    const n = 5000;
    const { op, exact } = farLevelsAndCluster(n);
    const lowest = new Float64Array(n);
    lowest[0] = 1;
    const result = lowestEigenpairs(op, {
      states: 3,
      tolerance: 1e-10,
      denseThreshold: 10,
      krylovSize: 40,
      deflate: [lowest],
      reorthogonalization: 'partial',
    });
    expectEigenpairs(op, result, exact.slice(1, 4), 1e-10);
    expect(Math.abs(result.vectors.reduce((worst, v) => Math.max(worst, Math.abs(v[0])), 0))).toBeLessThan(1e-12);
    expect(result.fullSteps).toBeLessThan(result.matvecs);
  });

  it('is the default for long vectors only', () => {
    const long = farLevelsAndCluster(PARTIAL_MIN_LENGTH);
    const options = { states: 3, tolerance: 1e-9, denseThreshold: 10 };
    const auto = lowestEigenpairs(long.op, options);
    expectEigenpairs(long.op, auto, long.exact.slice(0, 3), 1e-9);
    const full = lowestEigenpairs(long.op, { ...options, reorthogonalization: 'full' });
    expect(auto.fullSteps).toBeLessThan(full.fullSteps);
    const short = farLevelsAndCluster(PARTIAL_MIN_LENGTH - 1);
    const shortAuto = lowestEigenpairs(short.op, options);
    expect(shortAuto.fullSteps).toBe(lowestEigenpairs(short.op, { ...options, reorthogonalization: 'full' }).fullSteps);
  });

  it('an unknown mode is refused, naming the option', () => {
    expect(() =>
      lowestEigenpairs(ring(500), {
        states: 1,
        tolerance: 1e-9,
        denseThreshold: 10,
        // @ts-expect-error an invalid mode on purpose: the runtime check is under test
        reorthogonalization: 'some',
      }),
    ).toThrow(SpecError);
    expect(() =>
      lowestEigenpairs(ring(500), {
        states: 1,
        tolerance: 1e-9,
        denseThreshold: 10,
        // @ts-expect-error an invalid mode on purpose: the runtime check is under test
        reorthogonalization: 'some',
      }),
    ).toThrow(/reorthogonalization/);
  });
});

describe('a single wanted pair of a long vector is checked after every step', () => {
  /** diag(lowest, 0, 1/n, 2/n, ...): eigenpairs are the entries and unit vectors (handbook fact). */
  function isolatedBelow(n: number, lowest: number): HermitianOperator {
    return {
      dim: n,
      isComplex: false,
      apply(x: Float64Array, y: Float64Array): void {
        y[0] = lowest * x[0];
        for (let i = 1; i < n; i++) y[i] = ((i - 1) / n) * x[i];
      },
    };
  }

  it('converges to the same pair, with no more products than checks at restarts only', () => {
    const n = STEP_CHECK_MIN_LENGTH;
    const options = {
      states: 1,
      tolerance: 1e-10,
      denseThreshold: 10,
      reorthogonalization: 'full' as const,
      verifyDegeneracy: false,
    };
    const withChecks = lowestEigenpairs(isolatedBelow(n, -0.05), options);
    expectEigenpairs(isolatedBelow(n, -0.05), withChecks, [-0.05], 1e-10);
    // One double shorter: checks at restarts only, on the same spectrum up to one level at the top.
    const atRestarts = lowestEigenpairs(isolatedBelow(n - 1, -0.05), options);
    expect(atRestarts.converged).toBe(true);
    expect(withChecks.matvecs).toBeLessThanOrEqual(atRestarts.matvecs);
  });

  it('a screen never rules out a space whose lowest level lies below the line', () => {
    // The lowest level is isolated at -1, the line at -0.5; a random start's Rayleigh quotient is
    // near 0.5 with a residual near 0.3, so a screen on a small Krylov space would wrongly pass.
    const n = STEP_CHECK_MIN_LENGTH;
    const result = lowestEigenpairs(isolatedBelow(n, -1), {
      states: 1,
      tolerance: 1e-9,
      denseThreshold: 10,
      verifyDegeneracy: false,
      screenAbove: -0.5,
    });
    expect(result.screened ?? false).toBe(false);
    expect(Math.abs(result.values[0] + 1)).toBeLessThan(1e-9);
  });

  it('a space far above the line is screened out before a second cycle ends', () => {
    const n = STEP_CHECK_MIN_LENGTH;
    const result = lowestEigenpairs(isolatedBelow(n, 0.3), {
      states: 1,
      tolerance: 1e-12,
      denseThreshold: 10,
      verifyDegeneracy: false,
      screenAbove: -0.5,
    });
    expect(result.screened).toBe(true);
    expect(result.values[0] - result.residuals[0]).toBeGreaterThan(-0.5);
  });
});

describe('warm start, memory and determinism', () => {
  it('a warm start from a nearby ground state needs fewer matvecs than a random start', () => {
    const h = randomSparse(2000, false, 4, 61);
    const first = lowestEigenpairs(h, { states: 1, tolerance: 1e-9, denseThreshold: 10 });
    expect(first.converged).toBe(true);
    // A slightly changed Hamiltonian: the old ground state is a good but not exact start.
    const moved = randomSparse(2000, false, 4, 61);
    for (let k = 0; k < moved.rows.length; k++) if (moved.rows[k] === moved.cols[k]) moved.re[k] *= 1.01;
    const cold = lowestEigenpairs(moved, { states: 1, tolerance: 1e-9, denseThreshold: 10 });
    const warm = lowestEigenpairs(moved, { states: 1, tolerance: 1e-9, denseThreshold: 10, initial: first.vectors[0] });
    expect(cold.converged && warm.converged).toBe(true);
    expect(Math.abs(warm.values[0] - cold.values[0])).toBeLessThan(1e-10 * Math.max(1, Math.abs(cold.values[0])));
    expect(warm.matvecs).toBeLessThan(cold.matvecs);
  });

  // Reference: ml-matrix spectrum. A start vector that is exactly an excited eigenvector spans an
  // invariant subspace at once; the deflated random-start verification must still find the ground state.
  it('a warm start at an excited eigenvector still ends at the ground state', () => {
    const h = randomSparse(400, false, 4, 63);
    const spectrum = referenceSpectrum(h);
    const excited = lowestEigenpairs(h, { states: 3, tolerance: 1e-12, denseThreshold: 10 });
    const r = lowestEigenpairs(h, { states: 1, tolerance: 1e-9, denseThreshold: 10, initial: excited.vectors[2] });
    expectEigenpairs(h, r, spectrum.slice(0, 1), 1e-9);
  });

  // Textbook ring levels again; skipping the verification pass saves its matvecs but leaves
  // the lowest value right.
  it('verifyDegeneracy: false skips the verification runs', () => {
    const n = 151;
    const op = ring(n);
    const full = lowestEigenpairs(op, { states: 2, tolerance: 1e-9, denseThreshold: 10 });
    const quick = lowestEigenpairs(op, { states: 2, tolerance: 1e-9, denseThreshold: 10, verifyDegeneracy: false });
    expect(quick.converged).toBe(true);
    expect(Math.abs(quick.values[0] + 2)).toBeLessThan(1e-9);
    expect(quick.matvecs).toBeLessThan(full.matvecs);
  });

  it('a small restart basis still converges, and working memory stays within it', () => {
    const h = randomSparse(400, false, 4, 71);
    const krylovSize = 8;
    const states = 3;
    h.trackVectors = true;
    const result = lowestEigenpairs(h, { states, tolerance: 1e-8, denseThreshold: 10, krylovSize, maxMatvecs: 20000 });
    expect(result.converged).toBe(true);
    expect(result.restarts).toBeGreaterThan(0);
    // m basis vectors + one spare during the main run; the verification run reuses them and
    // keeps the `states` results aside.
    expect(h.seen.size).toBeLessThanOrEqual(krylovSize + 1 + states);
    h.trackVectors = false;
    expectEigenpairs(h, result, referenceSpectrum(h).slice(0, states), 1e-8);
  });

  it('same seed, same result; matvecs reported are the matvecs made', () => {
    const h = randomSparse(600, true, 4, 81);
    const a = lowestEigenpairs(h, { states: 2, tolerance: 1e-9, denseThreshold: 10, seed: 7 });
    const before = h.applications;
    const b = lowestEigenpairs(h, { states: 2, tolerance: 1e-9, denseThreshold: 10, seed: 7 });
    expect(h.applications - before).toBe(b.matvecs);
    expect(Array.from(b.values)).toEqual(Array.from(a.values));
    expect(b.matvecs).toBe(a.matvecs);
    expect(Array.from(b.vectors[0])).toEqual(Array.from(a.vectors[0]));
  });

  it('onProgress reports growing matvec counts', () => {
    const h = randomSparse(500, false, 4, 91);
    const seen: number[] = [];
    const result = lowestEigenpairs(h, {
      states: 1,
      tolerance: 1e-9,
      denseThreshold: 10,
      onProgress: (info) => seen.push(info.matvecs),
    });
    expect(seen.length).toBeGreaterThan(1);
    for (let i = 1; i < seen.length; i++) expect(seen[i]).toBeGreaterThanOrEqual(seen[i - 1]);
    expect(seen[seen.length - 1]).toBeLessThanOrEqual(result.matvecs);
  });
});

describe('edge cases', () => {
  it('the dense path: a fixed 400 states unless sized by the states wanted, max(64, 3 states); the solver defaults to the fixed one', () => {
    expect(denseThresholdFor()).toBe(400);
    expect(denseThresholdFor(2)).toBe(64);
    expect(denseThresholdFor(30)).toBe(90);
    // A diagonal operator: its lowest eigenvalue is its smallest entry (by definition).
    const diagonal = (dim: number): HermitianOperator => ({
      dim,
      isComplex: false,
      apply: (x, y) => {
        for (let k = 0; k < dim; k++) y[k] = (k + 1) * x[k];
      },
    });
    for (const [dim, method] of [
      [400, 'dense'],
      [401, 'lanczos'],
    ] as const) {
      const r = lowestEigenpairs(diagonal(dim), { states: 1, tolerance: 1e-9 });
      expect(r.method).toBe(method);
      expect(r.values[0]).toBeCloseTo(1, 9);
    }
  });

  it('dim 1, on both paths', () => {
    // A 1x1 matrix [3.5] has the eigenvalue 3.5 and a unit eigenvector (by definition).
    const op: HermitianOperator = { dim: 1, isComplex: false, apply: (x, y) => void (y[0] = 3.5 * x[0]) };
    for (const denseThreshold of [0, 400]) {
      const r = lowestEigenpairs(op, { states: 3, tolerance: 1e-12, denseThreshold });
      expect(r.values.length).toBe(1);
      expect(r.values[0]).toBeCloseTo(3.5, 14);
      expect(Math.abs(r.vectors[0][0])).toBeCloseTo(1, 14);
      expect(r.converged).toBe(true);
      expect(r.degeneracy).toBe(1);
    }
  });

  it('states above the dimension are clipped (Lanczos path spans the whole space)', () => {
    const h = randomSparse(30, true, 3, 101);
    const r = lowestEigenpairs(h, { states: 50, tolerance: 1e-9, denseThreshold: 0 });
    expectEigenpairs(h, r, referenceSpectrum(h), 1e-9);
  });

  it('zero operator: every state at 0, degeneracy = states', () => {
    const op: HermitianOperator = { dim: 500, isComplex: true, apply: (_x, y) => y.fill(0) };
    const r = lowestEigenpairs(op, { states: 4, tolerance: 1e-10, denseThreshold: 10 });
    expect(r.converged).toBe(true);
    expect(Array.from(r.values)).toEqual([0, 0, 0, 0]);
    expect(r.degeneracy).toBe(4);
    expect(orthonormalityError(r.vectors, true)).toBeLessThan(1e-12);
  });

  // Reference: ml-matrix spectrum; deflating the exact ground state leaves the rest.
  it('deflation against the ground state yields the next levels', () => {
    const h = randomSparse(300, false, 4, 111);
    const spectrum = referenceSpectrum(h);
    const ground = lowestEigenpairs(h, { states: 1, tolerance: 1e-10, denseThreshold: 10 });
    for (const denseThreshold of [10, 1000]) {
      const r = lowestEigenpairs(h, { states: 2, tolerance: 1e-9, denseThreshold, deflate: ground.vectors });
      expectEigenpairs(h, r, spectrum.slice(1, 3), 2e-9);
    }
  });

  // Cauchy interlacing (Rayleigh-Ritz values bound the eigenvalues from above): whatever the
  // budget cuts off, the k-th returned value is >= the k-th exact level 5 - 2cos(2 pi k/n) of the
  // ring shifted by 5 (the shift keeps the spectrum away from 0, so a missing entry would show).
  it('values returned on an exhausted budget are Rayleigh-Ritz upper bounds', () => {
    const n = 600;
    const plain = ring(n);
    const op: HermitianOperator = {
      dim: n,
      isComplex: false,
      apply(x, y) {
        plain.apply(x, y);
        for (let i = 0; i < n; i++) y[i] += 5 * x[i];
      },
    };
    const exact = Array.from({ length: n }, (_, k) => 5 - 2 * Math.cos((2 * Math.PI * k) / n)).sort((a, b) => a - b);
    for (let budget = 20; budget <= 80; budget += 3) {
      const r = lowestEigenpairs(op, { states: 2, tolerance: 1e-12, denseThreshold: 10, maxMatvecs: budget });
      expect(r.converged).toBe(false);
      expect(r.values.length).toBe(2);
      for (let k = 0; k < 2; k++) {
        expect(r.values[k]).toBeGreaterThanOrEqual(exact[k] - 1e-12);
        expect(Math.abs(residualOf(op, r.vectors[k], r.values[k]) - r.residuals[k])).toBeLessThan(1e-12);
      }
    }
  });

  it('an operator that produces NaN is reported, not looped on', () => {
    const op: HermitianOperator = { dim: 500, isComplex: false, apply: (_x, y) => y.fill(Number.NaN) };
    expect(() => lowestEigenpairs(op, { states: 1, tolerance: 1e-9, denseThreshold: 10 })).toThrow(ConvergenceError);
  });

  it('running out of matvecs: converged=false, or ConvergenceError when asked', () => {
    const op = ring(1500);
    const r = lowestEigenpairs(op, { states: 2, tolerance: 1e-12, denseThreshold: 10, maxMatvecs: 60 });
    expect(r.converged).toBe(false);
    expect(r.matvecs).toBeLessThanOrEqual(60 + 2);
    expect(() =>
      lowestEigenpairs(op, { states: 2, tolerance: 1e-12, denseThreshold: 10, maxMatvecs: 60, throwOnFailure: true }),
    ).toThrow(ConvergenceError);
  });
});
