import { describe, expect, it } from 'vitest';
import {
  CODATA_2018,
  DEBYE,
  dipolarScaleHz,
  exchangeHz,
  labUnits,
  rotorDipoleElement,
  rotorLinkStrength,
  timeUnitMs,
  tunnellingHzFromRabi,
  wigner3j,
} from '../../src/spec/units.js';
import { planEvolution, runEvolution } from '../../src/dynamics/evolution.js';
import { SpecError } from '../../src/errors/errors.js';
import { rotorWeights, validateSpec } from '../../src/spec/spec.js';
import { solvePoint } from '../../src/point/solvePoint.js';
import { mkdtempSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { runCli } from '../support/cli.js';

describe('rotor matrix elements (standard angular-momentum algebra)', () => {
  // Known 3j values (e.g. Edmonds, Angular Momentum in Quantum Mechanics, table 2; from memory):
  // (1 1 0; 0 0 0) = -1/sqrt(3), (1 1 2; 0 0 0) = sqrt(2/15), (1 1 1; 1 -1 0) = 1/sqrt(6).
  it('Wigner 3j symbols at a few known values', () => {
    expect(wigner3j(1, 1, 0, 0, 0, 0)).toBeCloseTo(-1 / Math.sqrt(3), 14);
    expect(wigner3j(1, 1, 2, 0, 0, 0)).toBeCloseTo(Math.sqrt(2 / 15), 14);
    expect(wigner3j(1, 1, 1, 1, -1, 0)).toBeCloseTo(1 / Math.sqrt(6), 14);
    expect(wigner3j(1, 1, 1, 0, 0, 0)).toBe(0); // odd J sum with all m = 0 vanishes
    expect(wigner3j(2, 1, 1, 0, 0, 1)).toBe(0); // m's do not add to zero
  });

  it('|<0|d|1>|^2 = d^2/3 (the lowest link, pi transition)', () => {
    expect(rotorLinkStrength(0)).toBeCloseTo(1 / 3, 14);
    // Summed over the three M' of J = 1 and the three components q, the J = 0 -> 1 line strength is d^2.
    let total = 0;
    for (const Mp of [-1, 0, 1]) for (const q of [-1, 0, 1]) total += rotorDipoleElement(0, 0, 1, Mp, q) ** 2;
    expect(total).toBeCloseTo(1, 14);
  });

  // <J,M| cos(theta) |J+1,M>^2 = ((J+1)^2 - M^2) / ((2J+1)(2J+3)) (textbook, e.g. any QM text on the rigid rotor).
  it('the M ladder formula ((J+1)^2 - M^2) / ((2J+1)(2J+3)), M = 0 included', () => {
    for (let J = 0; J <= 12; J++) {
      for (let M = -J; M <= J; M++) {
        const expected = ((J + 1) ** 2 - M * M) / ((2 * J + 1) * (2 * J + 3));
        expect(rotorDipoleElement(J, M, J + 1, M, 0) ** 2).toBeCloseTo(expected, 13);
        // Hermitian partner: the same element read downwards.
        expect(rotorDipoleElement(J + 1, M, J, M, 0) ** 2).toBeCloseTo(expected, 13);
      }
      // d_z only joins neighbouring J.
      expect(rotorDipoleElement(J, 0, J + 2, 0, 0)).toBe(0);
      expect(rotorDipoleElement(J, 0, J, 0, 0)).toBe(0);
    }
  });

  it('the rotor exchange weights of docs/model.md are the M = 0 link strengths over the lowest one', () => {
    const weights = rotorWeights(9);
    weights.forEach((c, n) => expect(rotorLinkStrength(n) / rotorLinkStrength(0)).toBeCloseTo(c, 13));
  });
});

describe('dipolar energy from CODATA 2018 constants', () => {
  it('1 debye at 500 nm, by hand', () => {
    // c = 299 792 458 m/s and h = 6.626 070 15e-34 J s (exact); eps0 = 8.854 187 8128e-12 F/m (CODATA 2018).
    // 1 D = 1e-21 / c C m = 3.335 640 952e-30 C m;  d^2 = 1.112 650 056e-59 C^2 m^2
    // 4 pi eps0 = 1.112 650 055 4e-10 F/m;  d^2 / (4 pi eps0) = 1.000 000 000 5e-49 J m^3
    // a^3 = (500e-9 m)^3 = 1.25e-19 m^3;  energy = 8.000 000 004e-31 J;  / h = 1207.352 Hz
    expect(DEBYE).toBeCloseTo(3.33564095198e-30, 40);
    expect(CODATA_2018.vacuumPermittivity).toBe(8.8541878128e-12);
    const byHand = 8.000000004355e-31 / 6.62607015e-34;
    expect(byHand).toBeCloseTo(1207.352144, 5);
    expect(dipolarScaleHz(1, 1, 500)).toBeCloseTo(byHand, 6);
    // Exchange on the lowest rotor link at 90 degrees: |<0|d|1>|^2 = d^2/3, and 1 - 3 cos^2 = 1.
    expect(exchangeHz(1, 500, 90)).toBeCloseTo(byHand / 3, 6);
    // Scaling: d^2 and 1/a^3.
    expect(exchangeHz(2.5, 250, 90)).toBeCloseTo((byHand / 3) * 6.25 * 8, 5);
  });

  it('the angular factor 1 - 3 cos^2 theta: head-to-tail doubles and flips the sign, the magic angle cancels', () => {
    expect(exchangeHz(1, 500, 0)).toBeCloseTo(-2 * exchangeHz(1, 500, 90), 9);
    expect(exchangeHz(1, 500, (Math.acos(1 / Math.sqrt(3)) * 180) / Math.PI)).toBe(0);
  });
});

describe('the [units] section', () => {
  const base = { chain: { sites: 4 }, levels: { count: 3 } };

  it('J is half the Rabi frequency; the default energy unit is J of link 0', () => {
    // Textbook two-level rotating-wave algebra: a drive of Rabi frequency Omega couples the levels
    // with hbar Omega / 2, so J = Omega / 2; an energy unit E = h x 1 kHz gives hbar / E = 1 / (2 pi) ms.
    const spec = validateSpec({ ...base, units: { rabi_khz: [2, 1] } });
    const u = labUnits(spec)!;
    expect(tunnellingHzFromRabi(2)).toBe(1000);
    expect(u.energyUnitHz).toBe(1000);
    expect(spec.levels.tunnelling).toEqual([1, 0.5]);
    expect(u.timeUnitMs).toBeCloseTo(1 / (2 * Math.PI), 14);
    expect(timeUnitMs(1000)).toBeCloseTo(0.15915494309, 10);
  });

  it('dipoles set V (dipolar range, rotor weights) in the chosen energy unit', () => {
    const spec = validateSpec({
      ...base,
      units: {
        dipole_debye: 1,
        lattice_spacing_nm: 500,
        dipole_angle_deg: 90,
        energy_unit_hz: 100,
        rotational_constant_ghz: 2,
      },
    });
    expect(spec.exchange.strength).toBeCloseTo(exchangeHz(1, 500, 90) / 100, 12);
    expect(spec.exchange.range).toBe('dipolar');
    spec.exchange.weights.forEach((c, n) => expect(c).toBeCloseTo(rotorWeights(3)[n], 13));
    // Rigid rotor: E_J = B J (J+1), so the J -> J+1 line is at 2B(J+1) (textbook).
    expect(labUnits(spec)!.linkFrequenciesGhz).toEqual([4, 8]);
    // Keys the spec sets itself stay.
    const nearest = validateSpec({
      ...base,
      exchange: { range: 'nearest' },
      units: { dipole_debye: 1, lattice_spacing_nm: 500 },
    });
    expect(nearest.exchange.range).toBe('nearest');
    expect(nearest.exchange.strength).toBe(1); // the default unit is |V| itself
  });

  it('refuses a coupling set both ways, and incomplete dipole data, naming the key', () => {
    const path = (raw: Record<string, unknown>): string => {
      try {
        validateSpec(raw);
      } catch (e) {
        if (e instanceof SpecError) return e.keyPath;
        throw e;
      }
      return 'no error';
    };
    expect(path({ ...base, exchange: { strength: 1 }, units: { dipole_debye: 1, lattice_spacing_nm: 500 } })).toBe(
      'exchange.strength',
    );
    expect(path({ ...base, levels: { count: 3, tunnelling: 1 }, units: { rabi_khz: 1 } })).toBe('levels.tunnelling');
    expect(path({ ...base, units: { dipole_debye: 1 } })).toBe('units.lattice_spacing_nm');
    expect(path({ ...base, units: { rabi_khz: [1, 2, 3] } })).toBe('units.rabi_khz');
    expect(path({ ...base, units: { dipole_angle_deg: 30 } })).toBe('units.energy_unit_hz');
    expect(path({ ...base, units: { dipole_debey: 1 } })).toBe('units.dipole_debey');
    expect(path({ ...base, units: { lattice_spacing_nm: -5, dipole_debye: 1 } })).toBe('units.lattice_spacing_nm');
  });

  // Rabi's formula in lab units: with Omega/2pi = 5 kHz, P1(t) = sin^2(Omega t / 2) = sin^2(pi * 5 kHz * t).
  it('Rabi oscillation in milliseconds', () => {
    const raw = {
      chain: { sites: 1 },
      levels: { count: 2 },
      units: { rabi_khz: 5 },
      evolve: { initial: [0], times: { from: 0, to: 0.4, steps: 20 }, time_unit: 'ms', tolerance: 1e-10 },
    };
    const plan = planEvolution(raw, validateSpec(raw));
    const result = runEvolution(plan);
    result.frames.forEach((f, k) => {
      const tMs = (0.4 * k) / 20;
      expect(result.timesMs![k]).toBeCloseTo(tMs, 12);
      expect(f.observables.populations[0][1]).toBeCloseTo(Math.sin(Math.PI * 5 * tMs) ** 2, 9);
    });
  });
});

describe('[units] on every path', () => {
  // Scan workers validate each point themselves: [units] must be known there too.
  it('a scan over the lattice spacing on worker threads gives the in-process energies', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-units-'));
    const spec = path.join(dir, 'lab.toml');
    writeFileSync(
      spec,
      '[chain]\nsites = 4\n[levels]\ncount = 3\n[units]\ndipole_debye = 1\nlattice_spacing_nm = 500\nrabi_khz = 1\n' +
        '[scan]\n[[scan.axis]]\nkey = "units.lattice_spacing_nm"\nvalues = [400, 500]\n',
    );
    const out = path.join(dir, 'run');
    const scan = runCli(['scan', spec, '--out', out, '--workers', '1', '--quiet']);
    expect(scan.code).toBe(0);
    const rows = JSON.parse(runCli(['summary', out, '--json']).stdout);
    for (const row of rows) {
      const a = row['units.lattice_spacing_nm'];
      const direct = solvePoint(
        validateSpec({
          chain: { sites: 4 },
          levels: { count: 3 },
          units: { dipole_debye: 1, lattice_spacing_nm: a, rabi_khz: 1 },
        }),
      );
      expect(row.status).toBe('done');
      expect(row.energies[0]).toBeCloseTo(direct.record.energies[0], 9);
    }
  });

  it('solve --json adds energies in Hz; the table prints them under the model units', () => {
    const dir = mkdtempSync(path.join(os.tmpdir(), 'rungchain-units-'));
    const spec = path.join(dir, 'lab.toml');
    writeFileSync(
      spec,
      '[chain]\nsites = 3\n[levels]\ncount = 2\n[units]\nrabi_khz = 4\ndipole_debye = 1\nlattice_spacing_nm = 500\n',
    );
    const r = runCli(['solve', spec, '--json']);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    // Energy unit: J = Omega/2 = 2 kHz.
    expect(out.units.energy_unit_hz).toBe(2000);
    out.energies.forEach((e: number, k: number) => expect(out.units.energies_hz[k]).toBeCloseTo(2000 * e, 9));
    expect(out.units.exchange_hz).toBeCloseTo(exchangeHz(1, 500, 90), 9);
    const text = runCli(['solve', spec]);
    expect(text.stdout).toMatch(/in the lab\s+E0 = -?[0-9.]+ kHz, gap = /);
  });
});
