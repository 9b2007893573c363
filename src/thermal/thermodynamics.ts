// Thermodynamics of a list of levels (energy, weight) at one temperature, computed stably: every
// Boltzmann factor is taken relative to the lowest energy E0, so no exponent overflows at low T,
// and ln Z = ln(sum_k w_k e^{-(E_k - E0)/T}) - E0/T (the log-sum-exp shift, common practice).
//
//   E = sum_k p_k E_k,  C = (1/T^2) sum_k p_k (E_k - E)^2,  S = ln Z + E/T,  F = -T ln Z = E - T S
//
// with p_k = w_k e^{-E_k/T} / Z and k_B = 1. The specific heat is the variance taken about E
// (not <E^2> - <E>^2), which keeps it accurate when it is small beside E^2.

export interface Thermodynamics {
  energy: number;
  specific_heat: number;
  entropy: number;
  free_energy: number;
}

/**
 * Boltzmann weights x_k = w_k exp(-(E_k - E0)/T) into `out` (same length as energies), and their sum.
 * `weights` may be a number (every level alike) or one weight per level.
 */
export function boltzmannFactors(
  energies: ArrayLike<number>,
  weights: ArrayLike<number> | number,
  e0: number,
  temperature: number,
  out: Float64Array,
): number {
  let sum = 0;
  for (let k = 0; k < energies.length; k++) {
    const w = typeof weights === 'number' ? weights : weights[k];
    const x = w === 0 ? 0 : w * Math.exp(-(energies[k] - e0) / temperature);
    out[k] = x;
    sum += x;
  }
  return sum;
}

/** The thermodynamics from shifted sums: z = sum x_k, e1 = sum x_k E_k, as in boltzmannFactors. */
export function thermodynamicsOf(
  energies: ArrayLike<number>,
  factors: Float64Array,
  z: number,
  e0: number,
  temperature: number,
): Thermodynamics {
  let e1 = 0;
  for (let k = 0; k < energies.length; k++) e1 += factors[k] * energies[k];
  const energy = e1 / z;
  let variance = 0;
  for (let k = 0; k < energies.length; k++) {
    const d = energies[k] - energy;
    variance += factors[k] * d * d;
  }
  variance /= z;
  const lnZshifted = Math.log(z);
  return {
    energy,
    specific_heat: variance / (temperature * temperature),
    // S = ln Z + E/T with ln Z = ln z - E0/T
    entropy: lnZshifted + (energy - e0) / temperature,
    free_energy: e0 - temperature * lnZshifted,
  };
}

/** S(T) = ln z + <E - E0>/T of levels at `shifted` = E_k - E0 >= 0 with weights x_k >= 0. */
export function entropyAt(shifted: ArrayLike<number>, weights: ArrayLike<number>, temperature: number): number {
  let z = 0;
  let e1 = 0;
  for (let k = 0; k < shifted.length; k++) {
    const x = weights[k] * Math.exp(-shifted[k] / temperature);
    z += x;
    e1 += x * shifted[k];
  }
  return Math.log(z) + e1 / z / temperature;
}

/**
 * The temperature at which S(T) equals each target, by bisection on ln T: S is increasing in T
 * (dS/dT = C/T >= 0 for any positive weights), from ln(weight of the lowest level) at T -> 0 to
 * ln(sum of weights) at T -> infinity. Returns null for a target outside that range (with the range).
 */
export function temperaturesForEntropies(
  shifted: ArrayLike<number>,
  weights: ArrayLike<number>,
  targets: number[],
): { temperatures: (number | null)[]; lowest: number; highest: number } {
  let scale = 0;
  let total = 0;
  for (let k = 0; k < shifted.length; k++) {
    scale = Math.max(scale, shifted[k]);
    total += weights[k];
  }
  if (scale === 0) scale = 1;
  const lo0 = Math.log(1e-6 * scale);
  const hi0 = Math.log(1e8 * scale);
  const lowest = entropyAt(shifted, weights, Math.exp(lo0));
  const highest = entropyAt(shifted, weights, Math.exp(hi0));
  const temperatures = targets.map((s) => {
    if (!(s > lowest && s < highest)) return null;
    let lo = lo0;
    let hi = hi0;
    for (let it = 0; it < 200 && hi - lo > 1e-14; it++) {
      const mid = 0.5 * (lo + hi);
      if (entropyAt(shifted, weights, Math.exp(mid)) < s) lo = mid;
      else hi = mid;
    }
    return Math.exp(0.5 * (lo + hi));
  });
  return { temperatures, lowest, highest: Math.min(highest, Math.log(total)) };
}
