// The [spectrum] section (issue 22): defaults as docs/model.md lists them, and every refusal naming
// its key path. The probe's sites and momenta are checked against the geometry by src/spectrum/.

import { describe, expect, it } from 'vitest';
import { SpecError } from '../../src/errors/errors.js';
import { validateSpec } from '../../src/spec/spec.js';
import type { SpectrumSection } from '../../src/spec/spectrumSection.js';
import { computeSpectrum } from '../../src/spectrum/spectrum.js';

const base = { chain: { sites: 3 }, levels: { count: 3 } };
const withSpectrum = (spectrum: Record<string, unknown>, extra: Record<string, unknown> = {}) => ({
  ...base,
  ...extra,
  spectrum: { probe: { link: 0 }, frequencies: { to: 4 }, ...spectrum },
});

function keyPathOf(raw: Record<string, unknown>, solve = false): string {
  try {
    const spec = validateSpec(raw);
    if (solve) computeSpectrum(spec);
  } catch (e) {
    if (e instanceof SpecError) return e.keyPath;
    throw e;
  }
  return 'no error';
}

describe('[spectrum]', () => {
  it('takes the documented defaults', () => {
    const s = validateSpec(withSpectrum({})).extra.spectrum as SpectrumSection;
    expect(s.probe).toEqual({ kind: 'drive', link: 0, level: null, phase: 0, sites: null, momentum: 0 });
    expect(s.from).toBe(0);
    expect(s.to).toBe(4);
    expect(s.steps).toBe(401);
    expect(s.frequencyUnit).toBe('model');
    // two frequency steps
    expect(s.lorentzian).toBeCloseTo(0.02, 15);
    expect(s.gaussian).toBe(0);
    expect(s.tolerance).toBe(1e-6);
    expect(s.maxLevels).toBe(2000);
    expect(s.lines).toBe(10);
    expect(s.temperature).toBe(0);
    expect([s.temperatureUnit, s.modelTemperature, s.method, s.vectors, s.thermalSteps, s.seed]).toEqual([
      'model',
      0,
      'auto',
      20,
      100,
      1,
    ]);
    const level = validateSpec(withSpectrum({ probe: { level: 2, momentum: -1, sites: [0, 2] } })).extra
      .spectrum as SpectrumSection;
    expect(level.probe).toEqual({ kind: 'level', link: null, level: 2, phase: 0, sites: [0, 2], momentum: -1 });
    const coordinate = validateSpec(withSpectrum({ probe: { coordinate: true }, broadening: { gaussian: 0.3 } })).extra
      .spectrum as SpectrumSection;
    expect(coordinate.probe.kind).toBe('coordinate');
    expect([coordinate.lorentzian, coordinate.gaussian]).toEqual([0, 0.3]);
  });

  it('refuses bad values, naming the key path', () => {
    const cases: [Record<string, unknown>, string][] = [
      [{ ...base, spectrum: { frequencies: { to: 1 } } }, 'spectrum.probe'],
      [{ ...base, spectrum: { probe: { link: 0 } } }, 'spectrum.frequencies'],
      [withSpectrum({ probe: {} }), 'spectrum.probe'],
      [withSpectrum({ probe: { link: 0, level: 1 } }), 'spectrum.probe'],
      [withSpectrum({ probe: { link: 2 } }), 'spectrum.probe.link'],
      [withSpectrum({ probe: { link: -1 } }), 'spectrum.probe.link'],
      [withSpectrum({ probe: { level: 3 } }), 'spectrum.probe.level'],
      [withSpectrum({ probe: { level: 0, phase: 1 } }), 'spectrum.probe.phase'],
      [withSpectrum({ probe: { coordinate: 1 } }), 'spectrum.probe.coordinate'],
      [withSpectrum({ probe: { link: 0, sites: [] } }), 'spectrum.probe.sites'],
      [withSpectrum({ probe: { link: 0, sites: [1, 1] } }), 'spectrum.probe.sites[1]'],
      [withSpectrum({ probe: { link: 0, sites: 'some' } }), 'spectrum.probe.sites'],
      [withSpectrum({ probe: { link: 0, momentum: 0.5 } }), 'spectrum.probe.momentum'],
      [withSpectrum({ probe: { link: 0, colour: 1 } }), 'spectrum.probe.colour'],
      [withSpectrum({ frequencies: { from: 2, to: 1 } }), 'spectrum.frequencies.to'],
      [withSpectrum({ frequencies: { to: 1, steps: 1 } }), 'spectrum.frequencies.steps'],
      [withSpectrum({ frequencies: { to: 1, steps: 1e6 } }), 'spectrum.frequencies.steps'],
      [withSpectrum({ frequencies: { from: 0 } }), 'spectrum.frequencies.to'],
      [withSpectrum({ frequency_unit: 'khz' }), 'spectrum.frequency_unit'],
      [withSpectrum({ frequency_unit: 'Hz' }), 'spectrum.frequency_unit'],
      [withSpectrum({ broadening: 0 }), 'spectrum.broadening'],
      [withSpectrum({ broadening: { lorentzian: 1e-6, gaussian: 0.1 } }), 'spectrum.broadening.lorentzian'],
      [withSpectrum({ broadening: { lorentzian: -1 } }), 'spectrum.broadening.lorentzian'],
      [withSpectrum({ broadening: {} }), 'spectrum.broadening'],
      [withSpectrum({ temperature: -0.5 }), 'spectrum.temperature'],
      [withSpectrum({ temperature: 0.5, temperature_unit: 'K' }), 'spectrum.temperature_unit'],
      [withSpectrum({ temperature: 0.5, temperature_unit: 'nK' }), 'spectrum.temperature_unit'],
      [withSpectrum({ method: 'dense' }), 'spectrum.method'],
      [withSpectrum({ vectors: 0 }), 'spectrum.vectors'],
      [withSpectrum({ steps: 1 }), 'spectrum.steps'],
      [withSpectrum({ seed: -1 }), 'spectrum.seed'],
      [withSpectrum({ tolerance: 0 }), 'spectrum.tolerance'],
      [withSpectrum({ max_levels: 1 }), 'spectrum.max_levels'],
      [withSpectrum({ lines: 0 }), 'spectrum.lines'],
    ];
    for (const [raw, path] of cases) expect(keyPathOf(raw), JSON.stringify(raw)).toBe(path);
    // a ring's closing link exists
    expect(keyPathOf(withSpectrum({ probe: { link: 2 } }, { levels: { count: 3, boundary: 'ring' } }))).toBe(
      'no error',
    );
    expect(keyPathOf(withSpectrum({ frequency_unit: 'khz' }, { units: { energy_unit_hz: 1000 } }))).toBe('no error');
    // both widths: a Voigt profile
    expect(keyPathOf(withSpectrum({ broadening: { lorentzian: 0.1, gaussian: 0.1 } }))).toBe('no error');
  });

  it('checks sites and momenta against the geometry before solving', () => {
    expect(keyPathOf(withSpectrum({ probe: { link: 0, sites: [3] } }), true)).toBe('spectrum.probe.sites[0]');
    expect(keyPathOf(withSpectrum({ probe: { link: 0, momentum: [1, 0] } }), true)).toBe('spectrum.probe.momentum');
    const square = { lattice: { shape: 'square', size: [2, 2] }, chain: undefined };
    const raw = { ...withSpectrum({ probe: { link: 0, momentum: 1 } }), ...square };
    delete (raw as Record<string, unknown>).chain;
    expect(keyPathOf(raw, true)).toBe('spectrum.probe.momentum');
    const custom = {
      ...withSpectrum({ probe: { link: 0, momentum: 1 } }),
      lattice: {
        shape: 'custom',
        positions: [
          [0, 0],
          [1, 0],
        ],
      },
    };
    delete (custom as Record<string, unknown>).chain;
    expect(keyPathOf(custom, true)).toBe('spectrum.probe.momentum');
  });
});
