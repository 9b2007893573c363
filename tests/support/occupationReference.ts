// A plain dense build of the Hamiltonian of docs/model.md on occupation-number states, for every
// particle kind alike, written from that page alone (not from src): modes site-major, level-minor;
// a+_m a_m counts; bosons pick up sqrt(n) factors, fermions (-1)^(occupied modes before m); kinds
// differ only in which occupations are states (pinned: one particle per site; hard-core: at most one;
// bosons: at most max_per_site; fermions: at most one per mode). A product that leaves the allowed
// states is dropped. Its ground space's equal mixture gives every observable of the page.

import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

export type Kind = 'pinned' | 'hardcore' | 'boson' | 'fermion';

export interface ModelDescription {
  sites: number;
  periodic: boolean;
  levels: number;
  ring: boolean;
  tunnelling: number[]; // per link
  phase: number[]; // per link
  detuning: number[]; // per level
  exchange: number;
  exchangeRange: 'nearest' | 'dipolar';
  exchangeCutoff: number | null;
  weights: number[]; // N-1
  ising: number;
  moments: number[];
  isingRange: 'nearest' | 'dipolar';
  isingCutoff: number | null;
  kind: Kind;
  particles: number;
  hopping: number;
  maxPerSite: number;
  onsite: number;
  /**
   * Sites anywhere (issue 19): the pair factor f_ij (i < j, read as factors[i][j]) of the exchange
   * and of the diagonal term, and the hopping bonds, replacing the chain's f(r) and bonds when given.
   */
  exchangeFactors?: number[][];
  isingFactors?: number[][];
  bonds?: [number, number][];
  /**
   * Disorder (issue 20): each site's own tunnelling and phase per link and detuning per level
   * ([site][slot]), and each pair's exchange V_ij (read as exchangeValues[i][j], i < j), replacing the
   * uniform values when given.
   */
  siteTunnelling?: number[][];
  sitePhase?: number[][];
  siteDetuning?: number[][];
  exchangeValues?: number[][];
}

export interface DenseModel {
  dim: number;
  configs: Int32Array[];
  re: Float64Array;
  im: Float64Array;
  real: boolean;
}

function coupling(
  i: number,
  j: number,
  m: ModelDescription,
  range: 'nearest' | 'dipolar',
  cutoff: number | null,
  factors?: number[][],
): number {
  if (factors) return factors[i][j];
  const d = Math.abs(i - j);
  const r = m.periodic ? Math.min(d, m.sites - d) : d;
  if (range === 'nearest') return r === 1 ? 1 : 0;
  if (cutoff !== null && r > cutoff) return 0;
  return 1 / (r * r * r);
}

function enumerate(m: ModelDescription): Int32Array[] {
  const L = m.sites;
  const N = m.levels;
  const out: Int32Array[] = [];
  const occ = new Int32Array(L * N);
  const siteMax = m.kind === 'boson' ? m.maxPerSite : m.kind === 'fermion' ? N : 1;
  const modeMax = m.kind === 'boson' ? m.maxPerSite : 1;
  const place = (mode: number, left: number, onSite: number): void => {
    if (mode === L * N) {
      if (left === 0) out.push(occ.slice());
      return;
    }
    const site = Math.floor(mode / N);
    const lastOfSite = mode % N === N - 1;
    for (let k = 0; k <= Math.min(modeMax, left, siteMax - onSite); k++) {
      const total = onSite + k;
      if (lastOfSite && m.kind === 'pinned' && total !== 1) continue;
      occ[mode] = k;
      place(mode + 1, left - k, lastOfSite ? 0 : total);
      occ[mode] = 0;
    }
    void site;
  };
  place(0, m.particles, 0);
  return out;
}

/** Applies a product of ladder operators (written left to right, acting right to left). */
export function applyProduct(
  m: ModelDescription,
  occ: Int32Array,
  ops: [number, boolean][],
): { coef: number; occ: Int32Array } | null {
  const o = occ.slice();
  let coef = 1;
  for (let k = ops.length - 1; k >= 0; k--) {
    const [mode, dagger] = ops[k];
    if (m.kind === 'fermion') {
      let before = 0;
      for (let q = 0; q < mode; q++) before += o[q];
      const sign = before % 2 === 0 ? 1 : -1;
      if (dagger) {
        if (o[mode] === 1) return null;
        o[mode] = 1;
      } else {
        if (o[mode] === 0) return null;
        o[mode] = 0;
      }
      coef *= sign;
    } else if (dagger) {
      coef *= Math.sqrt(o[mode] + 1);
      o[mode]++;
    } else {
      if (o[mode] === 0) return null;
      coef *= Math.sqrt(o[mode]);
      o[mode]--;
    }
  }
  return { coef, occ: o };
}

export function buildDense(m: ModelDescription): DenseModel {
  const L = m.sites;
  const N = m.levels;
  const configs = enumerate(m);
  const dim = configs.length;
  const index = new Map<string, number>();
  configs.forEach((c, k) => index.set(c.join(','), k));
  const re = new Float64Array(dim * dim);
  const im = new Float64Array(dim * dim);
  const mode = (i: number, n: number) => i * N + n;
  // Off-diagonal terms T (H = T + T^+) as [coefficient re, im, operator product].
  const terms: [number, number, [number, boolean][]][] = [];
  const links = m.ring ? N : N - 1;
  for (let i = 0; i < L; i++) {
    for (let l = 0; l < links; l++) {
      const c = -(m.siteTunnelling ? m.siteTunnelling[i][l] : m.tunnelling[l]);
      const phase = m.sitePhase ? m.sitePhase[i][l] : m.phase[l];
      if (c === 0) continue;
      terms.push([
        c * Math.cos(phase),
        c * Math.sin(phase),
        [
          [mode(i, (l + 1) % N), true],
          [mode(i, l), false],
        ],
      ]);
    }
  }
  for (let i = 0; i < L; i++) {
    for (let j = i + 1; j < L; j++) {
      const v = m.exchangeValues
        ? m.exchangeValues[i][j]
        : m.exchange * coupling(i, j, m, m.exchangeRange, m.exchangeCutoff, m.exchangeFactors);
      if (v === 0) continue;
      for (let n = 0; n <= N - 2; n++) {
        const c = v * m.weights[n];
        if (c === 0) continue;
        terms.push([
          c,
          0,
          [
            [mode(i, n + 1), true],
            [mode(i, n), false],
            [mode(j, n), true],
            [mode(j, n + 1), false],
          ],
        ]);
      }
    }
  }
  if (m.kind !== 'pinned' && m.hopping !== 0) {
    const bonds: [number, number][] = m.bonds ? [...m.bonds] : [];
    if (!m.bonds) for (let i = 0; i + 1 < L; i++) bonds.push([i, i + 1]);
    if (m.periodic && !m.bonds) bonds.push([L - 1, 0]);
    for (const [i, j] of bonds)
      for (let n = 0; n < N; n++)
        terms.push([
          -m.hopping,
          0,
          [
            [mode(i, n), true],
            [mode(j, n), false],
          ],
        ]);
  }
  for (let s = 0; s < dim; s++) {
    const occ = configs[s];
    let diag = 0;
    const count = new Array<number>(L).fill(0);
    const moment = new Array<number>(L).fill(0);
    for (let i = 0; i < L; i++) {
      for (let n = 0; n < N; n++) {
        const k = occ[mode(i, n)];
        diag += (m.siteDetuning ? m.siteDetuning[i][n] : m.detuning[n]) * k;
        count[i] += k;
        moment[i] += m.moments[n] * k;
      }
    }
    for (let i = 0; i < L; i++)
      for (let j = i + 1; j < L; j++)
        diag += m.ising * coupling(i, j, m, m.isingRange, m.isingCutoff, m.isingFactors) * moment[i] * moment[j];
    if (m.kind === 'boson') for (let i = 0; i < L; i++) diag += (m.onsite / 2) * count[i] * (count[i] - 1);
    re[s * dim + s] += diag;
    for (const [cr, ci, ops] of terms) {
      const hit = applyProduct(m, occ, ops);
      if (!hit) continue;
      const t = index.get(hit.occ.join(','));
      if (t === undefined) continue;
      // T[t][s] += c coef; (T^+)[s][t] += conj(c) coef
      re[t * dim + s] += cr * hit.coef;
      im[t * dim + s] += ci * hit.coef;
      re[s * dim + t] += cr * hit.coef;
      im[s * dim + t] -= ci * hit.coef;
    }
  }
  let real = true;
  for (let k = 0; k < dim * dim; k++)
    if (Math.abs(im[k]) > 1e-15) {
      real = false;
      break;
    }
  return { dim, configs, re, im, real };
}

export interface GroundMixture {
  /** All eigenvalues ascending (complex H: each once). */
  values: number[];
  degeneracy: number;
  /** Projector onto the ground space, P = A + iB (row-major dim x dim). */
  projectorRe: Float64Array;
  projectorIm: Float64Array | null;
  /** The (real-embedded, for complex H) matrix's eigenvalues and eigenvectors (columns), for time evolution. */
  embeddedValues: number[];
  embeddedVectors: Matrix;
}

/** Two levels closer than this are one (solver.degeneracy's documented window). */
export function levelWindow(e0: number, tolerance: number): number {
  return Math.max(1e-8 * Math.max(1, Math.abs(e0)), 10 * tolerance);
}

export function groundMixture(h: DenseModel, tolerance: number): GroundMixture {
  const D = h.dim;
  const size = h.real ? D : 2 * D;
  const matrix = new Matrix(size, size);
  for (let r = 0; r < D; r++) {
    for (let c = 0; c < D; c++) {
      const x = h.re[r * D + c];
      matrix.set(r, c, x);
      if (!h.real) {
        const y = h.im[r * D + c];
        matrix.set(r + D, c + D, x);
        matrix.set(r, c + D, -y);
        matrix.set(r + D, c, y);
      }
    }
  }
  const evd = new EigenvalueDecomposition(matrix, { assumeSymmetric: true });
  const order = evd.realEigenvalues.map((e, k) => [e, k] as const).sort((a, b) => a[0] - b[0]);
  const all = order.map(([e]) => e);
  const values = h.real ? all : all.filter((_, k) => k % 2 === 0);
  const e0 = values[0];
  const window = levelWindow(e0, tolerance);
  const inside = order.filter(([e]) => Math.abs(e - e0) <= window);
  const degeneracy = h.real ? inside.length : inside.length / 2;
  const A = new Float64Array(D * D);
  const B = h.real ? null : new Float64Array(D * D);
  const V = evd.eigenvectorMatrix;
  for (const [, k] of inside) {
    const v = V.getColumn(k);
    let norm = 0;
    for (const x of v) norm += x * x;
    for (let s = 0; s < D; s++) {
      for (let t = 0; t < D; t++) {
        A[s * D + t] += (v[s] * v[t]) / norm;
        if (B) B[s * D + t] += (v[s + D] * v[t]) / norm;
      }
    }
  }
  return {
    values,
    degeneracy,
    projectorRe: A,
    projectorIm: B,
    embeddedValues: evd.realEigenvalues,
    embeddedVectors: V,
  };
}

export interface ReferenceObservables {
  populations: number[][];
  level_mean: number[];
  spread: number[];
  string_width: number;
  pair_separation: number[][];
  density: number[];
  double_occupancy: number[];
}

/** The diagonal observables of docs/model.md from basis-state probabilities p (sum 1). */
export function observablesFrom(
  m: ModelDescription,
  configs: Int32Array[],
  p: ArrayLike<number>,
): ReferenceObservables {
  const L = m.sites;
  const N = m.levels;
  const pop = Array.from({ length: L }, () => new Array<number>(N).fill(0));
  const density = new Array<number>(L).fill(0);
  const doubles = new Array<number>(L).fill(0);
  const s1 = new Array<number>(L).fill(0);
  const s2 = new Array<number>(L).fill(0);
  const pairCount = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  const pairSq = Array.from({ length: L }, () => new Array<number>(L).fill(0));
  let width = 0;
  configs.forEach((occ, s) => {
    const w = p[s];
    if (w === 0) return;
    const levelsOf: number[] = [];
    const count = new Array<number>(L).fill(0);
    for (let i = 0; i < L; i++) {
      for (let n = 0; n < N; n++) {
        const k = occ[i * N + n];
        pop[i][n] += w * k;
        count[i] += k;
        s1[i] += w * n * k;
        s2[i] += w * n * n * k;
        for (let q = 0; q < k; q++) levelsOf.push(n);
      }
      density[i] += w * count[i];
      doubles[i] += (w * count[i] * (count[i] - 1)) / 2;
    }
    for (let i = 0; i < L; i++) {
      for (let j = 0; j < L; j++) {
        if (i === j) continue;
        pairCount[i][j] += w * count[i] * count[j];
        let sq = 0;
        for (let a = 0; a < N; a++)
          for (let b = 0; b < N; b++) sq += (a - b) * (a - b) * occ[i * N + a] * occ[j * N + b];
        pairSq[i][j] += w * sq;
      }
    }
    const mean = levelsOf.reduce((x, y) => x + y, 0) / levelsOf.length;
    width += (w * levelsOf.reduce((x, n) => x + (n - mean) * (n - mean), 0)) / levelsOf.length;
  });
  const level_mean = s1.map((x, i) => (density[i] < 1e-12 ? 0 : x / density[i]));
  const spread = s2.map((x, i) => (density[i] < 1e-12 ? 0 : x / density[i] - level_mean[i] * level_mean[i]));
  const pair_separation = pairSq.map((row, i) =>
    row.map((x, j) => (i === j || pairCount[i][j] < 1e-12 ? 0 : x / pairCount[i][j])),
  );
  return {
    populations: pop,
    level_mean,
    spread,
    string_width: width,
    pair_separation,
    density,
    double_occupancy: doubles,
  };
}

export interface ReferenceCut {
  cut: number;
  von_neumann: number;
  renyi_2: number;
  spectrum: number[];
}

/** Entanglement of the sites left of `cut` in the mixture P/g (pinned chains). */
export function leftEntanglement(m: ModelDescription, h: DenseModel, g: GroundMixture, cut: number): ReferenceCut {
  const { von_neumann, renyi_2, spectrum } = siteSetEntanglement(
    m,
    h,
    g,
    Array.from({ length: cut }, (_, i) => i),
  );
  return { cut, von_neumann, renyi_2, spectrum };
}

/**
 * Entanglement of the subsystem A = `subsystem` (any sites) in the mixture P/g of pinned molecules:
 * rho_A[a, a'] = (1/g) sum_b P[(a, b), (a', b)], b running over the levels of the other sites,
 * diagonalized by ml-matrix.
 */
export function siteSetEntanglement(
  m: ModelDescription,
  h: DenseModel,
  g: GroundMixture,
  subsystem: number[],
): Omit<ReferenceCut, 'cut'> {
  const L = m.sites;
  const N = m.levels;
  const D = h.dim;
  const inA = new Set(subsystem);
  const dL = N ** inA.size;
  const dR = N ** (L - inA.size);
  const byPair = new Int32Array(dL * dR);
  h.configs.forEach((occ, s) => {
    let a = 0;
    let b = 0;
    for (let i = L - 1; i >= 0; i--) {
      let level = -1;
      for (let n = 0; n < N; n++) if (occ[i * N + n] === 1) level = n;
      if (inA.has(i)) a = a * N + level;
      else b = b * N + level;
    }
    byPair[a * dR + b] = s;
  });
  const real = g.projectorIm === null;
  const size = real ? dL : 2 * dL;
  const rho = new Matrix(size, size);
  for (let a = 0; a < dL; a++) {
    for (let a2 = 0; a2 < dL; a2++) {
      let x = 0;
      let y = 0;
      for (let b = 0; b < dR; b++) {
        const s = byPair[a * dR + b];
        const t = byPair[a2 * dR + b];
        x += g.projectorRe[s * D + t];
        if (!real) y += g.projectorIm![s * D + t];
      }
      x /= g.degeneracy;
      y /= g.degeneracy;
      rho.set(a, a2, x);
      if (!real) {
        rho.set(a + dL, a2 + dL, x);
        rho.set(a, a2 + dL, -y);
        rho.set(a + dL, a2, y);
      }
    }
  }
  const evd = new EigenvalueDecomposition(rho, { assumeSymmetric: true });
  const sorted = [...evd.realEigenvalues].sort((u, v) => v - u);
  const weights = real ? sorted : sorted.filter((_, k) => k % 2 === 0);
  let vn = 0;
  let purity = 0;
  for (const w of weights) {
    const q = Math.max(w, 0);
    if (q > 0) vn -= q * Math.log(q);
    purity += q * q;
  }
  const spectrum = weights
    .filter((w) => w > 1e-13)
    .slice(0, 8)
    .map((w) => -Math.log(w));
  return { von_neumann: vn, renyi_2: -Math.log(purity), spectrum };
}

/**
 * exp(-i H t) on a complex state (re, im), from the spectral decomposition of H (or of its real
 * embedding [[R, -I], [I, R]], which commutes with multiplication by i, J = [[0, -1], [1, 0]]):
 * exp(-i H t) = cos(H t) - i sin(H t).
 */
export function evolveDense(
  h: DenseModel,
  g: GroundMixture,
  re: Float64Array,
  im: Float64Array,
  t: number,
): { re: Float64Array; im: Float64Array } {
  const D = h.dim;
  const size = h.real ? D : 2 * D;
  const V = g.embeddedVectors;
  const apply = (x: Float64Array, f: (e: number) => number): Float64Array => {
    const out = new Float64Array(size);
    for (let k = 0; k < size; k++) {
      let c = 0;
      for (let s = 0; s < size; s++) c += V.get(s, k) * x[s];
      c *= f(g.embeddedValues[k]);
      if (c === 0) continue;
      for (let s = 0; s < size; s++) out[s] += V.get(s, k) * c;
    }
    return out;
  };
  if (h.real) {
    // H real: cos and sin act on re and im separately.
    const cr = apply(re, (e) => Math.cos(e * t));
    const ci = apply(im, (e) => Math.cos(e * t));
    const sr = apply(re, (e) => Math.sin(e * t));
    const si = apply(im, (e) => Math.sin(e * t));
    // (cos - i sin)(re + i im) = (cos re + sin im) + i (cos im - sin re)
    return { re: cr.map((x, s) => x + si[s]), im: ci.map((x, s) => x - sr[s]) };
  }
  const x = new Float64Array(size);
  x.set(re, 0);
  x.set(im, D);
  const c = apply(x, (e) => Math.cos(e * t));
  const sn = apply(x, (e) => Math.sin(e * t));
  // -i in the embedding is -J: -J (u; w) = (w; -u)
  const outRe = new Float64Array(D);
  const outIm = new Float64Array(D);
  for (let s = 0; s < D; s++) {
    outRe[s] = c[s] + sn[s + D];
    outIm[s] = c[s + D] - sn[s];
  }
  return { re: outRe, im: outIm };
}

/** <psi| H |psi> for a complex state. */
export function energyOf(h: DenseModel, re: Float64Array, im: Float64Array): number {
  const D = h.dim;
  let e = 0;
  for (let s = 0; s < D; s++) {
    for (let t = 0; t < D; t++) {
      const hr = h.re[s * D + t];
      const hi = h.im[s * D + t];
      if (hr === 0 && hi === 0) continue;
      // conj(psi_s) H_st psi_t, real part
      const pr = hr * re[t] - hi * im[t];
      const pi = hr * im[t] + hi * re[t];
      e += re[s] * pr + im[s] * pi;
    }
  }
  return e;
}
