// A temperature in "model", "nK" or "kHz" units to k_B T in the model's energy unit, as
// thermal.temperature_unit converts its list (src/spec/thermalSection.ts); shared with
// spectrum.temperature_unit.

import { SpecError } from '../errors/errors.js';
import type { Spec } from './specTypes.js';
import { BOLTZMANN_OVER_PLANCK_HZ_PER_K } from './thermalSection.js';
import { labUnits } from './units.js';

/** k_B T in model units per unit of `unit`; "nK" and "kHz" need [units] (else a SpecError naming `keyPath`). */
export function modelTemperaturePerUnit(spec: Spec, unit: 'model' | 'nK' | 'kHz', keyPath: string): number {
  if (unit === 'model') return 1;
  const units = labUnits(spec);
  if (!units) throw new SpecError(keyPath, `"${unit}" needs a [units] section to know the energy scale`);
  // k_B T / h in Hz, then in units of the model's energy unit (h * energyUnitHz)
  const hzPerUnit = unit === 'nK' ? 1e-9 * BOLTZMANN_OVER_PLANCK_HZ_PER_K : 1e3;
  return hzPerUnit / units.energyUnitHz;
}
