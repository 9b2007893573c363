// Thermal equilibrium of one spec at the temperatures of its [thermal] section: the method chosen
// (exact below a block size, else finite-temperature Lanczos), its memory and time estimate, and
// the run itself.

import { buildBasis, type Basis } from '../basis/basis.js';
import { SpecError } from '../errors/errors.js';
import type { Model } from '../model/model.js';
import { separationClasses } from '../observables/separation.js';
import type { CorrelationRequest, Observables } from '../observables/pinned.js';
import { planPoint } from '../point/solvePoint.js';
import { RUNTIME_BASELINE_BYTES, type MemoryEstimate } from '../point/memory.js';
import { latticeOf } from '../spec/lattice.js';
import type { Spec } from '../spec/spec.js';
import { thermalSectionOf, type TemperatureUnit, type ThermalSection } from '../spec/thermalSection.js';
import { planSectors, translationSizes, type SectorPlan, type SymmetryName } from '../symmetry/group.js';
import { sectorSizes } from '../symmetry/sectorSizes.js';
import { diagonalizeBlocks, exactThermalState, levelsOf, lowestEnergy } from './exact.js';
import { lanczosThermal, type LanczosKnobs, type LanczosSpectrum } from './lanczos.js';
import { temperaturesForEntropies, type Thermodynamics } from './thermodynamics.js';

/**
 * The exact method's limit: the largest block (a symmetry sector, or the whole space) it
 * diagonalizes densely, counted in real-form size (a complex block of d states is 2d). The dense
 * eigensolver takes about 6 s at 1000 and 64 s at 2000 (measured, one core); 1500 keeps the
 * largest block under about 25 s. `method = "auto"` uses the exact method up to this size.
 */
export const EXACT_BLOCK_LIMIT = 1500;
/** `method = "exact"` is refused beyond this real-form block size (over ten minutes, over 500 MB a block). */
export const EXACT_BLOCK_MAX = 4000;

export interface ThermalPlan {
  method: 'exact' | 'lanczos';
  model: Model;
  dimension: number;
  /** Sectors (null: the whole space as one block), with their exact dimensions and copies. */
  blocks: { sector: SectorPlan | null; dimension: number; realSize: number; weight: number }[];
  largestBlock: number;
  memory: MemoryEstimate;
  /** Rough seconds on one core (see estimateSeconds). */
  seconds: number;
  section: ThermalSection;
  symmetries: SymmetryName[];
}

/** Seconds per real-form size cubed of the dense eigensolver (measured 5.8 s at 1000, 64 s at 2000). */
const DENSE_SECONDS_PER_CUBE = 8e-9;
/** Seconds per stored matrix element per Lanczos step (a product and its vector work), measured order of magnitude. */
const LANCZOS_SECONDS_PER_ELEMENT = 4e-9;

function isComplexSector(model: Model, plan: SectorPlan | null, sizes: number[] | null): boolean {
  if (model.isComplex) return true;
  const m = plan?.label.momentum ?? null;
  if (m === null) return false;
  const list = typeof m === 'number' ? [m] : m;
  const L = typeof m === 'number' ? [model.sites] : (sizes ?? []);
  return list.some((x, d) => x !== 0 && 2 * x !== L[d]);
}

export function planThermal(spec: Spec, limits: { maxMemory?: number } = {}): ThermalPlan {
  const section = thermalSectionOf(spec);
  if (!section) throw new SpecError('thermal', 'this command needs a [thermal] section (temperatures = [...])');
  const point = planPoint(spec, { maxMemory: limits.maxMemory, groundStates: false });
  const model = point.model;
  const used = point.used;
  let blocks: ThermalPlan['blocks'];
  if (used) {
    const plans = planSectors(used, model, spec.solve.sector ?? {});
    const sizes = sectorSizes(model, used, spec.solve.sector ?? {});
    const dims = new Map(sizes.map((s) => [JSON.stringify(s.label), s.dimension]));
    const lattice = translationSizes(model);
    blocks = plans.map((p) => {
      const dimension = dims.get(JSON.stringify(p.label)) ?? 0;
      const complex = isComplexSector(model, p, lattice);
      return { sector: p, dimension, realSize: complex ? 2 * dimension : dimension, weight: 1 + p.copies.length };
    });
  } else {
    const dimension = point.dimension;
    blocks = [{ sector: null, dimension, realSize: model.isComplex ? 2 * dimension : dimension, weight: 1 }];
  }
  const largestBlock = Math.max(0, ...blocks.map((b) => b.realSize));
  const method = section.method === 'auto' ? (largestBlock <= EXACT_BLOCK_LIMIT ? 'exact' : 'lanczos') : section.method;
  if (method === 'exact' && largestBlock > EXACT_BLOCK_MAX) {
    throw new SpecError(
      'thermal.method',
      `"exact" diagonalizes blocks of at most ${EXACT_BLOCK_MAX} (real form); this model's largest is ${largestBlock}: use "lanczos" or "auto"`,
    );
  }
  const temps = section.entropies?.length ?? section.modelTemperatures.length;
  const dimension = point.dimension;
  let memory: MemoryEstimate;
  let seconds: number;
  if (method === 'exact') {
    const n = largestBlock;
    // the dense block, its embedding or copy and the eigenvectors; every block's eigenvectors kept
    const kept = blocks.reduce((s, b) => s + b.dimension * b.realSize, 0) * 8;
    const parts: Record<string, number> = {
      runtime: RUNTIME_BASELINE_BYTES,
      dense_block: 4 * n * n * 8,
      eigenvectors: kept,
      probabilities: 2 * dimension * 8 + (used ? 6 * dimension : 0),
    };
    memory = { totalBytes: Object.values(parts).reduce((a, b) => a + b, 0), parts };
    seconds =
      blocks.reduce((s, b) => s + DENSE_SECONDS_PER_CUBE * b.realSize ** 3, 0) +
      (temps * blocks.reduce((s, b) => s + b.dimension * b.realSize, 0)) / 2e8;
  } else {
    const steps = section.steps;
    const vectors = section.vectors;
    const largest = Math.max(...blocks.map((b) => b.realSize));
    const parts: Record<string, number> = {
      runtime: RUNTIME_BASELINE_BYTES,
      operator: point.memory.parts.operator ?? point.memory.parts.sector_matrix ?? 0,
      // the Lanczos vectors of one random vector in the largest block, and the random vector
      lanczos_vectors: (Math.min(steps, largest) + 3) * largest * 8,
      orbit_map: used ? 6 * dimension : 0,
      probabilities: 2 * dimension * 8,
    };
    memory = { totalBytes: Object.values(parts).reduce((a, b) => a + b, 0), parts };
    const work = blocks.reduce((s, b) => s + b.realSize * (point.nonzeros ? point.nonzeros / dimension : 20), 0);
    // with entropies, a first pass finds the temperatures
    seconds = LANCZOS_SECONDS_PER_ELEMENT * vectors * steps * work * 2 * (section.entropies ? 2 : 1);
  }
  return {
    method,
    model,
    dimension,
    blocks,
    largestBlock,
    memory,
    seconds,
    section,
    symmetries: used ? (Object.keys(used) as SymmetryName[]).filter((k) => used[k]) : [],
  };
}

export interface ThermalRow extends Thermodynamics {
  /** With `entropies`: the entropy per particle asked for, whose temperature this row is. */
  target_entropy?: number;
  /** In the section's unit. */
  temperature: number;
  /** k_B T in the model's energy unit. */
  temperature_model: number;
  observables: Observables;
  /** Lanczos only: one standard error per value (same shape), from the spread over random vectors. */
  errors: (Thermodynamics & { observables: Observables }) | null;
}

export interface ThermalResult {
  method: 'exact' | 'lanczos';
  temperature_unit: TemperatureUnit;
  /** Lowest energy seen (exact: the ground energy). */
  ground_energy: number;
  dimension: number;
  sectors: number;
  symmetries: SymmetryName[];
  /** Lanczos only: random vectors per sector, steps per vector, seed. */
  lanczos: { vectors: number; steps: number; seed: number } | null;
  rows: ThermalRow[];
  seconds: number;
}

export function correlationRequestOf(spec: Spec, model: Model): CorrelationRequest {
  return { periodic: model.chainPeriodic, separations: separationClasses(model.geometry, latticeOf(spec)) };
}

/** Runs the planned method at every temperature. */
export function runThermal(spec: Spec, plan: ThermalPlan = planThermal(spec), knobs: LanczosKnobs = {}): ThermalResult {
  const started = performance.now();
  const { section, model } = plan;
  const basis: Basis = buildBasis(model);
  const correlations = correlationRequestOf(spec, model);
  const sectors = plan.blocks[0].sector === null ? null : plan.blocks.map((b) => b.sector as SectorPlan);
  let temps = section.modelTemperatures;
  const targets = section.entropies;
  const particles = model.particleNumber;
  // With entropies, the temperatures are the roots of S(T)/Np = s on the method's own spectrum.
  const solveTargets = (shifted: ArrayLike<number>, weights: ArrayLike<number>) => {
    const found = temperaturesForEntropies(
      shifted,
      weights,
      targets!.map((s) => s * particles),
    );
    found.temperatures.forEach((t, i) => {
      if (t === null)
        throw new SpecError(
          `thermal.entropies[${i}]`,
          `no temperature gives ${targets![i]} per particle: this model's entropy per particle lies between ${(found.lowest / particles).toPrecision(6)} (T -> 0) and ${(found.highest / particles).toPrecision(6)} (T -> infinity)`,
        );
    });
    return found.temperatures as number[];
  };
  const unitOf = (t: number, i: number) => (targets ? t * section.unitPerModel : section.temperatures[i]);
  const targetOf = (i: number) => (targets ? { target_entropy: targets[i] } : {});
  if (plan.method === 'exact') {
    const blocks = diagonalizeBlocks(model, basis, sectors);
    if (targets) {
      const { energies, weights } = levelsOf(blocks);
      const e0 = lowestEnergy(blocks);
      temps = solveTargets(
        energies.map((e) => e - e0),
        weights,
      );
    }
    const rows: ThermalRow[] = temps.map((t, i) => {
      const state = exactThermalState(blocks, basis, t, correlations, model.chainPeriodic);
      return { temperature: unitOf(t, i), temperature_model: t, ...targetOf(i), ...state, errors: null };
    });
    return {
      method: 'exact',
      temperature_unit: section.unit,
      ground_energy: lowestEnergy(blocks),
      dimension: plan.dimension,
      sectors: plan.blocks.length,
      symmetries: plan.symmetries,
      lanczos: null,
      rows,
      seconds: (performance.now() - started) / 1000,
    };
  }
  if (targets) {
    // a first pass for the spectrum (the same seeds give the same vectors in the second)
    const spectrum: LanczosSpectrum = { shifted: [], weights: [] };
    lanczosThermal(model, basis, sectors, [], section, correlations, 1e-10, knobs, spectrum);
    temps = solveTargets(spectrum.shifted, spectrum.weights);
  }
  const out = lanczosThermal(model, basis, sectors, temps, section, correlations, 1e-10, knobs);
  return {
    method: 'lanczos',
    temperature_unit: section.unit,
    ground_energy: out.groundEnergy,
    dimension: plan.dimension,
    sectors: plan.blocks.length,
    symmetries: plan.symmetries,
    lanczos: { vectors: section.vectors, steps: section.steps, seed: section.seed },
    rows: out.rows.map((r, i) => ({
      temperature: unitOf(temps[i], i),
      temperature_model: temps[i],
      ...targetOf(i),
      ...r,
    })),
    seconds: (performance.now() - started) / 1000,
  };
}
