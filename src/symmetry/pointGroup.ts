// Site permutations beyond the translations (issue 19): the point-group operations of a lattice
// (mirrors and rotations found from the site positions) and the automorphisms of the coupling data
// of any array (found by a capped backtracking search), reduced to an abelian group given by
// commuting generators, each of which the caller has checked to commute with H.
//
// Whether a generator commutes with H is decided by the caller's check on matrix elements
// (`commutes`), never assumed from the geometry: a tilted field keeps some mirrors and kills others.

import type { Geometry, PairList } from '../model/lattice.js';

/** The lattice translations of a geometry off a chain: per periodic direction its order and its site permutation. */
export interface TranslationGroup {
  sizes: number[];
  /** Site i -> generators[d][i] under one step along the d-th periodic direction. */
  generators: Int32Array[];
}

/** An abelian group of site permutations, the direct product of the cyclic groups of its generators. */
export interface PointGroup {
  kind: 'point_group' | 'automorphism';
  /** Label keys of the generators (`x`, `C4`, `a1`...). */
  names: string[];
  orders: number[];
  /** Site i -> generators[g][i]. */
  generators: Int32Array[];
  /** With lattice translations: conjugates[g][d] is the translation code j of g T_d g^-1 (first direction fastest). */
  conjugates: number[][] | null;
  /** How the group was found, for `check`. */
  detail: string;
}

/** One operation that may join the group. */
export interface PointCandidate {
  name: string;
  order: number;
  to: Int32Array;
}

const rotation = (degrees: number): number[] => {
  const c = Math.cos((degrees * Math.PI) / 180);
  const s = Math.sin((degrees * Math.PI) / 180);
  return [c, -s, 0, s, c, 0, 0, 0, 1];
};

/**
 * The orthogonal maps tried on lattices, about the centroid of the sites (or, on a periodic
 * lattice where that fails, about site 0): mirrors x -> -x, y -> -y, z -> -z, the diagonal mirrors
 * x <-> y and x <-> -y, and the rotations about z by 180, 90, 120 and 60 degrees.
 */
const OPERATIONS: { name: string; order: number; matrix: number[] }[] = [
  { name: 'x', order: 2, matrix: [-1, 0, 0, 0, 1, 0, 0, 0, 1] },
  { name: 'y', order: 2, matrix: [1, 0, 0, 0, -1, 0, 0, 0, 1] },
  { name: 'z', order: 2, matrix: [1, 0, 0, 0, 1, 0, 0, 0, -1] },
  { name: 'diagonal', order: 2, matrix: [0, 1, 0, 1, 0, 0, 0, 0, 1] },
  { name: 'antidiagonal', order: 2, matrix: [0, -1, 0, -1, 0, 0, 0, 0, 1] },
  { name: 'C2', order: 2, matrix: rotation(180) },
  { name: 'C4', order: 4, matrix: rotation(90) },
  { name: 'C3', order: 3, matrix: rotation(120) },
  { name: 'C6', order: 6, matrix: rotation(60) },
];

const GRID = 1e6;

/** The lattice operations of OPERATIONS that map the sites onto themselves (up to whole periodic boxes), not the identity. */
export function latticeOperations(geometry: Geometry): PointCandidate[] {
  const L = geometry.sites;
  const p = geometry.positions;
  let shifts: number[][] = [[0, 0, 0]];
  for (const box of geometry.boxes) {
    const next: number[][] = [];
    for (const s of shifts) for (const n of [0, -1, 1]) next.push(s.map((x, c) => x + n * box[c]));
    shifts = next;
  }
  const key = (x: number, y: number, z: number) =>
    `${Math.round(x * GRID)},${Math.round(y * GRID)},${Math.round(z * GRID)}`;
  const siteAt = new Map<string, number>();
  for (let j = 0; j < L; j++)
    for (const s of shifts) siteAt.set(key(p[3 * j] + s[0], p[3 * j + 1] + s[1], p[3 * j + 2] + s[2]), j);
  const centroid = [0, 1, 2].map((c) => {
    let sum = 0;
    for (let i = 0; i < L; i++) sum += p[3 * i + c];
    return sum / L;
  });
  const centres = geometry.boxes.length > 0 ? [centroid, [p[0], p[1], p[2]]] : [centroid];
  const out: PointCandidate[] = [];
  for (const op of OPERATIONS) {
    for (const c of centres) {
      const to = new Int32Array(L);
      let ok = true;
      for (let i = 0; i < L && ok; i++) {
        const d = [0, 1, 2].map((k) => p[3 * i + k] - c[k]);
        const m = op.matrix;
        const q = [0, 1, 2].map((r) => c[r] + m[3 * r] * d[0] + m[3 * r + 1] * d[1] + m[3 * r + 2] * d[2]);
        const j = siteAt.get(key(q[0], q[1], q[2]));
        if (j === undefined) ok = false;
        else to[i] = j;
      }
      if (ok && isPermutation(to) && !isIdentity(to)) {
        out.push({ name: op.name, order: op.order, to });
        break;
      }
    }
  }
  return out;
}

function isPermutation(to: Int32Array): boolean {
  const seen = new Uint8Array(to.length);
  for (const j of to) {
    if (seen[j]) return false;
    seen[j] = 1;
  }
  return true;
}

function isIdentity(to: ArrayLike<number>): boolean {
  for (let i = 0; i < to.length; i++) if (to[i] !== i) return false;
  return true;
}

/** a after b: site i -> a[b[i]]. */
export function compose(a: ArrayLike<number>, b: ArrayLike<number>): Int32Array {
  return Int32Array.from({ length: b.length }, (_, i) => a[b[i]]);
}

function inverse(a: ArrayLike<number>): Int32Array {
  const out = new Int32Array(a.length);
  for (let i = 0; i < a.length; i++) out[a[i]] = i;
  return out;
}

const permKey = (a: ArrayLike<number>): string => Array.prototype.join.call(a, ',');

function commuteAsPermutations(a: Int32Array, b: Int32Array): boolean {
  return permKey(compose(a, b)) === permKey(compose(b, a));
}

/** Order of a permutation: the lcm of its cycle lengths. */
export function permutationOrder(to: ArrayLike<number>): number {
  const seen = new Uint8Array(to.length);
  let order = 1;
  const gcd = (a: number, b: number): number => (b === 0 ? a : gcd(b, a % b));
  for (let s = 0; s < to.length; s++) {
    if (seen[s]) continue;
    let n = 0;
    for (let i = s; !seen[i]; i = to[i]) {
      seen[i] = 1;
      n++;
    }
    order = (order / gcd(order, n)) * n;
  }
  return order;
}

/** Every element of the group generated by commuting generators, code e = e1 + o1 (e2 + o2 ...): its site permutation. */
export function groupElements(generators: Int32Array[], orders: number[], sites: number): Int32Array[] {
  let elements: Int32Array[] = [Int32Array.from({ length: sites }, (_, i) => i)];
  generators.forEach((g, n) => {
    const next: Int32Array[] = [];
    // first generator fastest: for each power of g (outer), every element so far (inner)
    let power: Int32Array = Int32Array.from({ length: sites }, (_, i) => i);
    for (let e = 0; e < orders[n]; e++) {
      for (const x of elements) next.push(compose(power, x));
      power = compose(g, power);
    }
    elements = next;
  });
  return elements;
}

/** Translation permutations by code j = j1 + L1 (j2 + ...), and a lookup from permutation to code. */
function translationCodes(t: TranslationGroup, sites: number): Map<string, number> {
  const codes = new Map<string, number>();
  groupElements(t.generators, t.sizes, sites).forEach((to, j) => codes.set(permKey(to), j));
  return codes;
}

/** Translation codes of g T_d g^-1 per direction, or null when g does not carry translations to translations. */
function conjugatesOf(g: Int32Array, t: TranslationGroup, codes: Map<string, number>): number[] | null {
  const gi = inverse(g);
  const out: number[] = [];
  for (const step of t.generators) {
    const code = codes.get(permKey(compose(g, compose(step, gi))));
    if (code === undefined) return null;
    out.push(code);
  }
  return out;
}

/** Phase of the translation T^j in momentum m, as an integer modulo the group order Lt (chi = exp(2 pi i phase / Lt)). */
export function translationPhase(j: number, m: readonly number[], sizes: readonly number[]): number {
  const Lt = sizes.reduce((a, b) => a * b, 1);
  let rest = j;
  let phase = 0;
  sizes.forEach((L, d) => {
    const jd = rest % L;
    rest = Math.floor(rest / L);
    phase += m[d] * jd * (Lt / L);
  });
  return phase % Lt;
}

/** Whether generator g leaves momentum m unchanged (g k = k): chi_k(g T_d g^-1) = chi_k(T_d) for every d. */
export function fixesMomentum(group: PointGroup, g: number, m: readonly number[], sizes: readonly number[]): boolean {
  const conj = group.conjugates;
  if (!conj) return true;
  let unit = 1; // the code of T_d
  return sizes.every((L, d) => {
    const same = translationPhase(conj[g][d], m, sizes) === translationPhase(unit, m, sizes);
    unit *= L;
    return same;
  });
}

/** Every momentum of translations of these sizes, first direction fastest. */
export function allMomenta(sizes: readonly number[]): number[][] {
  const count = sizes.reduce((a, b) => a * b, 1);
  return Array.from({ length: count }, (_, code) => {
    let rest = code;
    return sizes.map((size) => {
      const x = rest % size;
      rest = Math.floor(rest / size);
      return x;
    });
  });
}

/**
 * The abelian group of lattice operations used: among the candidates that commute with H (and,
 * with translations, carry them to translations), every set of at most three pairwise commuting
 * ones generating a direct product of their cyclic groups; the one that splits the most states is
 * kept: the largest sum over momenta of the order of the subgroup used at that momentum (the
 * generators fixing it), then real characters, then the order of OPERATIONS.
 */
export function choosePointGroup(
  candidates: PointCandidate[],
  commutes: (to: Int32Array) => boolean,
  translations: TranslationGroup | null,
  sites: number,
): PointGroup | string {
  if (candidates.length === 0) return 'no mirror or rotation of the lattice maps its sites onto themselves';
  const codes = translations ? translationCodes(translations, sites) : null;
  const usable: (PointCandidate & { conj: number[] | null })[] = [];
  const refused: string[] = [];
  for (const c of candidates) {
    const conj = translations && codes ? conjugatesOf(c.to, translations, codes) : null;
    if (translations && !conj) continue;
    if (!commutes(c.to)) {
      refused.push(c.name);
      continue;
    }
    usable.push({ ...c, conj });
  }
  if (usable.length === 0)
    return `no lattice operation commutes with H (${refused.join(', ')} do not: the field or the spacings break them)`;
  const momenta = translations ? allMomenta(translations.sizes) : [[]];
  let best: { set: number[]; score: number; real: boolean } | null = null;
  const sets: number[][] = [];
  for (let a = 0; a < usable.length; a++) {
    sets.push([a]);
    for (let b = a + 1; b < usable.length; b++) {
      sets.push([a, b]);
      for (let c = b + 1; c < usable.length; c++) sets.push([a, b, c]);
    }
  }
  for (const set of sets) {
    const gens = set.map((i) => usable[i]);
    if (!gens.every((g, i) => gens.every((h, k) => k <= i || commuteAsPermutations(g.to, h.to)))) continue;
    const orders = gens.map((g) => g.order);
    const elements = groupElements(
      gens.map((g) => g.to),
      orders,
      sites,
    );
    if (new Set(elements.map(permKey)).size !== elements.length) continue; // not a direct product
    const trial: PointGroup = {
      kind: 'point_group',
      names: [],
      orders,
      generators: [],
      conjugates: translations ? gens.map((g) => g.conj as number[]) : null,
      detail: '',
    };
    let score = 0;
    for (const m of momenta) {
      let size = 1;
      gens.forEach((g, i) => {
        if (!translations || fixesMomentum(trial, i, m, translations.sizes)) size *= g.order;
      });
      score += size;
    }
    const real = orders.every((o) => o === 2);
    if (!best || score > best.score || (score === best.score && real && !best.real)) best = { set, score, real };
  }
  const chosen = (best as { set: number[] }).set.map((i) => usable[i]);
  const others = usable.filter((u) => !chosen.includes(u)).map((u) => u.name);
  return {
    kind: 'point_group',
    names: chosen.map((g) => g.name),
    orders: chosen.map((g) => g.order),
    generators: chosen.map((g) => g.to),
    conjugates: translations ? chosen.map((g) => g.conj as number[]) : null,
    detail:
      `${chosen.map((g) => g.name).join(', ')} commute with H and with each other` +
      (others.length > 0 ? `; also commuting but not used: ${others.join(', ')}` : '') +
      (refused.length > 0 ? `; broken: ${refused.join(', ')}` : ''),
  };
}

/** At most this many automorphisms are collected, and this many search steps taken. */
export const AUTOMORPHISM_CAP = 20000;
export const AUTOMORPHISM_STEPS = 2_000_000;

/**
 * The site permutations that preserve every coupling (each pair's values in every pair list,
 * compared to 12 significant digits), by backtracking: site i tries only the sites of the same
 * row class (the multiset of its coupling values) whose couplings to the sites already placed
 * match. The search stops after AUTOMORPHISM_CAP automorphisms or AUTOMORPHISM_STEPS steps.
 */
export function couplingAutomorphisms(sites: number, lists: PairList[]): { found: Int32Array[]; capped: boolean } {
  const L = sites;
  const values: string[][] = Array.from({ length: L * L }, () => []);
  lists.forEach((list, n) => {
    for (let k = 0; k < list.count; k++) {
      const v = `${n}:${list.value[k].toPrecision(12)}`;
      values[list.i[k] * L + list.j[k]].push(v);
      values[list.j[k] * L + list.i[k]].push(v);
    }
  });
  const ids = new Map<string, number>();
  const C = new Int32Array(L * L);
  values.forEach((v, k) => {
    const key = v.sort().join('|');
    let id = ids.get(key);
    if (id === undefined) {
      id = ids.size;
      ids.set(key, id);
    }
    C[k] = id;
  });
  const rowClass: string[] = [];
  for (let i = 0; i < L; i++)
    rowClass.push(
      Array.from(C.subarray(i * L, i * L + L))
        .filter((_, j) => j !== i)
        .sort((a, b) => a - b)
        .join(','),
    );
  const found: Int32Array[] = [];
  const to = new Int32Array(L).fill(-1);
  const used = new Uint8Array(L);
  let steps = 0;
  let capped = false;
  const place = (i: number): void => {
    if (capped) return;
    if (i === L) {
      found.push(to.slice());
      if (found.length >= AUTOMORPHISM_CAP) capped = true;
      return;
    }
    for (let j = 0; j < L; j++) {
      if (used[j] || rowClass[j] !== rowClass[i]) continue;
      if (++steps > AUTOMORPHISM_STEPS) {
        capped = true;
        return;
      }
      let ok = true;
      for (let k = 0; k < i && ok; k++) if (C[i * L + k] !== C[j * L + to[k]]) ok = false;
      if (!ok) continue;
      to[i] = j;
      used[j] = 1;
      place(i + 1);
      used[j] = 0;
      to[i] = -1;
      if (capped) return;
    }
  };
  place(0);
  return { found, capped };
}

/**
 * An abelian subgroup of the automorphisms: an element of the largest order (the first found),
 * then every involution that commutes with the generators so far and is not yet in their group,
 * each joining as a direct factor. Generators that do not commute with H are left out.
 */
export function chooseAutomorphisms(
  found: Int32Array[],
  capped: boolean,
  commutes: (to: Int32Array) => boolean,
  sites: number,
): PointGroup | string {
  const note = capped ? ` (search capped at ${AUTOMORPHISM_CAP} automorphisms or ${AUTOMORPHISM_STEPS} steps)` : '';
  const nontrivial = found.filter((g) => !isIdentity(g));
  if (nontrivial.length === 0) return `no site permutation but the identity preserves the couplings${note}`;
  const orders = nontrivial.map(permutationOrder);
  const ranked = nontrivial.map((g, n) => ({ g, order: orders[n] })).sort((a, b) => b.order - a.order);
  const generators: Int32Array[] = [];
  const genOrders: number[] = [];
  let members = new Set<string>();
  const refused: number[] = [];
  const tryAdd = (g: Int32Array, order: number) => {
    if (members.has(permKey(g))) return;
    if (!generators.every((h) => commuteAsPermutations(g, h))) return;
    if (!commutes(g)) {
      refused.push(order);
      return;
    }
    generators.push(g);
    genOrders.push(order);
    members = new Set(groupElements(generators, genOrders, sites).map(permKey));
  };
  for (const { g, order } of ranked) {
    if (generators.length === 0) tryAdd(g, order);
    else if (order === 2) tryAdd(g, order);
  }
  if (generators.length === 0) return `no automorphism of the couplings commutes with H${note}`;
  const names = generators.map((_, n) => `a${n + 1}`);
  // the site map of each generator, for arrays small enough to read it
  const describeGen = (g: Int32Array, n: number) =>
    `${names[n]} (order ${genOrders[n]}` +
    (sites <= 32 ? `: ${Array.from(g, (j, i) => `${i}->${j}`).join(' ')})` : ')');
  return {
    kind: 'automorphism',
    names,
    orders: genOrders,
    generators,
    conjugates: null,
    detail: `${found.length} automorphisms of the couplings${note}; used: ${generators.map(describeGen).join(', ')}`,
  };
}
