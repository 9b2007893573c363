// The Hamiltonian of docs/model.md on fixed-number Fock bases (hard-core bosons, soft-core bosons,
// fermions), stored once as compressed rows.
//
// Every term is written with the creation and annihilation tables of the local space:
//   synthetic tunnelling   sum_{a != b} h_ab a+_{i,a} a_{i,b}     one site: a local matrix
//   detuning, on-site U    diagonal, per local state
//   exchange               (a+_{i,n+1} a_{i,n}) (a+_{j,n} a_{j,n+1}) + h.c.   two sites, each factor
//                          conserves that site's particle count
//   diagonal dipole term   W_ij m_i m_j, diagonal
//   hopping                -t (a+_{i,n} a_{j,n} + h.c.) on the chain's bonds, periodic bond included
// Fermion signs: a_m |..> = (-1)^(occupied modes before m) |..>, modes ordered site-major and
// level-minor. The in-site part of the sign is in the local tables; a particle-conserving factor
// on one site never sees the other sites, so only hopping carries the sign of the particles on
// earlier sites, (-1)^(P_j + P'_i), which on the periodic bond (0, L-1) is the string across the
// whole chain.
//
// Rows are generated state by state in rank order; the column of a target state is the row's rank
// plus the change of the few rank-table terms the move touches (see src/basis/fock.ts). The number
// of stored entries is known in closed form before building (fockOffDiagonalCount), so every array
// is allocated once at its final size. The result is an ordinary CsrOperator in shared memory, so
// threaded products (src/operator/threaded.ts) apply to it unchanged.

import type { FockBasis, LocalSpace } from '../basis/fock.js';
import { buildLocalSpace } from '../basis/fock.js';
import { ResourceError } from '../errors/errors.js';
import { siteLocal, type Model } from '../model/model.js';
import type { VectorArena } from '../simd/arena.js';
import { CsrOperator } from './csr.js';

/** Largest number of stored entries: typed arrays are indexed by 32-bit integers here. */
const MAX_STORED = 2 ** 31 - 1;

/** The pieces of the Hamiltonian on one site's local space, shared by the count and the build. */
interface OneSiteTerms {
  /** One-site off-diagonal matrix, rows by local state: <s|T|t> at localCol/localRe/localIm[localStart[s]..]. */
  localStart: Int32Array;
  localCol: Int32Array;
  localRe: Float64Array;
  localIm: Float64Array;
  /** Diagonal energy of a local state: detuning plus (U/2) n (n - 1). */
  localDiagonal: Float64Array;
}

interface LocalTerms {
  local: LocalSpace;
  /** Per site: its one-site terms (one shared object unless disorder gives each site its own h). */
  oneSite: OneSiteTerms[];
  /** m(s) = sum_n mu_n occ_n, the dipole moment of a local state. */
  moment: Float64Array;
  /** Exchange factors per link n: raise = a+_{n+1} a_n, lower = a+_n a_{n+1}; to[n*d+s] (-1 if zero), amp. */
  raiseTo: Int32Array;
  raiseAmp: Float64Array;
  lowerTo: Int32Array;
  lowerAmp: Float64Array;
  /** Whether a diagonal array is needed at all. */
  hasDiagonal: boolean;
}

function oneSiteTerms(model: Model, local: LocalSpace, h: { re: Float64Array; im: Float64Array }): OneSiteTerms {
  const N = model.levels;
  const d = local.dim;
  const { createTo, createAmp, annihilateTo, annihilateAmp, occupation, count } = local;

  // a+_a a_b applied to t gives s: <s|T|t> = h_ab * amp. Distinct (a, b) give distinct s, so no entry repeats.
  const rows: { col: number; re: number; im: number }[][] = Array.from({ length: d }, () => []);
  for (let t = 0; t < d; t++) {
    for (let b = 0; b < N; b++) {
      const mid = annihilateTo[b * d + t];
      if (mid < 0) continue;
      for (let a = 0; a < N; a++) {
        if (a === b) continue;
        const hr = h.re[a * N + b];
        const hi = h.im[a * N + b];
        if (hr === 0 && hi === 0) continue;
        const s = createTo[a * d + mid];
        if (s < 0) continue;
        const amp = annihilateAmp[b * d + t] * createAmp[a * d + mid];
        rows[s].push({ col: t, re: hr * amp, im: hi * amp });
      }
    }
  }
  const localStart = new Int32Array(d + 1);
  for (let s = 0; s < d; s++) localStart[s + 1] = localStart[s] + rows[s].length;
  const total = localStart[d];
  const localCol = new Int32Array(total);
  const localRe = new Float64Array(total);
  const localIm = new Float64Array(total);
  rows.forEach((row, s) =>
    row.forEach((e, k) => {
      localCol[localStart[s] + k] = e.col;
      localRe[localStart[s] + k] = e.re;
      localIm[localStart[s] + k] = e.im;
    }),
  );

  const localDiagonal = new Float64Array(d);
  for (let s = 0; s < d; s++) {
    let e = 0;
    for (let n = 0; n < N; n++) e += h.re[n * N + n] * occupation[s * N + n];
    if (model.kind === 'boson') e += (model.onsite / 2) * count[s] * (count[s] - 1);
    localDiagonal[s] = e;
  }
  return { localStart, localCol, localRe, localIm, localDiagonal };
}

function localTerms(model: Model, local: LocalSpace): LocalTerms {
  const N = model.levels;
  const d = local.dim;
  const { createTo, createAmp, annihilateTo, annihilateAmp, occupation } = local;
  const shared = model.siteLocalRe ? null : oneSiteTerms(model, local, siteLocal(model, 0));
  const oneSite = Array.from(
    { length: model.sites },
    (_, i) => shared ?? oneSiteTerms(model, local, siteLocal(model, i)),
  );
  const moment = new Float64Array(d);
  for (let s = 0; s < d; s++) {
    let m = 0;
    for (let n = 0; n < N; n++) m += model.moments[n] * occupation[s * N + n];
    moment[s] = m;
  }

  const links = Math.max(0, N - 1);
  const raiseTo = new Int32Array(links * d).fill(-1);
  const raiseAmp = new Float64Array(links * d);
  const lowerTo = new Int32Array(links * d).fill(-1);
  const lowerAmp = new Float64Array(links * d);
  for (let n = 0; n < links; n++) {
    for (let s = 0; s < d; s++) {
      // raise: a+_{n+1} a_n
      let mid = annihilateTo[n * d + s];
      if (mid >= 0) {
        const t = createTo[(n + 1) * d + mid];
        if (t >= 0) {
          raiseTo[n * d + s] = t;
          raiseAmp[n * d + s] = annihilateAmp[n * d + s] * createAmp[(n + 1) * d + mid];
        }
      }
      // lower: a+_n a_{n+1}
      mid = annihilateTo[(n + 1) * d + s];
      if (mid >= 0) {
        const t = createTo[n * d + mid];
        if (t >= 0) {
          lowerTo[n * d + s] = t;
          lowerAmp[n * d + s] = annihilateAmp[(n + 1) * d + s] * createAmp[n * d + mid];
        }
      }
    }
  }

  let hasDiagonal = false;
  for (const t of oneSite) for (let s = 0; s < d; s++) if (t.localDiagonal[s] !== 0) hasDiagonal = true;
  if (model.isingPairs.count > 0) for (let s = 0; s < d; s++) if (moment[s] !== 0) hasDiagonal = true;

  return {
    local,
    oneSite,
    moment,
    raiseTo,
    raiseAmp,
    lowerTo,
    lowerAmp,
    hasDiagonal,
  };
}

function localSpaceOf(model: Model): LocalSpace {
  if (model.kind === 'pinned') throw new Error('Fock operators are for itinerant kinds');
  return buildLocalSpace(model.kind, model.levels, model.maxPerSite);
}

/** sum over local states s, t with particle counts p, q (weights wS[p], wT[q]) of ways(L-2 sites hold Np-p-q). */
function pairCompletions(
  wS: Float64Array,
  wT: Float64Array,
  ways: Float64Array,
  sites: number,
  particles: number,
): number {
  const P1 = particles + 1;
  let total = 0;
  for (let p = 0; p < wS.length && p <= particles; p++) {
    if (wS[p] === 0) continue;
    for (let q = 0; q < wT.length && p + q <= particles; q++) {
      if (wT[q] === 0) continue;
      total += wS[p] * wT[q] * ways[(sites - 2) * P1 + particles - p - q];
    }
  }
  return total;
}

function countLocalByParticles(local: LocalSpace, accept: (s: number) => boolean): Float64Array {
  let largest = 0;
  for (let s = 0; s < local.dim; s++) largest = Math.max(largest, local.count[s]);
  const w = new Float64Array(largest + 1);
  for (let s = 0; s < local.dim; s++) if (accept(s)) w[local.count[s]]++;
  return w;
}

/** ways table of the basis, computed without the basis (same recursion as src/basis/fock.ts). */
function waysFor(local: LocalSpace, sites: number, particles: number): Float64Array {
  const byParticles = countLocalByParticles(local, () => true);
  const P1 = particles + 1;
  const ways = new Float64Array((sites + 1) * P1);
  ways[0] = 1;
  for (let m = 1; m <= sites; m++)
    for (let p = 0; p <= particles; p++) {
      let w = 0;
      for (let k = 0; k < byParticles.length && k <= p; k++) w += byParticles[k] * ways[(m - 1) * P1 + p - k];
      ways[m * P1 + p] = w;
    }
  return ways;
}

/**
 * Exact number of stored off-diagonal entries, from the local tables and counts of completions of
 * the other sites: no state is visited. Each (term, move) reaches a different state, so nothing
 * merges and nothing cancels.
 */
export function fockOffDiagonalCount(model: Model): number {
  const local = localSpaceOf(model);
  return offDiagonalCount(model, localTerms(model, local));
}

function offDiagonalCount(model: Model, terms: LocalTerms): number {
  const { local } = terms;
  const L = model.sites;
  const Np = model.particleNumber;
  const P1 = Np + 1;
  const d = local.dim;
  const ways = waysFor(local, L, Np);
  let total = 0;
  for (let s = 0; s < d; s++) {
    let row = 0;
    for (const t of terms.oneSite) row += t.localStart[s + 1] - t.localStart[s];
    const rest = Np - local.count[s];
    if (row > 0 && rest >= 0) total += row * ways[(L - 1) * P1 + rest];
  }
  if (L >= 2) {
    const pairs = model.exchangePairs;
    for (let n = 0; n + 1 < model.levels; n++) {
      if (model.exchangeWeights[n] === 0) continue;
      const up = countLocalByParticles(local, (s) => terms.raiseTo[n * d + s] >= 0);
      const down = countLocalByParticles(local, (s) => terms.lowerTo[n * d + s] >= 0);
      // forward (raise at i, lower at j) and back (lower at i, raise at j) reach as many states
      const perPair = 2 * pairCompletions(up, down, ways, L, Np);
      for (let p = 0; p < pairs.count; p++) if (pairs.value[p] !== 0) total += perPair;
    }
    const bonds = model.hoppingBonds;
    for (let n = 0; n < model.levels; n++) {
      const create = countLocalByParticles(local, (s) => local.createTo[n * d + s] >= 0);
      const annihilate = countLocalByParticles(local, (s) => local.annihilateTo[n * d + s] >= 0);
      const perBond = 2 * pairCompletions(create, annihilate, ways, L, Np);
      for (let b = 0; b < bonds.count; b++) if (bonds.value[b] !== 0) total += perBond;
    }
  }
  return total;
}

export interface FockPlan {
  /** Stored entries: off-diagonal plus the diagonal when one is stored. */
  nonzeros: number;
  /** Bytes of the stored operator. */
  bytes: number;
}

/** Nonzeros and bytes of the stored operator, for `check` and the memory refusal; allocates nothing large. */
export function planFockOperator(model: Model, dim: number): FockPlan {
  const terms = localTerms(model, localSpaceOf(model));
  const stored = offDiagonalCount(model, terms) + (terms.hasDiagonal ? dim : 0);
  const valueBytes = model.isComplex ? 16 : 8;
  return { nonzeros: stored, bytes: 8 * (dim + 1) + stored * (4 + valueBytes) };
}

/** Arrays the product threads can share (src/operator/threaded.ts) without copying the matrix. */
function shared<T extends Float64Array | Int32Array>(
  length: number,
  kind: { new (buffer: SharedArrayBuffer): T; BYTES_PER_ELEMENT: number },
): T {
  const out = new kind(new SharedArrayBuffer(Math.max(1, length) * kind.BYTES_PER_ELEMENT));
  return out.length === length ? out : (out.subarray(0, length) as T);
}

/**
 * The stored Fock-space Hamiltonian as compressed rows (both triangles); when any diagonal term is
 * present every row starts with its diagonal entry. Arrays are allocated once at their final size,
 * in shared memory.
 */
/** With `arena`, the matrix is built in that arena's memory, so products run in WebAssembly. */
export function buildFockOperator(model: Model, basis: FockBasis, arena?: VectorArena | null): CsrOperator {
  if (model.kind !== basis.kind) throw new Error(`model kind ${model.kind} does not match basis kind ${basis.kind}`);
  const terms = localTerms(model, basis.local);
  const offDiagonal = offDiagonalCount(model, terms);
  const stored = offDiagonal + (terms.hasDiagonal ? basis.dim : 0);
  if (stored > MAX_STORED) {
    throw new ResourceError(
      `the Hamiltonian would store ${stored} matrix elements, more than the ${MAX_STORED} supported`,
    );
  }
  const inArena = arena
    ? {
        rowStart: arena.float64Array(basis.dim + 1),
        columns: arena.int32Array(stored),
        valuesRe: arena.float64Array(stored),
        valuesIm: model.isComplex ? arena.float64Array(stored) : null,
      }
    : null;
  const placed =
    inArena && inArena.rowStart && inArena.columns && inArena.valuesRe && (inArena.valuesIm || !model.isComplex);
  const out: FockArrays = placed
    ? {
        rowStart: inArena.rowStart as Float64Array,
        columns: inArena.columns as Int32Array,
        valuesRe: inArena.valuesRe as Float64Array,
        valuesIm: inArena.valuesIm,
        diagonal: terms.hasDiagonal,
      }
    : {
        rowStart: shared(basis.dim + 1, Float64Array),
        columns: shared(stored, Int32Array),
        valuesRe: shared(stored, Float64Array),
        valuesIm: model.isComplex ? shared(stored, Float64Array) : null,
        diagonal: terms.hasDiagonal,
      };
  out.rowStart[0] = 0;
  const written = fillRows(model, basis, terms, out);
  if (written !== stored) throw new Error(`Fock operator: wrote ${written} entries, counted ${stored}`);
  return new CsrOperator(basis.dim, model.isComplex, out.rowStart, out.columns, out.valuesRe, out.valuesIm);
}

interface FockArrays {
  rowStart: Float64Array;
  columns: Int32Array;
  valuesRe: Float64Array;
  valuesIm: Float64Array | null;
  /** Whether each row starts with its diagonal entry. */
  diagonal: boolean;
}

/** Writes every row; returns the number of entries written. */
function fillRows(model: Model, basis: FockBasis, terms: LocalTerms, out: FockArrays): number {
  const L = basis.sites;
  const N = basis.levels;
  const Np = basis.particles;
  const P1 = Np + 1;
  const d = basis.local.dim;
  const R = basis.rankTable;
  const fermion = basis.kind === 'fermion';
  const { oneSite, moment, raiseTo, raiseAmp, lowerTo, lowerAmp } = terms;
  const { createTo, createAmp, annihilateTo, annihilateAmp } = basis.local;
  const withDiagonal = out.diagonal;
  const rowStart = out.rowStart;
  const columns = out.columns;
  const valuesRe = out.valuesRe;
  const valuesIm = out.valuesIm;

  const isingI = model.isingPairs.i;
  const isingJ = model.isingPairs.j;
  const isingW = model.isingPairs.value;
  const nIsing = model.isingPairs.count;
  // Exchange: one entry per (pair, link) with amplitude V_ij c_n.
  const exI: number[] = [];
  const exJ: number[] = [];
  const exLink: number[] = [];
  const exAmp: number[] = [];
  for (let p = 0; p < model.exchangePairs.count; p++) {
    for (let n = 0; n + 1 < N; n++) {
      const a = model.exchangePairs.value[p] * model.exchangeWeights[n];
      if (a === 0) continue;
      exI.push(model.exchangePairs.i[p]);
      exJ.push(model.exchangePairs.j[p]);
      exLink.push(n);
      exAmp.push(a);
    }
  }
  const nExchange = exAmp.length;
  const bondI = model.hoppingBonds.i;
  const bondJ = model.hoppingBonds.j;
  const bondT = model.hoppingBonds.value;
  const nBonds = model.hoppingBonds.count;

  // rankHere[i] = R[i][P_i][s_i]; shiftUp[i] / shiftDown[i]: the same term with P_i + 1 / P_i - 1,
  // the change a particle moving across site i's prefix makes. Cumulative sums of the differences
  // give the change over any run of sites in O(1).
  const rankHere = new Float64Array(L);
  const upChange = new Float64Array(L + 1);
  const downChange = new Float64Array(L + 1);

  const cursor = basis.cursor();
  const state = cursor.state;
  const prefix = cursor.prefix;
  // Entries are written inline (no helper closure: this loop runs once per stored element). The
  // arrays start zeroed, so only the complex one-site entries write an imaginary part.
  let k = 0;

  for (let row = 0; row < basis.dim; row++) {
    if (row > 0) cursor.next();
    let upAcc = 0;
    let downAcc = 0;
    for (let i = 0; i < L; i++) {
      const s = state[i];
      const P = prefix[i];
      const base = (i * P1 + P) * d;
      rankHere[i] = R[base + s];
      upChange[i] = upAcc;
      downChange[i] = downAcc;
      if (P + 1 <= Np) upAcc += R[base + d + s] - R[base + s];
      if (P >= 1) downAcc += R[base - d + s] - R[base + s];
    }
    upChange[L] = upAcc;
    downChange[L] = downAcc;

    if (withDiagonal) {
      let e = 0;
      for (let i = 0; i < L; i++) e += oneSite[i].localDiagonal[state[i]];
      for (let p = 0; p < nIsing; p++) e += isingW[p] * moment[state[isingI[p]]] * moment[state[isingJ[p]]];
      columns[k] = row;
      valuesRe[k++] = e;
    }

    // Synthetic tunnelling: one site changes, its prefix does not.
    for (let i = 0; i < L; i++) {
      const s = state[i];
      const base = (i * P1 + prefix[i]) * d;
      const shift = row - rankHere[i];
      const { localStart, localCol, localRe, localIm } = oneSite[i];
      for (let e = localStart[s]; e < localStart[s + 1]; e++) {
        columns[k] = shift + R[base + localCol[e]];
        if (valuesIm !== null) valuesIm[k] = localIm[e];
        valuesRe[k++] = localRe[e];
      }
    }

    // Exchange: both factors keep their site's particle count, so no prefix changes.
    for (let x = 0; x < nExchange; x++) {
      const i = exI[x];
      const j = exJ[x];
      const n = exLink[x];
      const si = state[i];
      const sj = state[j];
      const baseI = (i * P1 + prefix[i]) * d;
      const baseJ = (j * P1 + prefix[j]) * d;
      const rest = row - rankHere[i] - rankHere[j];
      let ti = raiseTo[n * d + si];
      let tj = lowerTo[n * d + sj];
      if (ti >= 0 && tj >= 0) {
        columns[k] = rest + R[baseI + ti] + R[baseJ + tj];
        valuesRe[k++] = exAmp[x] * raiseAmp[n * d + si] * lowerAmp[n * d + sj];
      }
      ti = lowerTo[n * d + si];
      tj = raiseTo[n * d + sj];
      if (ti >= 0 && tj >= 0) {
        columns[k] = rest + R[baseI + ti] + R[baseJ + tj];
        valuesRe[k++] = exAmp[x] * lowerAmp[n * d + si] * raiseAmp[n * d + sj];
      }
    }

    // Hopping on bond (i, j), i < j, each level, both directions.
    for (let b = 0; b < nBonds; b++) {
      const i = bondI[b];
      const j = bondJ[b];
      const t = bondT[b];
      const si = state[i];
      const sj = state[j];
      const Pi = prefix[i];
      const Pj = prefix[j];
      const rest = row - rankHere[i] - rankHere[j];
      for (let n = 0; n < N; n++) {
        // j -> i: a+_{i,n} a_{j,n}. Sites i+1..j see one more particle before them.
        let ti = createTo[n * d + si];
        let tj = annihilateTo[n * d + sj];
        if (ti >= 0 && tj >= 0) {
          // Fermions: (-1)^(P_j) from a_{j,n}, then (-1)^(P_i) from a+_{i,n} (site i precedes j).
          const sign = fermion && (Pi + Pj) % 2 === 1 ? -1 : 1;
          const col =
            rest + R[(i * P1 + Pi) * d + ti] + R[(j * P1 + Pj + 1) * d + tj] + (upChange[j] - upChange[i + 1]);
          columns[k] = col;
          valuesRe[k++] = -t * sign * createAmp[n * d + si] * annihilateAmp[n * d + sj];
        }
        // i -> j: a+_{j,n} a_{i,n}. Sites i+1..j see one particle fewer before them.
        ti = annihilateTo[n * d + si];
        tj = createTo[n * d + sj];
        if (ti >= 0 && tj >= 0) {
          const sign = fermion && (Pi + Pj - 1) % 2 !== 0 ? -1 : 1;
          const col =
            rest + R[(i * P1 + Pi) * d + ti] + R[(j * P1 + Pj - 1) * d + tj] + (downChange[j] - downChange[i + 1]);
          columns[k] = col;
          valuesRe[k++] = -t * sign * annihilateAmp[n * d + si] * createAmp[n * d + sj];
        }
      }
    }
    rowStart[row + 1] = k;
  }
  return k;
}
