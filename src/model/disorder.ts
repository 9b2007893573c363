// A disorder realization's noise on the couplings (issue 20), drawn from the counter-based
// generator of src/spec/disorder.ts. Every entry reads the draw of a fixed index (docs/model.md,
// "Disorder"), so the values depend on (seed, realization) and the spec only.
//
//   term        correlation  draw index k
//   ----------  -----------  -----------------------------------------------
//   tunnelling  common       0
//   phase       per_site     a (the site's lattice index, vacancies counted)
//               per_link     a * links + l
//   detuning    common       0
//               per_site     a
//               per_level    a * levels + n
//   exchange    common       0
//               per_pair     pairIndex(a, b) of the lattice indices a < b over every lattice site
//
// "relative": x (1 + w g_k); "absolute": x + w g_k.

import type { Spec } from '../spec/specTypes.js';
import { disorderOf, gaussian, STREAMS, streamKey, type NoiseSpec, type NoiseTerm } from '../spec/disorder.js';
import { latticeOf } from '../spec/lattice.js';
import { pairIndex, type Geometry, type PairList } from './lattice.js';

/** The values a realization drew, as its record keeps them. */
export interface RealizedDisorder {
  realization: number;
  seed: number;
  /** Lattice indices drawn empty (pinned kinds: removed; itinerant kinds: the sites stay). */
  empty: number[];
  /** Particles of this realization. */
  particles: number;
  /** Per model site, J per link; null without noise on tunnelling, phase or detuning. */
  tunnelling: number[][] | null;
  /** Per model site, phase per link (radians). */
  phase: number[][] | null;
  /** Per model site, detuning per level. */
  detuning: number[][] | null;
  /** [i, j, V_ij] per exchange pair (model sites), null without exchange noise. */
  exchange: [number, number, number][] | null;
}

function perturb(value: number, noise: NoiseSpec, g: number): number {
  return noise.mode === 'relative' ? value * (1 + noise.width * g) : value + noise.width * g;
}

export function realizeDisorder(spec: Spec, geometry: Geometry, exchangePairs: PairList): RealizedDisorder {
  const disorder = disorderOf(spec);
  if (!disorder) throw new Error('realizeDisorder needs a [disorder] section');
  const r = disorder.realization ?? 0;
  const noise = disorder.noise;
  const L = geometry.sites;
  const latticeSites = latticeOf(spec)?.latticeSites ?? spec.chain.sites;
  const draw = (term: NoiseTerm) => {
    const key = streamKey(disorder.seed, r, STREAMS[term]);
    const cache = new Map<number, number>();
    return (k: number): number => {
      let g = cache.get(k);
      if (g === undefined) {
        g = gaussian(key, k);
        cache.set(k, g);
      }
      return g;
    };
  };
  /** Per model site, per slot (link or level): the clean values with the term's noise. */
  const perSite = (term: 'tunnelling' | 'phase' | 'detuning', clean: readonly number[]): number[][] => {
    const spec_ = noise[term];
    const g = spec_ ? draw(term) : null;
    const slots = clean.length;
    return Array.from({ length: L }, (_, i) => {
      const a = geometry.latticeIndex[i];
      return clean.map((x, l) => {
        if (!spec_ || !g) return x;
        const k = spec_.correlation === 'common' ? 0 : spec_.correlation === 'per_site' ? a : a * slots + l;
        return perturb(x, spec_, g(k));
      });
    });
  };
  const oneBody = noise.tunnelling || noise.phase || noise.detuning;
  let exchange: RealizedDisorder['exchange'] = null;
  const exNoise = noise.exchange;
  if (exNoise) {
    const g = draw('exchange');
    exchange = [];
    for (let p = 0; p < exchangePairs.count; p++) {
      const i = exchangePairs.i[p];
      const j = exchangePairs.j[p];
      const a = Math.min(geometry.latticeIndex[i], geometry.latticeIndex[j]);
      const b = Math.max(geometry.latticeIndex[i], geometry.latticeIndex[j]);
      const k = exNoise.correlation === 'common' ? 0 : pairIndex(a, b, latticeSites);
      exchange.push([i, j, perturb(exchangePairs.value[p], exNoise, g(k))]);
    }
  }
  return {
    realization: r,
    seed: disorder.seed,
    empty: disorder.filled?.empty ?? [],
    particles: spec.particles.number,
    tunnelling: oneBody ? perSite('tunnelling', spec.levels.tunnelling) : null,
    phase: oneBody ? perSite('phase', spec.levels.phase) : null,
    detuning: oneBody ? perSite('detuning', spec.levels.detuning) : null,
    exchange,
  };
}
