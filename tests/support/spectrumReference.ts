// Shared by the spectrum tests: the dense eigenpairs of a Hermitian matrix (ml-matrix), random
// small specs of every kind with a probe, and the probe as a dense matrix written from
// docs/model.md on the plain build's occupation states (tests/support/occupationReference.ts).

import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { applyProduct, buildDense, type Kind, type ModelDescription } from './occupationReference.js';
import { rng } from './random.js';

type Raw = Record<string, any>;

/** Eigenvalues (ascending) and eigenvectors (columns) of a Hermitian matrix through its real embedding. */
export function embeddedEigen(re: number[][], im: number[][]): { values: number[]; vectors: number[][] } {
  const D = re.length;
  const m = new Matrix(2 * D, 2 * D);
  for (let r = 0; r < D; r++)
    for (let c = 0; c < D; c++) {
      m.set(r, c, re[r][c]);
      m.set(r + D, c + D, re[r][c]);
      m.set(r, c + D, -im[r][c]);
      m.set(r + D, c, im[r][c]);
    }
  const evd = new EigenvalueDecomposition(m, { assumeSymmetric: true });
  const order = evd.realEigenvalues.map((e, k) => [e, k] as const).sort((a, b) => a[0] - b[0]);
  return { values: order.map(([e]) => e), vectors: order.map(([, k]) => evd.eigenvectorMatrix.getColumn(k)) };
}

export const lorentzian = (x: number, eta: number) => eta / Math.PI / (x * x + eta * eta);

/** Lines within `within` of each other as one, weights added. */
export function mergeLines(lines: { position: number; weight: number }[], within: number) {
  const sorted = [...lines].sort((a, b) => a.position - b.position);
  const out: { position: number; weight: number }[] = [];
  for (const l of sorted) {
    const last = out[out.length - 1];
    if (last && l.position - last.position <= within) last.weight += l.weight;
    else out.push({ ...l });
  }
  return out;
}

export interface RandomCase {
  raw: Raw;
  model: ModelDescription;
  probe: Raw;
}

export function randomCase(seed: number, kind: Kind): RandomCase | null {
  const r = rng(seed);
  const pick = <T>(xs: readonly T[]): T => xs[Math.floor(r() * xs.length)];
  const u = (lo: number, hi: number) => lo + (hi - lo) * r();
  // Degenerate cases too: free molecules (H without pair terms), and rings threaded by flux pi,
  // whose molecules each have a doubly degenerate ground level.
  const category = pick(['generic', 'generic', 'free', 'ringflux'] as const);
  const N = category === 'ringflux' ? 3 : pick([2, 3]);
  const L = kind === 'pinned' ? pick([2, 3, 4]) : pick([2, 3]);
  const particles = kind === 'pinned' ? L : 1 + Math.floor(r() * L);
  const ring = category === 'ringflux';
  const periodic = L >= 3 && r() < 0.5;
  const links = ring ? N : N - 1;
  const generic = category === 'generic';
  const tunnelling = Array.from({ length: links }, () => (category === 'ringflux' ? 1 : u(0.3, 1.2)));
  const phase = Array.from({ length: links }, () =>
    category === 'ringflux' ? Math.PI / 3 : r() < 0.5 ? 0 : u(-Math.PI, Math.PI),
  );
  const detuning = Array.from({ length: N }, () => (generic ? u(-0.5, 0.5) : 0));
  const exchange = generic ? u(-1.5, 1.5) : 0;
  const ising = generic ? u(-1, 1) : 0;
  const moments = Array.from({ length: N }, () => (generic ? u(-1, 1) : 0));
  const hopping = kind === 'pinned' || !generic ? 0 : u(-1, 1);
  const maxPerSite = kind === 'boson' ? 2 : 1;
  const onsite = kind === 'boson' && generic ? u(0, 2) : 0;
  const model: ModelDescription = {
    sites: L,
    periodic,
    levels: N,
    ring,
    tunnelling,
    phase,
    detuning,
    exchange,
    exchangeRange: 'nearest',
    exchangeCutoff: null,
    weights: new Array<number>(N - 1).fill(1),
    ising,
    moments,
    isingRange: 'nearest',
    isingCutoff: null,
    kind,
    particles,
    hopping,
    maxPerSite,
    onsite,
  };
  const probeKind = pick(['drive', 'level', 'coordinate'] as const);
  const probe: Raw =
    probeKind === 'drive'
      ? { link: Math.floor(r() * links), phase: r() < 0.5 ? 0 : u(-3, 3) }
      : probeKind === 'level'
        ? { level: Math.floor(r() * N) }
        : { coordinate: true };
  if (r() < 0.5) probe.momentum = Math.floor(r() * L);
  if (r() < 0.3) probe.sites = [0, L - 1].filter((x, k, a) => a.indexOf(x) === k);
  const particlesSpec: Raw = { kind };
  if (kind !== 'pinned') {
    particlesSpec.number = particles;
    particlesSpec.hopping = hopping;
    if (kind === 'boson') {
      particlesSpec.max_per_site = maxPerSite;
      particlesSpec.onsite = onsite;
    }
  }
  const raw: Raw = {
    chain: { sites: L, boundary: periodic ? 'periodic' : 'open' },
    levels: { count: N, boundary: ring ? 'ring' : 'open', tunnelling, phase, detuning },
    exchange: { strength: exchange },
    ising: { strength: ising, moments },
    particles: particlesSpec,
    solve: { tolerance: 1e-11, symmetries: pick(['auto', 'none']) },
    spectrum: {
      probe,
      frequencies: { from: -0.5, to: 8, steps: 171 },
      broadening: 0.08,
      lines: 1000,
    },
  };
  const dim = buildDense(model).dim;
  return dim >= 2 && dim <= 120 ? { raw, model, probe } : null;
}

/** The probe as a dense matrix on the reference's occupation states, written from docs/model.md. */
export function denseProbe(
  c: RandomCase,
  configs: Int32Array[],
  phaseOf = (i: number) => (2 * Math.PI * ((c.probe.momentum as number | undefined) ?? 0) * i) / c.model.sites,
): { re: number[][]; im: number[][] } {
  const m = c.model;
  const N = m.levels;
  const D = configs.length;
  const index = new Map(configs.map((cfg, k) => [cfg.join(','), k]));
  const re = Array.from({ length: D }, () => new Array<number>(D).fill(0));
  const im = Array.from({ length: D }, () => new Array<number>(D).fill(0));
  const sites: number[] = c.probe.sites ?? Array.from({ length: m.sites }, (_, i) => i);
  const mode = (i: number, n: number) => i * N + n;
  configs.forEach((cfg, s) => {
    for (const i of sites) {
      const cr = Math.cos(phaseOf(i));
      const ci = Math.sin(phaseOf(i));
      const terms: [number, number, [number, boolean][]][] = [];
      if (c.probe.link !== undefined) {
        const l = c.probe.link as number;
        const ph = (c.probe.phase as number | undefined) ?? 0;
        const up = (l + 1) % N;
        terms.push([
          Math.cos(ph),
          Math.sin(ph),
          [
            [mode(i, up), true],
            [mode(i, l), false],
          ],
        ]);
        terms.push([
          Math.cos(ph),
          -Math.sin(ph),
          [
            [mode(i, l), true],
            [mode(i, up), false],
          ],
        ]);
      } else
        for (let n = 0; n < N; n++) {
          const f = c.probe.level !== undefined ? (n === c.probe.level ? 1 : 0) : n;
          if (f !== 0)
            terms.push([
              f,
              0,
              [
                [mode(i, n), true],
                [mode(i, n), false],
              ],
            ]);
        }
      for (const [ar, ai, ops] of terms) {
        const hit = applyProduct(m, cfg, ops);
        if (!hit) continue;
        const t = index.get(hit.occ.join(','));
        if (t === undefined) continue;
        // c_i times the term's amplitude
        re[t][s] += (cr * ar - ci * ai) * hit.coef;
        im[t][s] += (cr * ai + ci * ar) * hit.coef;
      }
    }
  });
  return { re, im };
}
