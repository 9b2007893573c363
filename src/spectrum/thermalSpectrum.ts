// Finite-temperature spectra (issue 22, docs/model.md "Spectra at finite temperature"):
//     A(omega) = (1/Z) sum_{m,n} e^{-(E_m - E_0)/T} |<n|O|m>|^2 delta(omega - (E_n - E_m)),
// the Boltzmann-weighted Lehmann sum. Pairs m, n of one energy level (E_n = E_m within the
// degeneracy window) are the elastic part, the omega = 0 line of the diagonal of O in the energy
// eigenbasis, reported on its own as at T = 0 (where it is |<0|O|0>|^2 over the ground level).
//
// The exact method takes every eigenpair of every symmetry sector (k and -k separately: a probe at
// momentum q maps them to different sectors), applies O to each state m of thermal weight on the
// full space and projects O|m> on every sector's eigenvectors.
//
// The Lanczos method is the finite-temperature Lanczos dynamical response (Jaklic and Prelovsek,
// Phys. Rev. B 49, 5065 (1994)) on the full space, with the ground level taken exactly (as
// src/thermal/lanczos.ts does): its states m give a continued fraction from O|m> each (the T = 0
// spectrum as T -> 0), and the rest of the trace comes from random vectors r' = (1 - P_0) r
// (E[r r^+] = 1): a Lanczos chain from r' (Ritz pairs e_i, psi_i), one from O r' (e~_j, psi~_j), and
//     <r'| e^{-H/T} O^+ delta(omega - H + e_i) O |r'> ~ sum_ij <r'|psi_i> e^{-e_i/T} <psi_i|O^+|psi~_j> <psi~_j|O|r'>
// at omega = e~_j - e_i. Each round (one random vector) estimates Z and every intensity; a value is
// the ratio of the sums over rounds and its error bar the jackknife over rounds (common practice).

import type { Basis } from '../basis/basis.js';
import { SpecError } from '../errors/errors.js';
import type { Model } from '../model/model.js';
import { buildOperator } from '../operator/build.js';
import type { HermitianOperator } from '../operator/hermitian.js';
import { degeneracyWindow, denseEigen, lowestEigenpairs, GROUND_COPIES_CAP } from '../solver/eigensolver.js';
import { symmetricEigen } from '../linalg/symmetricEigen.js';
import type { SpectrumSection } from '../spec/spectrumSection.js';
import { planSectors, type SectorLabel, type SymmetryName } from '../symmetry/group.js';
import { buildSectorOperator } from '../symmetry/sectorOperator.js';
import { SectorBasis } from '../symmetry/sectorBasis.js';
import { OrbitMaps } from '../symmetry/sectorSolve.js';
import { EXACT_BLOCK_LIMIT, EXACT_BLOCK_MAX } from '../thermal/thermal.js';
import { fillRandom, generator, jackknifeError, mix } from '../thermal/random.js';
import { broadenedCurve, complexDotInto, dotRe, productOn, type LineShape } from './continuedFraction.js';
import { applyProbe, type Probe } from './probe.js';
import { runPiece, type Collected, type RunOutcome } from './runs.js';

/** States whose Boltzmann factor relative to Z is below this are left out (their lines are below rounding). */
const NEGLIGIBLE_STATE = 1e-17;

export interface ThermalSpectrumInput {
  model: Model;
  basis: Basis;
  probe: Probe;
  section: SpectrumSection;
  /** The symmetries the sectors use (pinned kinds), or null for the whole space as one block. */
  symmetries: Record<SymmetryName, boolean> | null;
  method: 'exact' | 'lanczos';
  frequencies: Float64Array;
  shape: LineShape;
  /** Model energies to the frequency unit. */
  unitScale: number;
}

export interface ThermalSpectrum {
  method: 'exact' | 'lanczos';
  curve: Float64Array;
  /** One standard error per frequency (0 for the exact method). */
  curveError: Float64Array;
  /** Every pole on the frequency axis, its weight (already divided by Z) and Ritz residual. */
  positions: number[];
  weights: number[];
  residuals: ArrayLike<number>;
  weight: number;
  weightError: number;
  elastic: number;
  elasticError: number;
  total: number;
  totalError: number;
  linesWeight: number;
  groundEnergy: number;
  groundCopies: number;
  /** Symmetry sectors (exact method), or null for the full space. */
  sectors: SectorLabel[] | null;
  /** The ground level's continued fractions (Lanczos method); null for the exact method. */
  runs: RunOutcome[] | null;
  products: number;
}

/** The method `auto` picks: exact while the largest block (real form) is within the thermal exact limit. */
export function thermalSpectrumMethod(section: SpectrumSection, largestBlockRealSize: number): 'exact' | 'lanczos' {
  const method =
    section.method === 'auto' ? (largestBlockRealSize <= EXACT_BLOCK_LIMIT ? 'exact' : 'lanczos') : section.method;
  if (method === 'exact' && largestBlockRealSize > EXACT_BLOCK_MAX)
    throw new SpecError(
      'spectrum.method',
      `"exact" diagonalizes blocks of at most ${EXACT_BLOCK_MAX} (real form); this model's largest is ${largestBlockRealSize}: use "lanczos" or "auto"`,
    );
  return method;
}

export function thermalSpectrum(input: ThermalSpectrumInput): ThermalSpectrum {
  return input.method === 'exact' ? exactSpectrum(input) : lanczosSpectrum(input);
}

/** A real or complex vector as interleaved complex (a copy). */
function complexOf(v: Float64Array, isComplex: boolean): Float64Array {
  if (isComplex) return v.slice();
  const out = new Float64Array(2 * v.length);
  for (let s = 0; s < v.length; s++) out[2 * s] = v[s];
  return out;
}

/** |<v|c>|^2 for v real (length d) or interleaved complex, c interleaved complex. */
function overlapSquared(v: Float64Array, isComplex: boolean, c: Float64Array, scratch: Float64Array): number {
  if (isComplex) {
    complexDotInto(v, c, scratch);
    return scratch[0] * scratch[0] + scratch[1] * scratch[1];
  }
  let re = 0;
  let im = 0;
  for (let a = 0; a < v.length; a++) {
    re += v[a] * c[2 * a];
    im += v[a] * c[2 * a + 1];
  }
  return re * re + im * im;
}

interface Block {
  sector: SectorBasis | null;
  values: Float64Array;
  vectors: Float64Array[];
  isComplex: boolean;
}

function exactSpectrum(input: ThermalSpectrumInput): ThermalSpectrum {
  const { model, basis, probe, section, symmetries, frequencies, shape, unitScale } = input;
  const T = section.modelTemperature;
  let blocks: Block[];
  let labels: SectorLabel[] | null = null;
  if (symmetries && basis.kind === 'pinned') {
    // Every sector, the copies of a k, -k pair too: O|m> of a state at k and at -k differ.
    labels = planSectors(symmetries, model).flatMap((plan) => [plan.label, ...plan.copies]);
    const maps = new OrbitMaps(model, basis, false);
    blocks = [];
    for (const label of labels) {
      const sector = new SectorBasis(maps.for(label), label);
      if (sector.dim === 0) continue;
      const op = buildSectorOperator(model, basis, sector, null);
      blocks.push({ sector, ...denseEigen(op), isComplex: op.isComplex });
    }
  } else {
    const op = buildOperator(model, basis, null);
    blocks = [{ sector: null, ...denseEigen(op), isComplex: op.isComplex }];
  }
  let e0 = Infinity;
  for (const b of blocks) if (b.values.length > 0) e0 = Math.min(e0, b.values[0]);
  const window = degeneracyWindow(e0, 0);
  let z = 0;
  let copies = 0;
  for (const b of blocks)
    for (const e of b.values) {
      z += Math.exp(-(e - e0) / T);
      if (e - e0 <= window) copies++;
    }
  const positions: number[] = [];
  const weights: number[] = [];
  let total = 0;
  let elastic = 0;
  const scratch = new Float64Array(2);
  const phi = new Float64Array(2 * basis.dim);
  for (const b of blocks) {
    b.values.forEach((em, k) => {
      const p = Math.exp(-(em - e0) / T) / z;
      if (p < NEGLIGIBLE_STATE) return;
      const state = b.sector ? b.sector.expand(b.vectors[k], b.isComplex) : complexOf(b.vectors[k], b.isComplex);
      phi.fill(0);
      applyProbe(probe, basis, state, phi);
      const norm = dotRe(phi, phi);
      total += p * norm;
      if (norm === 0) return;
      for (const target of blocks) {
        const c = target.sector ? target.sector.project(phi, true, true) : phi;
        // A sector O|m> does not reach (charge, momentum) carries only rounding.
        if (target.sector && dotRe(c, c) <= 1e-28 * norm) continue;
        target.values.forEach((en, n) => {
          const w = p * overlapSquared(target.vectors[n], target.isComplex, c, scratch);
          if (w === 0) return;
          if (Math.abs(en - em) <= window) elastic += w;
          else {
            positions.push((en - em) * unitScale);
            weights.push(w);
          }
        });
      }
    });
  }
  const curve = broadenedCurve(positions, weights, frequencies, shape);
  return {
    method: 'exact',
    curve,
    curveError: new Float64Array(frequencies.length),
    positions,
    weights,
    residuals: new Float64Array(positions.length),
    weight: total - elastic,
    weightError: 0,
    elastic,
    elasticError: 0,
    total,
    totalError: 0,
    linesWeight: weights.reduce((a, b) => a + b, 0),
    groundEnergy: e0,
    groundCopies: copies,
    sectors: labels,
    runs: null,
    products: 0,
  };
}

/**
 * v -= <u|v> u for every u (unit vectors, the layout of v); a second pass only when the first
 * removed most of v ("twice is enough": Parlett, The Symmetric Eigenvalue Problem, sec. 6-9).
 */
function projectOut(v: Float64Array, against: Float64Array[], isComplex: boolean): void {
  const c = new Float64Array(2);
  const before = dotRe(v, v);
  for (let pass = 0; pass < 2; pass++) {
    if (pass === 1 && dotRe(v, v) > 0.5 * before) break;
    for (const u of against) {
      if (!isComplex) {
        const d = dotRe(u, v);
        for (let i = 0; i < v.length; i++) v[i] -= d * u[i];
        continue;
      }
      complexDotInto(u, v, c);
      for (let i = 0; i < v.length; i += 2) {
        v[i] -= c[0] * u[i] - c[1] * u[i + 1];
        v[i + 1] -= c[0] * u[i + 1] + c[1] * u[i];
      }
    }
  }
}

/** A fully reorthogonalized Lanczos chain of at most `steps` vectors, kept, with its Ritz pairs. */
interface Chain {
  vectors: Float64Array[];
  /** Ritz values, ascending. */
  values: Float64Array;
  /** u[j * M + m]: component m of Ritz vector j. */
  u: Float64Array;
  /** Ritz residuals |b_M u_(M-1)j| (0 when the Krylov space was exhausted). */
  residuals: Float64Array;
}

function lanczosChain(
  apply: (x: Float64Array, y: Float64Array) => void,
  start: Float64Array,
  isComplex: boolean,
  steps: number,
  against: Float64Array[],
): Chain {
  const startNorm = Math.sqrt(dotRe(start, start));
  const vectors: Float64Array[] = [start.map((x) => x / startNorm)];
  const alpha: number[] = [];
  const beta: number[] = [];
  let next = 0;
  let scale = 1;
  const c = new Float64Array(2);
  for (;;) {
    const v = vectors[vectors.length - 1];
    const w = new Float64Array(v.length);
    apply(v, w);
    if (isComplex) complexDotInto(v, w, c);
    else c[0] = dotRe(v, w);
    alpha.push(c[0]);
    projectOut(w, vectors, isComplex);
    projectOut(w, against, isComplex);
    const b = Math.sqrt(dotRe(w, w));
    scale = Math.max(scale, Math.abs(c[0]), beta.length > 0 ? beta[beta.length - 1] : 0);
    if (b <= 1e-10 * scale) {
      next = 0;
      break;
    }
    if (vectors.length >= steps) {
      next = b;
      break;
    }
    beta.push(b);
    vectors.push(w.map((x) => x / b));
  }
  const M = vectors.length;
  const tri = new Float64Array(M * M);
  for (let i = 0; i < M; i++) {
    tri[i * M + i] = alpha[i];
    if (i + 1 < M) tri[i * M + i + 1] = tri[(i + 1) * M + i] = beta[i];
  }
  const { values, vectors: u } = symmetricEigen(tri, M, true);
  const residuals = Float64Array.from({ length: M }, (_, j) => Math.abs(next * u![j * M + M - 1]));
  return { vectors, values, u: u!, residuals };
}

function lanczosSpectrum(input: ThermalSpectrumInput): ThermalSpectrum {
  const { model, basis, probe, section, frequencies, shape, unitScale } = input;
  const T = section.modelTemperature;
  const op: HermitianOperator = buildOperator(model, basis, null);
  const dim = op.dim;
  const isComplex = op.isComplex;
  // The ground level exactly: every copy (as the ground-state spectrum averages over them).
  const low = lowestEigenpairs(op, {
    states: 1,
    tolerance: 1e-10,
    throwOnFailure: true,
    groundCopies: GROUND_COPIES_CAP,
    reorthogonalization: 'full',
  });
  const e0 = low.values[0];
  const window = degeneracyWindow(e0, 1e-10);
  const groundIndices = Array.from(low.values, (e, k) => [e, k] as const).filter(([e]) => e - e0 <= window);
  const ground = groundIndices.map(([, k]) => low.vectors[k]);
  const groundComplex = ground.map((g) => complexOf(g, isComplex));
  const steps = section.thermalSteps;
  const F = frequencies.length;

  // The exact part: every ground copy m with Boltzmann factor e^{-(E_m - E_0)/T} (1 within the window).
  const exactCollected: Collected = { positions: [], weights: [], residuals: [], curve: new Float64Array(F) };
  const runs: RunOutcome[] = [];
  let zExact = 0;
  let totalExact = 0;
  let elasticExact = 0;
  const c = new Float64Array(2);
  groundIndices.forEach(([em], g) => {
    const boltzmann = Math.exp(-(em - e0) / T);
    zExact += boltzmann;
    const phi = new Float64Array(2 * dim);
    applyProbe(probe, basis, groundComplex[g], phi);
    totalExact += boltzmann * dotRe(phi, phi);
    for (let pass = 0; pass < 2; pass++)
      for (const other of groundComplex) {
        complexDotInto(other, phi, c);
        if (pass === 0) elasticExact += boltzmann * (c[0] * c[0] + c[1] * c[1]);
        for (let k = 0; k < phi.length; k += 2) {
          phi[k] -= c[0] * other[k] - c[1] * other[k + 1];
          phi[k + 1] -= c[0] * other[k + 1] + c[1] * other[k];
        }
      }
    const connected = dotRe(phi, phi);
    if (connected <= 1e-24 * Math.max(totalExact, Number.MIN_VALUE)) return;
    const settings = { section, frequencies, shape, e0: em, unitScale };
    runs.push(runPiece(op, null, phi, boltzmann * connected, settings, exactCollected));
  });

  // The random part, one vector per round.
  const rounds = dim > ground.length ? section.vectors : 0;
  const z = new Float64Array(rounds);
  const total = new Float64Array(rounds);
  const elastic = new Float64Array(rounds);
  const curves = Array.from({ length: rounds }, () => new Float64Array(F));
  const positions: number[] = [];
  const rawWeights: number[] = [];
  const residuals: number[] = [];
  const realApply = (x: Float64Array, y: Float64Array) => op.apply(x, y);
  const complexApply = productOn(op, true);
  let products = runs.reduce((s, r) => s + r.products, 0);
  for (let round = 0; round < rounds; round++) {
    const r = new Float64Array(isComplex ? 2 * dim : dim);
    fillRandom(r, dim, isComplex, generator(mix(section.seed, 0, round)));
    projectOut(r, ground, isComplex);
    const rNorm = Math.sqrt(dotRe(r, r));
    if (rNorm < 1e-12) continue;
    const first = lanczosChain(realApply, r, isComplex, Math.min(steps, dim - ground.length), ground);
    const phi = new Float64Array(2 * dim);
    applyProbe(probe, basis, complexOf(r, isComplex), phi);
    const phiNorm = Math.sqrt(dotRe(phi, phi));
    const M = first.vectors.length;
    products += M;
    const boltzmann = Float64Array.from(first.values, (e) => Math.exp(-(e - e0) / T));
    for (let i = 0; i < M; i++) z[round] += rNorm * rNorm * first.u[i * M] ** 2 * boltzmann[i];
    if (phiNorm === 0) continue;
    const second = lanczosChain(complexApply, phi, true, Math.min(steps, dim), []);
    const K = second.vectors.length;
    products += K;
    // X[k][m] = <W_k | O V_m>, then Y[j][i] = <psi~_j|O|psi_i> = sum_km U~_jk U_im X_km (its real part
    // is what the estimator needs: the Ritz coefficients and the two first components are real).
    const xRe = new Float64Array(K * M);
    const ov = new Float64Array(2 * dim);
    for (let m = 0; m < M; m++) {
      ov.fill(0);
      applyProbe(probe, basis, complexOf(first.vectors[m], isComplex), ov);
      for (let k = 0; k < K; k++) {
        complexDotInto(second.vectors[k], ov, c);
        xRe[k * M + m] = c[0];
      }
    }
    // Z[k][i] = sum_m X[k][m] U[i][m] (real part only)
    const zki = new Float64Array(K * M);
    for (let k = 0; k < K; k++)
      for (let i = 0; i < M; i++) {
        let s = 0;
        for (let m = 0; m < M; m++) s += xRe[k * M + m] * first.u[i * M + m];
        zki[k * M + i] = s;
      }
    const roundPositions: number[] = [];
    const roundWeights: number[] = [];
    for (let i = 0; i < M; i++) {
      const left = rNorm * first.u[i * M] * boltzmann[i];
      if (left === 0) continue;
      for (let j = 0; j < K; j++) {
        let y = 0;
        for (let k = 0; k < K; k++) y += second.u[j * K + k] * zki[k * M + i];
        const w = left * y * phiNorm * second.u[j * K];
        if (w === 0) continue;
        total[round] += w;
        const omega = second.values[j] - first.values[i];
        if (Math.abs(omega) <= window) {
          elastic[round] += w;
          continue;
        }
        positions.push(omega * unitScale);
        rawWeights.push(w);
        residuals.push((first.residuals[i] + second.residuals[j]) * Math.abs(unitScale));
        roundPositions.push(omega * unitScale);
        roundWeights.push(w);
      }
    }
    const roundCurve = broadenedCurve(roundPositions, roundWeights, frequencies, shape);
    for (let f = 0; f < F; f++) curves[round][f] = roundCurve[f];
  }

  // Ratios of sums over rounds (each round carries the exact part too), and the jackknife.
  const R = rounds;
  const zOf = (skip: number) => {
    let s = 0;
    for (let i = 0; i < R; i++) if (i !== skip) s += z[i];
    const kept = R - (skip >= 0 ? 1 : 0);
    return s + Math.max(kept, 1) * zExact;
  };
  const ratio = (values: ArrayLike<number>, exactPart: number, skip: number) => {
    let s = 0;
    for (let i = 0; i < R; i++) if (i !== skip) s += values[i];
    const kept = R - (skip >= 0 ? 1 : 0);
    return (s + Math.max(kept, 1) * exactPart) / zOf(skip);
  };
  const estimate = (values: ArrayLike<number>, exactPart: number) => {
    const value = ratio(values, exactPart, -1);
    const error = R > 1 ? jackknifeError(Array.from({ length: R }, (_, i) => ratio(values, exactPart, i))) : 0;
    return { value, error };
  };
  const curve = new Float64Array(F);
  const curveError = new Float64Array(F);
  for (let f = 0; f < F; f++) {
    const values = curves.map((cv) => cv[f]);
    const e = estimate(values, exactCollected.curve[f]);
    curve[f] = e.value;
    curveError[f] = e.error;
  }
  const totalEst = estimate(total, totalExact);
  const elasticEst = estimate(elastic, elasticExact);
  const weightEst = estimate(
    Array.from(total, (t, i) => t - elastic[i]),
    totalExact - elasticExact,
  );
  const zAll = zOf(-1);
  const perRound = Math.max(R, 1);
  const allPositions = [...exactCollected.positions, ...positions];
  const allWeights = [...exactCollected.weights.map((w) => (w * perRound) / zAll), ...rawWeights.map((w) => w / zAll)];
  return {
    method: 'lanczos',
    curve,
    curveError,
    positions: allPositions,
    weights: allWeights,
    residuals: exactCollected.residuals.concat(residuals),
    weight: weightEst.value,
    weightError: weightEst.error,
    elastic: elasticEst.value,
    elasticError: elasticEst.error,
    total: totalEst.value,
    totalError: totalEst.error,
    linesWeight: allWeights.reduce((a, b) => a + b, 0),
    groundEnergy: e0,
    groundCopies: ground.length,
    sectors: null,
    runs,
    products,
  };
}
