// The finite-temperature Lanczos method (Jaklic and Prelovsek, Phys. Rev. B 49, 5065 (1994);
// review: Prelovsek and Bonca, arXiv:1111.5931), block by block (symmetry sectors, or the whole
// space), with the lowest states of every block taken exactly.
//
// Per block: its lowest `LOW_STATES` eigenpairs (and any further copies of its lowest level) are
// solved to convergence and enter the traces with their exact Boltzmann weights; the rest of the
// trace, Tr[(1 - P) X] with P the projector on those states, is estimated from random vectors r
// of unit-modulus entries (E[r r^+] = 1): r' = (1 - P) r, and
//   <r'| e^{-H/T} A |r'> ~ |r'|^2 sum_j e^{-e_j/T} U_0j sum_m U_mj <V_m|A|r'>/|r'|
// over the Lanczos basis V_m started from r'/|r'| (kept orthogonal to P's states), e_j and U the
// tridiagonal matrix's eigenpairs. Blocks of at most DENSE_BLOCK states are diagonalized densely
// (exact). At low T the thermal state tends to the exact low states: the ground level's equal
// mixture, with entropy ln g, energy and observables free of statistical error.
//
// Error bars: round i uses random vector i of every block; each round gives a full estimate of
// every trace (Z, sum x E, sum x E^2 and the observables' linear moments). A value is the ratio of
// the traces summed over rounds (the usual estimator), and its error bar the jackknife over
// rounds (leave one round out, common practice for ratios). The traces are taken relative to the
// lowest energy found, E0, so nothing overflows.

import type { Basis, PinnedBasis } from '../basis/basis.js';
import type { Model } from '../model/model.js';
import type { HermitianOperator } from '../operator/hermitian.js';
import { buildOperator } from '../operator/build.js';
import { denseEigen, lowestEigenpairs } from '../solver/eigensolver.js';
import { symmetricEigen } from '../linalg/symmetricEigen.js';
import { buildSectorOperator } from '../symmetry/sectorOperator.js';
import { SectorBasis, type OrbitMap } from '../symmetry/sectorBasis.js';
import type { SectorPlan } from '../symmetry/group.js';
import { OrbitMaps } from '../symmetry/sectorSolve.js';
import {
  levelStructureFactor,
  pinnedObservables,
  type CorrelationRequest,
  type Observables,
} from '../observables/pinned.js';
import { levelCorrelationBySeparation } from '../observables/separation.js';
import type { ThermalSection } from '../spec/thermalSection.js';
import type { Thermodynamics } from './thermodynamics.js';
import { fillRandom, generator, mix } from './random.js';

/** Exact low states per block (plus the further copies of its lowest level that the solve finds). */
export const LOW_STATES = 2;
/** Blocks of at most this many states are diagonalized densely (their traces are then exact). */
export const DENSE_BLOCK = 200;

interface BlockSetup {
  op: HermitianOperator;
  /** Real-form entries per vector. */
  length: number;
  isComplex: boolean;
  weight: number;
  sector: SectorBasis | null;
  /** Exact states: all of them for a dense block, the low ones otherwise. */
  values: Float64Array;
  vectors: Float64Array[];
  /** True when `values` is the whole spectrum (no random vectors needed). */
  complete: boolean;
  /** Key of its orbit map (accumulators are kept per representative of that map). */
  group: string;
}

export interface LanczosRow extends Thermodynamics {
  observables: Observables;
  errors: (Thermodynamics & { observables: Observables }) | null;
}

/** Linear traces of one round at every temperature. */
interface RoundTraces {
  z: Float64Array;
  e1: Float64Array;
  e2: Float64Array;
  /** Per temperature, the linear moments of the observables (null for itinerant kinds). */
  moments: Float64Array[] | null;
}

function dot(a: Float64Array, b: Float64Array, isComplex: boolean, out: Float64Array): void {
  // <a|b> = sum conj(a) b
  let re = 0;
  let im = 0;
  if (isComplex) {
    for (let i = 0; i < a.length; i += 2) {
      re += a[i] * b[i] + a[i + 1] * b[i + 1];
      im += a[i] * b[i + 1] - a[i + 1] * b[i];
    }
  } else for (let i = 0; i < a.length; i++) re += a[i] * b[i];
  out[0] = re;
  out[1] = im;
}

/** v -= <u|v> u for every u (unit vectors), twice (classical Gram-Schmidt with one repeat). */
function orthogonalize(v: Float64Array, against: Float64Array[], isComplex: boolean): void {
  const c = new Float64Array(2);
  for (let pass = 0; pass < 2; pass++) {
    for (const u of against) {
      dot(u, v, isComplex, c);
      if (isComplex) {
        for (let i = 0; i < v.length; i += 2) {
          v[i] -= c[0] * u[i] - c[1] * u[i + 1];
          v[i + 1] -= c[0] * u[i + 1] + c[1] * u[i];
        }
      } else for (let i = 0; i < v.length; i++) v[i] -= c[0] * u[i];
    }
  }
}

function norm(v: Float64Array): number {
  let s = 0;
  for (let i = 0; i < v.length; i++) s += v[i] * v[i];
  return Math.sqrt(s);
}

/** Linear moments of a pinned quasi-probability: populations (L N), <n_i n_j> (L L, i<j), <n_i^2> from populations. */
function linearMoments(basis: PinnedBasis, q: Float64Array): Float64Array {
  const L = basis.sites;
  const N = basis.levels;
  const o = pinnedObservables(basis, q);
  const out = new Float64Array(L * N + L * L);
  for (let i = 0; i < L; i++) for (let n = 0; n < N; n++) out[i * N + n] = o.populations[i][n];
  const meanSq = (i: number) => o.populations[i].reduce((s, p, n) => s + n * n * p, 0);
  // pair_separation = <n_i^2> + <n_j^2> - 2 <n_i n_j>, linear in q
  for (let i = 0; i < L; i++)
    for (let j = i + 1; j < L; j++) out[L * N + i * L + j] = (meanSq(i) + meanSq(j) - o.pair_separation[i][j]) / 2;
  return out;
}

/** The observables of docs/model.md from normalized linear moments (as pinnedObservables builds them). */
function observablesFromMoments(m: Float64Array, L: number, N: number, correlations: CorrelationRequest): Observables {
  const populations: number[][] = [];
  const mean: number[] = [];
  const sq: number[] = [];
  for (let i = 0; i < L; i++) {
    const row = Array.from(m.subarray(i * N, (i + 1) * N));
    populations.push(row);
    mean.push(row.reduce((s, p, n) => s + n * p, 0));
    sq.push(row.reduce((s, p, n) => s + n * n * p, 0));
  }
  const pair = (i: number, j: number) => m[L * N + Math.min(i, j) * L + Math.max(i, j)];
  const spread = mean.map((x, i) => sq[i] - x * x);
  let sumSq = 0;
  let pairs = 0;
  for (let i = 0; i < L; i++) {
    sumSq += sq[i];
    for (let j = i + 1; j < L; j++) pairs += pair(i, j);
  }
  const correlation = mean.map((_, i) => mean.map((__, j) => (i === j ? spread[i] : pair(i, j) - mean[i] * mean[j])));
  return {
    populations,
    level_mean: mean,
    spread,
    string_width: sumSq / L - (sumSq + 2 * pairs) / (L * L),
    pair_separation: mean.map((_, i) => mean.map((__, j) => (i === j ? 0 : sq[i] + sq[j] - 2 * pair(i, j)))),
    level_correlation: correlation,
    level_structure_factor: levelStructureFactor(correlation, correlations.periodic),
    level_correlation_by_separation: levelCorrelationBySeparation(correlation, correlations.separations ?? null),
  };
}

/** Every number of an observables object, in a fixed order (for the jackknife), and back. */
function flatten(o: Observables): number[] {
  const out: number[] = [];
  const walk = (v: unknown) => {
    if (typeof v === 'number') out.push(v);
    else if (Array.isArray(v)) v.forEach(walk);
    else if (v && typeof v === 'object') Object.values(v).forEach(walk);
  };
  walk(o);
  return out;
}

function unflatten(template: Observables, values: number[]): Observables {
  let at = 0;
  const walk = (v: unknown, key?: string): unknown => {
    // labels of a separation entry are not estimates: their error is 0
    if (typeof v === 'number') return key === 'distance' || key === 'pairs' ? (at++, 0) : values[at++];
    if (Array.isArray(v)) return v.map((x) => (key === 'separation' ? (at++, 0 * (x as number)) : walk(x)));
    if (v && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([k, x]) => [k, walk(x, k)]));
    return v;
  };
  return walk(template) as Observables;
}

/** Knobs for tests: the dense-block size and the exact low states per block. */
export interface LanczosKnobs {
  denseBlock?: number;
  lowStates?: number;
}

/** Every level the estimate holds, E - E0 with its weight in the trace averaged over rounds (for S(T) at any T). */
export interface LanczosSpectrum {
  shifted: number[];
  weights: number[];
}

function setUpBlocks(
  model: Model,
  basis: Basis,
  sectors: SectorPlan[] | null,
  tolerance: number,
  knobs: LanczosKnobs,
): BlockSetup[] {
  const denseBlock = knobs.denseBlock ?? DENSE_BLOCK;
  const lowStates = Math.max(1, knobs.lowStates ?? LOW_STATES);
  const exactOf = (op: HermitianOperator, weight: number, sector: SectorBasis | null, group: string): BlockSetup => {
    const length = op.isComplex ? 2 * op.dim : op.dim;
    if (op.dim <= Math.max(denseBlock, lowStates + 1)) {
      const { values, vectors } = denseEigen(op);
      return { op, length, isComplex: op.isComplex, weight, sector, values, vectors, complete: true, group };
    }
    const low = lowestEigenpairs(op, {
      states: lowStates,
      tolerance,
      throwOnFailure: true,
      groundCopies: 16,
      reorthogonalization: 'full',
    });
    return {
      op,
      length,
      isComplex: op.isComplex,
      weight,
      sector,
      values: low.values,
      vectors: low.vectors,
      complete: false,
      group,
    };
  };
  if (sectors === null || basis.kind !== 'pinned') return [exactOf(buildOperator(model, basis, null), 1, null, 'full')];
  // The sector solve's orbit maps (translations, reflection, level flip, point group); blocks that
  // share a map share its accumulators, keyed by the map.
  const maps = new OrbitMaps(model, basis, false);
  const keys = new Map<OrbitMap, string>();
  const out: BlockSetup[] = [];
  for (const plan of sectors) {
    const orbits = maps.for(plan.label);
    if (!keys.has(orbits)) keys.set(orbits, `map${keys.size}`);
    const key = keys.get(orbits)!;
    const sector = new SectorBasis(orbits, plan.label);
    if (sector.dim === 0) continue;
    out.push(exactOf(buildSectorOperator(model, basis, sector, null), 1 + plan.copies.length, sector, key));
  }
  return out;
}

/** |c(a)|^2-like weight of block state a: Re(conj(x_a) y_a). */
function pairWeight(x: Float64Array, y: Float64Array, a: number, isComplex: boolean): number {
  return isComplex ? x[2 * a] * y[2 * a] + x[2 * a + 1] * y[2 * a + 1] : x[a] * y[a];
}

/** Accumulators per orbit map: per temperature, one weight per representative (or per basis state). */
class Accumulators {
  readonly byGroup = new Map<string, { sector: SectorBasis | null; perRep: Float64Array[] }>();
  constructor(
    private readonly temps: number,
    private readonly dim: number,
  ) {}

  add(block: BlockSetup, t: number, perState: Float64Array): void {
    let entry = this.byGroup.get(block.group);
    if (!entry) {
      const size = block.sector ? block.sector.orbits.representatives : this.dim;
      entry = { sector: block.sector, perRep: Array.from({ length: this.temps }, () => new Float64Array(size)) };
      this.byGroup.set(block.group, entry);
    }
    const target = entry.perRep[t];
    const s = block.sector;
    if (s) {
      const G = s.orbits.order;
      for (let a = 0; a < s.dim; a++) target[s.repIndex[a]] += (perState[a] * s.norm[a]) / G;
    } else for (let a = 0; a < perState.length; a++) target[a] += perState[a];
  }

  /** Full-space quasi-probability at temperature t (unnormalized). */
  fullSpace(t: number, out: Float64Array): void {
    out.fill(0);
    for (const { sector, perRep } of this.byGroup.values()) {
      const w = perRep[t];
      if (!sector) {
        for (let s = 0; s < out.length; s++) out[s] += w[s];
        continue;
      }
      // every orbit state gets its representative's weight: n_a/|G| per state was applied in add
      const repOf = sector.orbits.repOf;
      for (let s = 0; s < out.length; s++) out[s] += w[repOf[s]];
    }
  }
}

export function lanczosThermal(
  model: Model,
  basis: Basis,
  sectors: SectorPlan[] | null,
  temps: number[],
  section: ThermalSection,
  correlations: CorrelationRequest,
  tolerance = 1e-10,
  knobs: LanczosKnobs = {},
  spectrum: LanczosSpectrum | null = null,
): { groundEnergy: number; rows: LanczosRow[] } {
  const blocks = setUpBlocks(model, basis, sectors, tolerance, knobs);
  let e0 = Infinity;
  for (const b of blocks) if (b.values.length > 0) e0 = Math.min(e0, b.values[0]);
  const T = temps.length;
  const rounds = section.vectors;
  const pinned = basis.kind === 'pinned' ? basis : null;
  const momentSize = pinned ? pinned.sites * pinned.levels + pinned.sites * pinned.sites : 0;

  // The exact part (the same in every round).
  const exact: RoundTraces = {
    z: new Float64Array(T),
    e1: new Float64Array(T),
    e2: new Float64Array(T),
    moments: null,
  };
  const exactAcc = pinned ? new Accumulators(T, basis.dim) : null;
  for (const b of blocks) {
    const d = b.op.dim;
    const amps = b.vectors.map((v) => {
      const amp = new Float64Array(d);
      for (let a = 0; a < d; a++) amp[a] = pairWeight(v, v, a, b.isComplex);
      return amp;
    });
    if (spectrum)
      b.values.forEach((e) => {
        spectrum.shifted.push(e - e0);
        spectrum.weights.push(b.weight);
      });
    const perState = new Float64Array(d);
    for (let t = 0; t < T; t++) {
      perState.fill(0);
      let any = false;
      b.values.forEach((e, k) => {
        const de = e - e0;
        const x = b.weight * Math.exp(-de / temps[t]);
        exact.z[t] += x;
        exact.e1[t] += x * de;
        exact.e2[t] += x * de * de;
        if (x === 0 || !exactAcc) return;
        any = true;
        const amp = amps[k];
        for (let a = 0; a < d; a++) perState[a] += x * amp[a];
      });
      if (any && exactAcc) exactAcc.add(b, t, perState);
    }
  }
  const full = pinned ? new Float64Array(basis.dim) : null;
  if (pinned && exactAcc)
    exact.moments = Array.from({ length: T }, (_, t) => (exactAcc.fullSpace(t, full!), linearMoments(pinned, full!)));

  const stochastic = blocks.filter((b) => !b.complete);
  const roundTraces: RoundTraces[] = [];
  const roundCount = stochastic.length === 0 ? 1 : rounds;
  for (let round = 0; round < roundCount; round++) {
    const tr: RoundTraces = {
      z: exact.z.slice(),
      e1: exact.e1.slice(),
      e2: exact.e2.slice(),
      moments: exact.moments ? exact.moments.map((m) => m.slice()) : null,
    };
    const acc = pinned ? new Accumulators(T, basis.dim) : null;
    stochastic.forEach((b) => {
      const index = blocks.indexOf(b);
      randomRun(b, index, round, section, e0, temps, tr, acc, spectrum, roundCount);
    });
    if (pinned && acc && acc.byGroup.size > 0) {
      for (let t = 0; t < T; t++) {
        acc.fullSpace(t, full!);
        const m = linearMoments(pinned, full!);
        const target = tr.moments![t];
        for (let i = 0; i < momentSize; i++) target[i] += m[i];
      }
    }
    roundTraces.push(tr);
  }

  // Values from the traces summed over rounds; error bars by the jackknife over rounds.
  const L = pinned?.sites ?? 0;
  const N = pinned?.levels ?? 0;
  const estimate = (
    parts: RoundTraces[],
    t: number,
  ): { thermo: Thermodynamics; flat: number[]; obs: Observables | null } => {
    let z = 0;
    let e1 = 0;
    let e2 = 0;
    const m = new Float64Array(momentSize);
    for (const p of parts) {
      z += p.z[t];
      e1 += p.e1[t];
      e2 += p.e2[t];
      if (p.moments) for (let i = 0; i < momentSize; i++) m[i] += p.moments[t][i];
    }
    const temp = temps[t];
    const mean = e1 / z;
    const variance = Math.max(0, e2 / z - mean * mean);
    // z is a sum over rounds: divide by their count for the trace itself
    const lnz = Math.log(z / parts.length);
    const thermo = {
      energy: e0 + mean,
      specific_heat: variance / (temp * temp),
      entropy: lnz + mean / temp,
      free_energy: e0 - temp * lnz,
    };
    if (!pinned) return { thermo, flat: [], obs: null };
    for (let i = 0; i < momentSize; i++) m[i] /= z;
    const obs = observablesFromMoments(m, L, N, correlations);
    return { thermo, flat: flatten(obs), obs };
  };
  const rows: LanczosRow[] = [];
  for (let t = 0; t < T; t++) {
    const all = estimate(roundTraces, t);
    let errors: LanczosRow['errors'] = null;
    const R = roundTraces.length;
    if (R > 1) {
      const leave = roundTraces.map((_, i) =>
        estimate(
          roundTraces.filter((__, k) => k !== i),
          t,
        ),
      );
      const jack = (values: number[]) => {
        const avg = values.reduce((s, v) => s + v, 0) / R;
        return Math.sqrt(((R - 1) / R) * values.reduce((s, v) => s + (v - avg) ** 2, 0));
      };
      const keys = ['energy', 'specific_heat', 'entropy', 'free_energy'] as const;
      const thermoErr = Object.fromEntries(
        keys.map((k) => [k, jack(leave.map((l) => l.thermo[k]))]),
      ) as unknown as Thermodynamics;
      const flatErr = all.flat.map((_, i) => jack(leave.map((l) => l.flat[i])));
      errors = { ...thermoErr, observables: all.obs ? unflatten(all.obs, flatErr) : ({} as Observables) };
    } else if (stochastic.length === 0) {
      // every block exact: no statistical error
      errors = {
        energy: 0,
        specific_heat: 0,
        entropy: 0,
        free_energy: 0,
        observables: all.obs
          ? unflatten(
              all.obs,
              all.flat.map(() => 0),
            )
          : ({} as Observables),
      };
    }
    rows.push({ ...all.thermo, observables: all.obs ?? ({} as Observables), errors });
  }
  return { groundEnergy: e0, rows };
}

/** One random vector's Lanczos run in one block, added to the round's traces. */
function randomRun(
  b: BlockSetup,
  blockIndex: number,
  round: number,
  section: ThermalSection,
  e0: number,
  temps: number[],
  tr: RoundTraces,
  acc: Accumulators | null,
  spectrum: LanczosSpectrum | null,
  roundCount: number,
): void {
  const { op, isComplex, length } = b;
  const d = op.dim;
  const T = temps.length;
  const rand = generator(mix(section.seed, blockIndex, round));
  const r = new Float64Array(length);
  fillRandom(r, d, isComplex, rand);
  orthogonalize(r, b.vectors, isComplex);
  const rNorm = norm(r);
  if (rNorm < 1e-12) return;
  const steps = Math.min(section.steps, d - b.vectors.length);
  const V: Float64Array[] = [];
  const alpha: number[] = [];
  const beta: number[] = [];
  let v = r.map((x) => x / rNorm);
  const w = new Float64Array(length);
  const c = new Float64Array(2);
  for (let m = 0; m < steps; m++) {
    V.push(v);
    op.apply(v, w);
    dot(v, w, isComplex, c);
    alpha.push(c[0]);
    // full reorthogonalization against the Lanczos basis and the exact low states
    orthogonalize(w, V, isComplex);
    orthogonalize(w, b.vectors, isComplex);
    const bn = norm(w);
    if (m === steps - 1 || bn < 1e-10 * Math.max(1, Math.abs(c[0]))) break;
    beta.push(bn);
    v = w.map((x) => x / bn);
  }
  const M = V.length;
  const tri = new Float64Array(M * M);
  for (let i = 0; i < M; i++) {
    tri[i * M + i] = alpha[i];
    if (i + 1 < M) {
      tri[i * M + i + 1] = beta[i];
      tri[(i + 1) * M + i] = beta[i];
    }
  }
  const { values, vectors } = symmetricEigen(tri, M, true);
  const U = vectors!; // U[j * M + m]: component m of Ritz vector j
  const scale = b.weight * rNorm * rNorm;
  if (spectrum)
    for (let j = 0; j < M; j++) {
      spectrum.shifted.push(values[j] - e0);
      spectrum.weights.push((scale * U[j * M] * U[j * M]) / roundCount);
    }
  const coef = new Float64Array(M);
  for (let t = 0; t < T; t++) {
    coef.fill(0);
    for (let j = 0; j < M; j++) {
      const de = values[j] - e0;
      const f = scale * Math.exp(-de / temps[t]);
      const u0 = U[j * M];
      const x = f * u0 * u0;
      tr.z[t] += x;
      tr.e1[t] += x * de;
      tr.e2[t] += x * de * de;
      if (acc) for (let m = 0; m < M; m++) coef[m] += f * u0 * U[j * M + m];
    }
    if (!acc) continue;
    // quasi-probability of block state a: Re(conj(r'(a)) sum_m coef_m V_m(a)) / |r'|, r' = rNorm V_0
    const y = new Float64Array(length);
    for (let m = 0; m < M; m++) {
      const cm = coef[m];
      if (cm === 0) continue;
      const Vm = V[m];
      for (let i = 0; i < length; i++) y[i] += cm * Vm[i];
    }
    const perState = new Float64Array(d);
    const v0 = V[0];
    for (let a = 0; a < d; a++) perState[a] = pairWeight(v0, y, a, isComplex);
    acc.add(b, t, perState);
  }
}
