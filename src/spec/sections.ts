// The optional top-level sections of a spec, besides the core ones validateSpec checks itself.
// validateSpec reads this list, so every process that validates specs knows every section a user
// may write, whatever else it has loaded. A new section is one more entry here.

import type { Spec } from './specTypes.js';
import { resolveEvolveSection, validateEvolveSection } from './evolveSection.js';
import { resolveLattice, validateLatticeSection } from './lattice.js';
import { validateScanSection } from './scanSection.js';
import { resolveDisorder, validateDisorderSection } from './disorder.js';
import { resolveUnits, validateUnitsSection } from './units.js';
import { resolveSpectrumSection, validateSpectrumSection } from './spectrumSection.js';
import { resolveThermalSection, validateThermalSection } from './thermalSection.js';

export interface OptionalSection {
  /** The top-level key; never the name of a core section. */
  name: string;
  /** Checks the raw value, naming key paths below `keyPath` in its SpecErrors; the result lands in spec.extra[name]. */
  validate: (value: unknown, keyPath: string) => unknown;
  /** Runs after every section is validated, so a section can derive core values ([units] sets couplings). */
  resolve?: (spec: Spec, raw: Record<string, unknown>) => void;
}

/** In this order their validators run, then their resolvers, and an unknown section's error lists them. */
export const OPTIONAL_SECTIONS: readonly OptionalSection[] = [
  // First, so [units] and [evolve] see the lattice's checks done.
  { name: 'lattice', validate: validateLatticeSection, resolve: resolveLattice },
  { name: 'units', validate: validateUnitsSection, resolve: resolveUnits },
  { name: 'evolve', validate: validateEvolveSection, resolve: resolveEvolveSection },
  { name: 'scan', validate: validateScanSection },
  { name: 'spectrum', validate: validateSpectrumSection, resolve: resolveSpectrumSection },
  // After [units], which fixes the energy scale of temperatures in nK or kHz.
  { name: 'thermal', validate: validateThermalSection, resolve: resolveThermalSection },
  // Last: a realization's filling changes the sites every other section has checked, and the
  // ensemble's realization axis joins the validated [scan].
  { name: 'disorder', validate: validateDisorderSection, resolve: (spec) => resolveDisorder(spec) },
];
