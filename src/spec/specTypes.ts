// The validated spec: what validateSpec (src/spec/spec.ts) returns. A module of its own so the
// optional sections' validators (src/spec/sections.ts) can name it without importing spec.ts,
// which imports them.

export type ParticleKind = 'pinned' | 'hardcore' | 'boson' | 'fermion';
export type ChainBoundary = 'open' | 'periodic';
export type LevelBoundary = 'open' | 'ring';
export type InteractionRange = 'nearest' | 'dipolar';
export type ExchangeWeightsName = 'uniform' | 'rotor' | 'list';
export type SymmetryChoice = 'translation' | 'reflection' | 'level_flip' | 'charge' | 'point_group' | 'automorphism';

export interface Spec {
  chain: { sites: number; boundary: ChainBoundary };
  levels: {
    count: number;
    boundary: LevelBoundary;
    /** One per link: length count-1 (open) or count (ring). Link l joins level l to l+1; a ring's last link joins count-1 to 0. */
    tunnelling: number[];
    /** Peierls phase per link, radians; same length as tunnelling. */
    phase: number[];
    /** One per level, length count. */
    detuning: number[];
  };
  exchange: {
    strength: number;
    range: InteractionRange;
    /** Largest separation (lattice spacings) still coupled; Infinity when absent. */
    cutoff: number;
    /** c_n per open link, length count-1 (exchange never crosses a ring's closing link). */
    weights: number[];
    weightsName: ExchangeWeightsName;
  };
  ising: { strength: number; moments: number[]; range: InteractionRange; cutoff: number };
  particles: { kind: ParticleKind; number: number; maxPerSite: number; hopping: number; onsite: number };
  solve: {
    states: number;
    tolerance: number;
    maxMatvecs: number | null;
    krylov: number | null;
    seed: number;
    entanglement: 'none' | 'auto' | 'half' | 'all' | number[];
    /**
     * Subsystems given as site lists (model site indices, any geometry): `solve.entanglement` as a
     * list of lists. Empty otherwise; then `entanglement` says which chain cuts (if any).
     */
    entanglementSites: number[][];
    /** Symmetries to use: all detected ("auto"), none, or the named ones (each still checked). */
    symmetries: 'auto' | 'none' | SymmetryChoice[];
    /** Restrict the solve to these sectors; absent keys mean every value. */
    sector: {
      momentum?: (number | number[])[];
      parity?: (1 | -1)[];
      level_flip?: (1 | -1)[];
      charge?: number[];
      /** Characters per point-group (or automorphism) generator name. */
      point_group?: Record<string, number[]>;
    };
    /** Threads for one product: "auto" (by size) or a count. */
    threads: 'auto' | number;
    /** Whose observables: the ground level's only ("ground"), or also every solved state's ("each"). */
    observables: 'ground' | 'each';
  };
  /** Validated values of the optional sections (src/spec/sections.ts), keyed by section name. */
  extra: Record<string, unknown>;
}
