// The demo's chain, shared by the printed story (demo.ts) and its HTML report (report.ts).

/** Plain data (not `as const`) so a copy can be edited point by point before validation. */
export const DEMO_SPEC = {
  chain: { sites: 6, boundary: 'periodic' },
  levels: { count: 4, boundary: 'open', tunnelling: 1 },
  exchange: { strength: 1, range: 'nearest', weights: 'rotor' },
  particles: { kind: 'pinned' },
  solve: { states: 2, tolerance: 1e-9 },
};
