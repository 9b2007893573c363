// The transverse-field Ising ring H = -sum sz_i sz_{i+1} - g sum sx_i (Pauli matrices), solved as
// free fermions (Pfeuty, Ann. Phys. 57, 79 (1970)), and the same model written as a rungchain spec.
//
// Through docs/model.md: N = 2 levels, tunnelling J = g gives -g sx on every site, and the diagonal
// dipole term W m_i m_j with moments -1/2, +1/2 is (W/4) sz_i sz_j, so W = -4.
//
// On a finite ring the Jordan-Wigner fermions are antiperiodic in the sector of even parity
// prod sx = +1 (momenta k = (2m-1) pi / L) and periodic in the odd one (k = 2 pi m / L). For g > 0 the
// ground state is even; the odd sector's lowest state, which holds one of the unpaired k = 0 or
// k = pi fermions, is the first excited state (it becomes degenerate with the ground state as
// L grows when g < 1).

export function isingSpec(sites: number, g: number, extra: Record<string, unknown> = {}): Record<string, any> {
  return {
    chain: { sites, boundary: 'periodic' },
    levels: { count: 2, tunnelling: g },
    ising: { strength: -4, moments: [-0.5, 0.5] },
    solve: { states: 2, tolerance: 1e-10, ...extra },
  };
}

/** Single-fermion energy eps_k = 2 sqrt(1 + g^2 - 2 g cos k). */
export function fermionEnergy(k: number, g: number): number {
  return 2 * Math.sqrt(1 + g * g - 2 * g * Math.cos(k));
}

/** Ground energy: the even sector's BCS vacuum, -sum over antiperiodic k > 0 of eps_k (L even). */
export function isingGroundEnergy(L: number, g: number): number {
  let e = 0;
  for (let m = 1; m <= L / 2; m++) e -= fermionEnergy(((2 * m - 1) * Math.PI) / L, g);
  return e;
}

/**
 * Lowest energy of the odd sector: the paired periodic momenta 0 < k < pi in their vacuum, plus the
 * unpaired k = 0 and k = pi modes with energies 2(g - 1)(n_0 - 1/2) and 2(g + 1)(n_pi - 1/2) under
 * the constraint n_0 + n_pi odd, whose best choice (n_0 = 1) contributes -2 (L even).
 */
export function isingOddSectorEnergy(L: number, g: number): number {
  let e = -2;
  for (let m = 1; m < L / 2; m++) e -= fermionEnergy((2 * Math.PI * m) / L, g);
  return e;
}

/** Bogoliubov angle of the pair (k, -k): tan theta_k = sin k / (g - cos k). */
function bogoliubovAngle(k: number, g: number): number {
  return Math.atan2(Math.sin(k), g - Math.cos(k));
}

/**
 * Ground-state fidelity |<psi(g1)|psi(g2)>| = prod_{k>0} cos((theta_k(g1) - theta_k(g2)) / 2): the
 * ground state is a product of independent pair states cos(theta/2) + sin(theta/2) c+_k c+_-k
 * (up to phases), whose overlaps multiply.
 */
export function isingFidelity(L: number, g1: number, g2: number): number {
  let F = 1;
  for (let m = 1; m <= L / 2; m++) {
    const k = ((2 * m - 1) * Math.PI) / L;
    F *= Math.cos((bogoliubovAngle(k, g1) - bogoliubovAngle(k, g2)) / 2);
  }
  return Math.abs(F);
}
