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
