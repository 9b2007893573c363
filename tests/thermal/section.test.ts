// The [thermal] section: defaults, ranges, units and errors naming the key (docs/model.md).
import { describe, expect, it } from 'vitest';
import { validateSpec } from '../../src/spec/spec.js';
import { SpecError } from '../../src/errors/errors.js';
import { BOLTZMANN_OVER_PLANCK_HZ_PER_K, type ThermalSection } from '../../src/spec/thermalSection.js';

const base = { chain: { sites: 3 }, levels: { count: 2 } };
const section = (thermal: unknown, extra: Record<string, unknown> = {}) =>
  validateSpec({ ...base, ...extra, thermal }).extra.thermal as ThermalSection;

function keyOf(f: () => unknown): string {
  try {
    f();
  } catch (e) {
    if (e instanceof SpecError) return e.keyPath;
    throw e;
  }
  throw new Error('no error');
}

describe('[thermal]', () => {
  it('defaults', () => {
    const s = section({ temperatures: [0.5, 1] });
    expect(s).toMatchObject({ unit: 'model', method: 'auto', vectors: 20, steps: 100, seed: 1 });
    expect(s.modelTemperatures).toEqual([0.5, 1]);
  });
  it('ranges: linear and log, ends included', () => {
    expect(section({ temperatures: { from: 1, to: 3, steps: 3 } }).temperatures).toEqual([1, 2, 3]);
    expect(section({ temperatures: { from: 0.1, to: 10, steps: 3, spacing: 'log' } }).temperatures).toEqual([
      0.1, 1, 10,
    ]);
  });
  it('nK and kHz through [units]: k_B T / h in Hz over the energy unit', () => {
    const units = { units: { energy_unit_hz: 1000 } };
    const nk = section({ temperatures: [10], temperature_unit: 'nK' }, units);
    // k_B / h = 20.8366... GHz/K (SI 2019, exact constants): 10 nK is 208.37 Hz
    expect(BOLTZMANN_OVER_PLANCK_HZ_PER_K).toBeCloseTo(20.836619123e9, -1);
    expect(nk.modelTemperatures[0]).toBeCloseTo((10e-9 * 20.836619123e9) / 1000, 8);
    const khz = section({ temperatures: [2], temperature_unit: 'kHz' }, units);
    expect(khz.modelTemperatures[0]).toBeCloseTo(2, 12);
  });
  it('errors name the key', () => {
    expect(keyOf(() => section({}))).toBe('thermal.temperatures');
    expect(keyOf(() => section({ temperatures: [1, -1] }))).toBe('thermal.temperatures[1]');
    expect(keyOf(() => section({ temperatures: { from: 1, to: 2 } }))).toBe('thermal.temperatures.steps');
    expect(keyOf(() => section({ temperatures: { from: 0, to: 2, steps: 3 } }))).toBe('thermal.temperatures.from');
    expect(keyOf(() => section({ temperatures: [1], method: 'fast' }))).toBe('thermal.method');
    expect(keyOf(() => section({ temperatures: [1], vectors: 0 }))).toBe('thermal.vectors');
    expect(keyOf(() => section({ temperatures: [1], steps: 1 }))).toBe('thermal.steps');
    expect(keyOf(() => section({ temperatures: [1], seed: -1 }))).toBe('thermal.seed');
    expect(keyOf(() => section({ temperatures: [1], temperature: 3 }))).toBe('thermal.temperature');
    expect(keyOf(() => section({ temperatures: [1], temperature_unit: 'nK' }))).toBe('thermal.temperature_unit');
    expect(keyOf(() => section({ temperatures: [1], entropies: [0.1] }))).toBe('thermal.entropies');
    expect(keyOf(() => section({ entropies: [] }))).toBe('thermal.entropies');
    expect(keyOf(() => section({ entropies: [0.1, 0] }))).toBe('thermal.entropies[1]');
  });
});
