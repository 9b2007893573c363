import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { stringify as toToml } from 'smol-toml';
import { afterAll, describe, expect, it } from 'vitest';
import { InputError, SpecError } from '../../src/errors/errors.js';
import {
  applyOverride,
  loadSpec,
  loadSpecFile,
  CORE_SECTIONS,
  parseSpecText,
  rotorWeights,
  validateSpec,
  type Spec,
} from '../../src/spec/spec.js';
import { OPTIONAL_SECTIONS } from '../../src/spec/sections.js';
import { expandScan } from '../../src/scan/plan.js';
import { planEvolution } from '../../src/dynamics/evolution.js';

const scratch = mkdtempSync(join(tmpdir(), 'rungchain-spec-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

function writeScratch(name: string, text: string): string {
  const path = join(scratch, name);
  writeFileSync(path, text);
  return path;
}

/** A deep copy, so each test can mutate its own tree. */
function tree(value: Record<string, unknown>): Record<string, unknown> {
  return structuredClone(value);
}

const minimal = { chain: { sites: 4 }, levels: { count: 3 } };

/** Validates `raw` and returns the SpecError it must throw. */
function specErrorOf(raw: Record<string, unknown>): SpecError {
  try {
    validateSpec(raw);
  } catch (e) {
    if (e instanceof SpecError) return e;
    throw e;
  }
  throw new Error(`expected a SpecError for ${JSON.stringify(raw)}`);
}

/** The same tree must fail the same way whether it arrived as TOML or as JSON. */
function expectSpecError(raw: Record<string, unknown>, keyPath: string, messagePart: string): void {
  const fromToml = specErrorOf(parseSpecText(toToml(raw), 'toml'));
  const fromJson = specErrorOf(parseSpecText(JSON.stringify(raw), 'json'));
  expect(fromToml.keyPath).toBe(keyPath);
  expect(fromToml.message.startsWith(`${keyPath}: `)).toBe(true);
  expect(fromToml.message).toContain(messagePart);
  expect(fromJson.message).toBe(fromToml.message);
}

describe('reading specs', () => {
  const tomlText = `
[chain]
sites = 5
boundary = "periodic"

[levels]
count = 4
boundary = "ring"
tunnelling = [1.0, 0.5, 0.25, 2]
phase = 0.3
detuning = [0, 0.1, 0.2, 0.3]

[exchange]
strength = -1.5
range = "dipolar"
cutoff = 2
weights = "rotor"

[ising]
strength = 0.25
moments = [0.5, -0.5, 0.1, 0]
range = "dipolar"

[particles]
kind = "boson"
number = 3
max_per_site = 2
hopping = 0.7
onsite = 4

[solve]
states = 3
tolerance = 1e-8
max_matvecs = 5000
krylov = 20
seed = 7
`;
  const jsonText = JSON.stringify({
    chain: { sites: 5, boundary: 'periodic' },
    levels: { count: 4, boundary: 'ring', tunnelling: [1, 0.5, 0.25, 2], phase: 0.3, detuning: [0, 0.1, 0.2, 0.3] },
    exchange: { strength: -1.5, range: 'dipolar', cutoff: 2, weights: 'rotor' },
    ising: { strength: 0.25, moments: [0.5, -0.5, 0.1, 0], range: 'dipolar' },
    particles: { kind: 'boson', number: 3, max_per_site: 2, hopping: 0.7, onsite: 4 },
    solve: { states: 3, tolerance: 1e-8, max_matvecs: 5000, krylov: 20, seed: 7 },
  });

  it('gives the same Spec from TOML and JSON', () => {
    const fromToml = validateSpec(parseSpecText(tomlText, 'toml'));
    const fromJson = validateSpec(parseSpecText(jsonText, 'json'));
    expect(fromJson).toEqual(fromToml);
    expect(fromToml.chain).toEqual({ sites: 5, boundary: 'periodic' });
    expect(fromToml.levels.phase).toEqual([0.3, 0.3, 0.3, 0.3]);
    expect(fromToml.exchange.weightsName).toBe('rotor');
    expect(fromToml.exchange.weights).toEqual(rotorWeights(4));
    expect(fromToml.ising.cutoff).toBe(Infinity);
    expect(fromToml.particles).toEqual({ kind: 'boson', number: 3, maxPerSite: 2, hopping: 0.7, onsite: 4 });
    expect(fromToml.solve).toEqual({
      states: 3,
      tolerance: 1e-8,
      maxMatvecs: 5000,
      krylov: 20,
      seed: 7,
      entanglement: 'auto',
      entanglementSites: [],
      symmetries: 'auto',
      sector: {},
      threads: 'auto',
      observables: 'ground',
    });
  });

  it('loads .toml and .json files by extension', () => {
    const tomlPath = writeScratch('model.toml', tomlText);
    const jsonPath = writeScratch('model.JSON', jsonText);
    expect(loadSpecFile(jsonPath)).toEqual(JSON.parse(jsonText));
    expect(loadSpec(tomlPath).spec).toEqual(loadSpec(jsonPath).spec);
  });

  it('reports syntax errors as InputError with file and line', () => {
    const badToml = writeScratch('bad.toml', '[chain]\nsites = 4\n[levels]\ncount = = 3\n');
    expect(() => loadSpecFile(badToml)).toThrow(InputError);
    expect(() => loadSpecFile(badToml)).toThrow(`${badToml}:4:`);
    const badJson = writeScratch('bad.json', '{"chain": {"sites": 4}\n "levels": {}}');
    expect(() => loadSpecFile(badJson)).toThrow(InputError);
    expect(() => loadSpecFile(badJson)).toThrow(badJson);
    expect(() => parseSpecText('[1, 2]', 'json')).toThrow(InputError);
  });

  // RFC 8259 says names within an object SHOULD be unique; TOML (v1.0, "Keys") forbids defining a
  // key twice. A spec refuses both, so a duplicated key is never silently the last one.
  it('refuses a key given twice, in JSON as in TOML, naming the key and both places', () => {
    const message = (text: string, format: 'json' | 'toml') => {
      try {
        parseSpecText(text, format, 'spec');
      } catch (e) {
        expect(e).toBeInstanceOf(InputError);
        return (e as Error).message;
      }
      throw new Error(`accepted ${text}`);
    };
    expect(message('{"chain":{"sites":4,"sites":5},"levels":{"count":2}}', 'json')).toBe(
      'spec:1:21: chain.sites is given twice (first at 1:11); a key may appear once',
    );
    expect(message('{"chain": {"sites": 4},\n "levels": {"count": 2},\n "chain": {}}', 'json')).toMatch(
      /^spec:3:2: chain is given twice \(first at 1:2\)/,
    );
    expect(message('{"scan": {"axis": [{"key": "a.b", "values": [1], "key": "c.d"}]}}', 'json')).toMatch(
      /^spec:1:\d+: scan\.axis\[0\]\.key is given twice/,
    );
    expect(message('[chain]\nsites = 4\nsites = 5\n', 'toml')).toMatch(/^spec:3:1: .*sites = 5/);
    expect(message('[chain]\nsites = 4\n[chain]\n', 'toml')).toMatch(/^spec:3:\d+: .*\[chain\]/);
    // The same key in different objects is no duplicate.
    expect(parseSpecText('{"chain":{"sites":4},"levels":{"count":2,"sites":1}}', 'json')).toEqual({
      chain: { sites: 4 },
      levels: { count: 2, sites: 1 },
    });
    expect(() => applyOverride({}, 'solve.sector={"charge":1,"charge":2}')).toThrow(
      /solve\.sector=.*charge is given twice/,
    );
  });

  // JSON.parse (ECMA-262, itself following RFC 8259) is the reference for what JSON text means.
  it('reads every JSON text as JSON.parse does, and refuses what it refuses', () => {
    let seed = 7;
    const random = () => (seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31;
    const make = (depth: number): unknown => {
      const r = random();
      if (depth > 3 || r < 0.3) {
        const pick = Math.floor(random() * 6);
        return [
          () => random() * 1e6 - 5e5,
          () => Math.floor(random() * 100),
          () => 'a\u00e9\n"\\\t\u0001\ud83d\ude00/' + random(),
          () => true,
          () => null,
          () => -1.5e-300,
        ][pick]();
      }
      if (r < 0.6) return Array.from({ length: Math.floor(random() * 4) }, () => make(depth + 1));
      return Object.fromEntries(
        Array.from({ length: Math.floor(random() * 4) }, (_, k) => [
          `k${k}_${Math.floor(random() * 9)}`,
          make(depth + 1),
        ]),
      );
    };
    for (let trial = 0; trial < 300; trial++) {
      const value = { chain: make(0), levels: make(0) };
      for (const text of [JSON.stringify(value), JSON.stringify(value, null, trial % 4)]) {
        expect(parseSpecText(text, 'json')).toEqual(JSON.parse(text));
      }
    }
    expect(parseSpecText('{"x": [1e400, -0, 0.5E-3, "\\u0041\\/"]}', 'json')).toEqual(
      JSON.parse('{"x": [1e400, -0, 0.5E-3, "\\u0041\\/"]}'),
    );
    const bad = [
      '{',
      '{"a":1,}',
      '[1,]',
      '{"a" 1}',
      "{'a':1}",
      '{"a":01}',
      '{"a":.5}',
      '{"a":1.}',
      '{"a":+1}',
      '{"a":NaN}',
      '{"a":"\\x"}',
      '{"a":"\\u12"}',
      '{"a":tru}',
      '{"a":1} x',
      '{"a":"b\tc"}',
      '// c\n{}',
      '{"a":1 /* c */}',
      '{"a":[1 2]}',
      '',
      ' ',
    ];
    for (const text of bad) {
      expect(() => JSON.parse(text)).toThrow();
      expect(() => parseSpecText(text, 'json', 'spec')).toThrow(/^spec:\d+:\d+: invalid JSON: [^\n]+$/);
    }
  });

  it('a JSON error is one line with line:column, whatever the text holds', () => {
    const err = (text: string) => {
      try {
        parseSpecText(text, 'json', 'spec.json');
      } catch (e) {
        return (e as Error).message;
      }
      throw new Error('accepted');
    };
    expect(err('{"chain": {"sites": 4}\n "levels": {}}')).toBe(
      'spec.json:2:2: invalid JSON: unexpected """, expected "," or "}" after a value in an object',
    );
    expect(err('{"chain": {"sites": 4,\n "boundary": "open\u0007\nx"}}')).toBe(
      'spec.json:2:19: invalid JSON: control character U+0007 inside a string (write it as an escape such as \\n)',
    );
    expect(err('{\n  "chain": {"sites": 4}')).toBe(
      'spec.json:2:24: invalid JSON: unexpected end of text, expected "," or "}" after a value in an object',
    );
    const huge = 'a'.repeat(5_000_000);
    const line = err(`{"chain": {"boundary": "${huge}" "sites": 4}}`);
    expect(line).toMatch(/^spec\.json:1:5000027: invalid JSON: unexpected """/);
    expect(line.length).toBeLessThan(200);
    expect(err('['.repeat(100_000))).toMatch(/^spec\.json:1:\d+: invalid JSON: nested deeper than/);
  });

  it('an error that repeats a value or a key cuts it to a readable length, on one line', () => {
    const huge = `${'b'.repeat(5_000_000)}\n\u0000`;
    for (const raw of [
      { chain: { sites: 4, boundary: huge }, levels: { count: 2 } },
      { chain: { sites: 4, [huge]: 1 }, levels: { count: 2 } },
      { chain: { sites: 4 }, levels: { count: 2 }, [huge]: {} },
      { chain: { sites: 4 }, levels: { count: 2 }, particles: { kind: huge } },
      { chain: { sites: 4 }, levels: { count: 2 }, scan: { axis: [{ key: 'levels.boundary', values: [huge] }] } },
      { chain: { sites: 4 }, levels: { count: 2 }, scan: { axis: [{ key: huge, values: [1] }] } },
      {
        chain: { sites: 4 },
        levels: { count: 2 },
        scan: { axis: [{ key: 'exchange.strength', from: huge, to: 1, steps: 2 }] },
      },
      {
        chain: { sites: 4 },
        levels: { count: 2 },
        scan: { axis: [{ key: 'exchange.strength', from: 0, to: 1, steps: 2, spacing: huge }] },
      },
      {
        chain: { sites: 4 },
        levels: { count: 2 },
        scan: { zip: huge, axis: [{ key: 'exchange.strength', values: [1] }] },
      },
      { chain: { sites: 4 }, levels: { count: 2 }, evolve: { times: [1], time_unit: huge } },
      {
        chain: { sites: 4 },
        levels: { count: 2 },
        evolve: { times: [1], initial: { pulses: [{ between: [0, huge], area: 1 }] } },
      },
      {
        chain: { sites: 4 },
        levels: { count: 2 },
        evolve: { times: [1], ramp: { key: huge, from: 0, to: 1, duration: 1 } },
      },
      { chain: { sites: 4 }, levels: { count: 2 }, units: { dipole_debye: huge } },
    ]) {
      let e: unknown = null;
      try {
        const spec = validateSpec(raw);
        if (raw.scan) expandScan(raw, spec);
        if (raw.evolve) planEvolution(raw, spec);
      } catch (thrown) {
        e = thrown;
      }
      if (!(e instanceof SpecError)) throw new Error(`no SpecError for a spec with ${Object.keys(raw).join(', ')}`);
      expect(e.message.length, e.message.slice(0, 300)).toBeLessThan(400);
      // eslint-disable-next-line no-control-regex -- no control character may reach the terminal
      expect(e.message).not.toMatch(/[\u0000-\u001f]/);
    }
    const longKey = 'c'.repeat(5_000_000);
    /* eslint-disable no-control-regex -- the messages must be free of control characters */
    expect(() => applyOverride({}, `${longKey}[0]=1`)).toThrow(
      /^"c+"\.\.\. \(5000000 characters\): [^\u0000-\u001f]{1,300}$/,
    );
    expect(() => applyOverride({}, `chain.sites${huge}=1`)).toThrow(
      /^override "chain\.sitesb+"\.\.\. \(5000015 characters\): [^\u0000-\u001f]{1,300}$/,
    );
    /* eslint-enable no-control-regex */
  });

  it('reports unreadable files and unknown extensions as InputError', () => {
    expect(() => loadSpecFile(join(scratch, 'absent.toml'))).toThrow(/absent\.toml: no such file/);
    const yaml = writeScratch('model.yaml', 'chain: {}');
    expect(() => loadSpecFile(yaml)).toThrow(InputError);
    expect(() => loadSpecFile(yaml)).toThrow('.yaml');
  });
});

describe('defaults and expansion', () => {
  it('fills every default into a minimal spec', () => {
    const spec: Spec = validateSpec(tree(minimal));
    expect(spec.chain.boundary).toBe('open');
    expect(spec.levels).toEqual({ count: 3, boundary: 'open', tunnelling: [1, 1], phase: [0, 0], detuning: [0, 0, 0] });
    expect(spec.exchange).toEqual({
      strength: 0,
      range: 'nearest',
      cutoff: Infinity,
      weights: [1, 1],
      weightsName: 'uniform',
    });
    expect(spec.ising).toEqual({ strength: 0, moments: [0, 0, 0], range: 'nearest', cutoff: Infinity });
    expect(spec.particles).toEqual({ kind: 'pinned', number: 4, maxPerSite: 1, hopping: 0, onsite: 0 });
    expect(spec.solve).toEqual({
      states: 4,
      tolerance: 1e-9,
      maxMatvecs: null,
      krylov: null,
      seed: 1,
      entanglement: 'auto',
      entanglementSites: [],
      symmetries: 'auto',
      sector: {},
      threads: 'auto',
      observables: 'ground',
    });
    expect(spec.extra).toEqual({});
  });

  it('expands scalars per link on an open ladder and on a ring, and per level', () => {
    const open = validateSpec({
      chain: { sites: 2 },
      levels: { count: 5, tunnelling: 0.5, phase: 1.25, detuning: -2 },
    });
    expect(open.levels.tunnelling).toEqual(new Array(4).fill(0.5));
    expect(open.levels.phase).toEqual(new Array(4).fill(1.25));
    expect(open.levels.detuning).toEqual(new Array(5).fill(-2));
    const ring = validateSpec({ chain: { sites: 2 }, levels: { count: 5, boundary: 'ring', tunnelling: 0.5 } });
    expect(ring.levels.tunnelling).toHaveLength(5);
    expect(ring.levels.phase).toHaveLength(5);
    // Exchange never crosses the ring's closing link, so its weights stay one per open link.
    expect(ring.exchange.weights).toHaveLength(4);
  });

  it('takes an explicit weight list, one per open link', () => {
    const spec = validateSpec({
      ...tree(minimal),
      levels: { count: 3, boundary: 'ring' },
      exchange: { weights: [1, 0.25] },
    });
    expect(spec.exchange.weights).toEqual([1, 0.25]);
    expect(spec.exchange.weightsName).toBe('list');
  });

  it('a single level has no links', () => {
    const spec = validateSpec({ chain: { sites: 3 }, levels: { count: 1, tunnelling: 2 } });
    expect(spec.levels.tunnelling).toEqual([]);
    expect(spec.exchange.weights).toEqual([]);
  });

  it('sets particle defaults per kind', () => {
    const withKind = (particles: Record<string, unknown>) => validateSpec({ ...tree(minimal), particles }).particles;
    expect(withKind({ kind: 'boson', number: 3 }).maxPerSite).toBe(3);
    expect(withKind({ kind: 'hardcore', number: 2 })).toEqual({
      kind: 'hardcore',
      number: 2,
      maxPerSite: 1,
      hopping: 0,
      onsite: 0,
    });
    // Fermions exclude per (site, level), so a site can hold one per level.
    expect(withKind({ kind: 'fermion', number: 5, hopping: 1 }).maxPerSite).toBe(3);
    expect(withKind({ kind: 'hardcore' }).number).toBe(4);
  });
});

describe('validation errors name the key path', () => {
  it('rejects unknown keys and sections, suggesting near misses', () => {
    expectSpecError(
      { ...tree(minimal), levels: { count: 3, tunelling: 1 } },
      'levels.tunelling',
      'unknown key (did you mean tunnelling?)',
    );
    expectSpecError({ chain: { sites: 4 }, levles: { count: 3 } }, 'levles', 'did you mean levels?');
    expectSpecError(
      { ...tree(minimal), particles: { maxPerSite: 2 } },
      'particles.maxPerSite',
      'did you mean max_per_site?',
    );
    expectSpecError({ ...tree(minimal), solve: { colour: 'red' } }, 'solve.colour', 'unknown key');
    expect(specErrorOf({ ...tree(minimal), solve: { colour: 'red' } }).message).not.toContain('did you mean');
  });

  // Common practice (compilers, git): an unknown name comes with the nearest valid one and the list
  // to choose from, and every section answers alike.
  it('an unknown key in any section lists the valid keys there and the nearest one', () => {
    const cases: [Record<string, unknown>, string, string, string[]][] = [
      [{ ...tree(minimal), chain: { sites: 4, boundry: 'open' } }, 'chain.boundry', 'boundary', ['sites', 'boundary']],
      [
        { ...tree(minimal), exchange: { strenght: 1 } },
        'exchange.strenght',
        'strength',
        ['strength', 'range', 'cutoff', 'weights'],
      ],
      [
        { ...tree(minimal), ising: { moment: [0, 0, 0] } },
        'ising.moment',
        'moments',
        ['strength', 'moments', 'range', 'cutoff'],
      ],
      [
        { ...tree(minimal), particles: { onsit: 1 } },
        'particles.onsit',
        'onsite',
        ['kind', 'number', 'max_per_site', 'hopping', 'onsite'],
      ],
      [{ ...tree(minimal), solve: { state: 2 } }, 'solve.state', 'states', ['states', 'tolerance', 'threads']],
      [
        { ...tree(minimal), solve: { sector: { moment: 0 } } },
        'solve.sector.moment',
        'momentum',
        ['momentum', 'parity', 'level_flip', 'charge'],
      ],
      [
        { ...tree(minimal), units: { dipole_debey: 1 } },
        'units.dipole_debey',
        'dipole_debye',
        ['lattice_spacing_nm', 'rabi_khz'],
      ],
      [{ ...tree(minimal), evolve: { time: [1] } }, 'evolve.time', 'times', ['initial', 'times', 'ramp']],
      [
        { ...tree(minimal), evolve: { times: { to: 1, step: 2 } } },
        'evolve.times.step',
        'steps',
        ['from', 'to', 'steps'],
      ],
      [{ ...tree(minimal), scan: { zipp: true, axis: [] } }, 'scan.zipp', 'zip', ['axis', 'zip']],
      [
        { ...tree(minimal), scan: { axis: [{ key: 'exchange.strength', value: [1] }] } },
        'scan.axis[0].value',
        'values',
        ['key', 'values', 'from', 'to', 'steps', 'spacing'],
      ],
      [{ ...tree(minimal), scna: {} }, 'scna', 'scan', ['chain', 'levels', 'particles', 'scan', 'evolve', 'units']],
    ];
    for (const [raw, keyPath, nearest, valid] of cases) {
      const e = specErrorOf(raw);
      expect(e.keyPath).toBe(keyPath);
      expect(e.message).toContain(`did you mean ${nearest}?`);
      const listed = /valid (?:keys|sections): (.*)$/.exec(e.message)?.[1].split(', ');
      expect(listed).toBeDefined();
      for (const name of valid) expect(listed).toContain(name);
    }
  });

  it('rejects missing required keys and sections', () => {
    expectSpecError({ chain: {}, levels: { count: 3 } }, 'chain.sites', 'required');
    expectSpecError({ chain: { sites: 4 } }, 'levels', 'required');
    expectSpecError({ chain: 5, levels: { count: 3 } }, 'chain', 'expected a table, got 5');
  });

  it('rejects wrong types', () => {
    expectSpecError(
      { chain: { sites: 'ten' }, levels: { count: 3 } },
      'chain.sites',
      'expected a positive integer, got "ten"',
    );
    expectSpecError(
      { chain: { sites: 2.5 }, levels: { count: 3 } },
      'chain.sites',
      'expected a positive integer, got 2.5',
    );
    expectSpecError(
      { ...tree(minimal), exchange: { strength: true } },
      'exchange.strength',
      'expected a finite number, got true',
    );
    expectSpecError({ ...tree(minimal), chain: { sites: 4, boundary: 'closed' } }, 'chain.boundary', 'got "closed"');
    expectSpecError({ ...tree(minimal), exchange: { weights: 'rotr' } }, 'exchange.weights', 'did you mean "rotor"?');
    expectSpecError({ ...tree(minimal), levels: { count: 3, detuning: 'flat' } }, 'levels.detuning', 'got "flat"');
    expectSpecError({ ...tree(minimal), ising: { moments: 1 } }, 'ising.moments', 'expected a list of 3 numbers');
  });

  it('names the element of a list', () => {
    expectSpecError(
      { chain: { sites: 4 }, levels: { count: 4, detuning: [0, 1, 'x', 3] } },
      'levels.detuning[2]',
      'got "x"',
    );
    expectSpecError(
      { ...tree(minimal), exchange: { weights: [1, [2]] } },
      'exchange.weights[1]',
      'expected a finite number',
    );
  });

  it('rejects wrong list lengths, saying what the list is counted by', () => {
    expectSpecError(
      { chain: { sites: 4 }, levels: { count: 4, tunnelling: [1, 2] } },
      'levels.tunnelling',
      'expected 3 values (one per link of an open ladder of 4 levels), got 2',
    );
    expectSpecError(
      { chain: { sites: 4 }, levels: { count: 4, boundary: 'ring', phase: [0, 0, 0] } },
      'levels.phase',
      'expected 4 values (one per link of a ring of 4 levels), got 3',
    );
    expectSpecError(
      { chain: { sites: 4 }, levels: { count: 4, detuning: [0, 1] } },
      'levels.detuning',
      'expected 4 values',
    );
    expectSpecError(
      { chain: { sites: 4 }, levels: { count: 4, boundary: 'ring' }, exchange: { weights: [1, 1, 1, 1] } },
      'exchange.weights',
      'expected 3 values',
    );
    expectSpecError(
      { ...tree(minimal), ising: { strength: 1, moments: [1, 2] } },
      'ising.moments',
      'expected 3 values',
    );
  });

  it('rejects impossible sizes and tolerances', () => {
    expectSpecError({ chain: { sites: 0 }, levels: { count: 3 } }, 'chain.sites', 'positive integer');
    expectSpecError({ chain: { sites: 4 }, levels: { count: 0 } }, 'levels.count', 'positive integer');
    expectSpecError({ ...tree(minimal), solve: { states: 0 } }, 'solve.states', 'positive integer');
    expectSpecError({ ...tree(minimal), solve: { tolerance: 0 } }, 'solve.tolerance', 'positive number');
    expectSpecError({ ...tree(minimal), solve: { tolerance: -1e-9 } }, 'solve.tolerance', 'positive number');
    expectSpecError(
      { ...tree(minimal), solve: { states: 4, krylov: 4 } },
      'solve.krylov',
      'must exceed solve.states = 4',
    );
    expectSpecError({ ...tree(minimal), solve: { max_matvecs: 0 } }, 'solve.max_matvecs', 'positive integer');
  });

  it('checks solve.entanglement: a name or cuts between 1 and sites - 1', () => {
    expect(validateSpec({ ...tree(minimal), solve: { entanglement: [3, 1] } }).solve.entanglement).toEqual([3, 1]);
    expect(validateSpec({ ...tree(minimal), solve: { entanglement: 'half' } }).solve.entanglement).toBe('half');
    expectSpecError(
      { ...tree(minimal), solve: { entanglement: 'halff' } },
      'solve.entanglement',
      'did you mean "half"',
    );
    expectSpecError({ ...tree(minimal), solve: { entanglement: [1, 4] } }, 'solve.entanglement[1]', 'from 1 to 3');
    expectSpecError({ ...tree(minimal), solve: { entanglement: [0] } }, 'solve.entanglement[0]', 'from 1 to 3');
  });

  it('rejects bad cutoffs', () => {
    expectSpecError(
      { ...tree(minimal), exchange: { range: 'dipolar', cutoff: 0 } },
      'exchange.cutoff',
      'positive number, got 0',
    );
    expectSpecError(
      { ...tree(minimal), ising: { range: 'dipolar', cutoff: -2 } },
      'ising.cutoff',
      'positive number, got -2',
    );
    expectSpecError({ ...tree(minimal), exchange: { range: 'dipolar', cutoff: 0.5 } }, 'exchange.cutoff', 'at least 1');
    // On nearest-neighbour coupling a cutoff would be ignored.
    expectSpecError(
      { ...tree(minimal), exchange: { cutoff: 3 } },
      'exchange.cutoff',
      'only applies to exchange.range = "dipolar"',
    );
  });

  it('rejects non-finite numbers (TOML can write them, JSON cannot)', () => {
    const inf = specErrorOf(parseSpecText('[chain]\nsites = 4\n[levels]\ncount = 3\ntunnelling = [1, inf]\n', 'toml'));
    expect(inf.keyPath).toBe('levels.tunnelling[1]');
    expect(inf.message).toContain('got inf');
    const nan = specErrorOf(
      parseSpecText('[chain]\nsites = 4\n[levels]\ncount = 3\n[exchange]\nstrength = nan\n', 'toml'),
    );
    expect(nan.keyPath).toBe('exchange.strength');
    expect(nan.message).toContain('got nan');
    const infiniteCutoff = specErrorOf(
      parseSpecText('[chain]\nsites = 4\n[levels]\ncount = 3\n[exchange]\nrange = "dipolar"\ncutoff = inf\n', 'toml'),
    );
    expect(infiniteCutoff.keyPath).toBe('exchange.cutoff');
  });

  it('rejects boundaries that need more sites or levels', () => {
    expectSpecError(
      { chain: { sites: 2, boundary: 'periodic' }, levels: { count: 3 } },
      'chain.boundary',
      'at least 3 sites',
    );
    expectSpecError(
      { chain: { sites: 4 }, levels: { count: 2, boundary: 'ring' } },
      'levels.boundary',
      'at least 3 levels',
    );
  });

  it('rejects particle numbers the kind cannot hold', () => {
    expectSpecError(
      { ...tree(minimal), particles: { number: 3 } },
      'particles.number',
      'must equal chain.sites = 4, got 3',
    );
    expectSpecError(
      { ...tree(minimal), particles: { kind: 'hardcore', number: 5 } },
      'particles.number',
      'at most 4 hardcore',
    );
    expectSpecError(
      { ...tree(minimal), particles: { kind: 'fermion', number: 13 } },
      'particles.number',
      'at most 12 fermions',
    );
    expectSpecError(
      { ...tree(minimal), particles: { kind: 'boson', number: 9, max_per_site: 2 } },
      'particles.number',
      'at most 8 bosons',
    );
    expectSpecError(
      { ...tree(minimal), particles: { kind: 'boson', max_per_site: 0 } },
      'particles.max_per_site',
      'positive integer, got 0',
    );
    expectSpecError(
      { ...tree(minimal), particles: { kind: 'hardcore', number: 0 } },
      'particles.number',
      'positive integer',
    );
    // The largest legal numbers pass.
    expect(validateSpec({ ...tree(minimal), particles: { kind: 'fermion', number: 12 } }).particles.number).toBe(12);
    expect(
      validateSpec({ ...tree(minimal), particles: { kind: 'boson', number: 8, max_per_site: 2 } }).particles.number,
    ).toBe(8);
  });

  it('rejects keys that the particle kind would silently ignore', () => {
    for (const key of ['hopping', 'onsite', 'max_per_site']) {
      expectSpecError(
        { ...tree(minimal), particles: { kind: 'pinned', [key]: 1 } },
        `particles.${key}`,
        'not used for kind = "pinned"',
      );
    }
    expectSpecError(
      { ...tree(minimal), particles: { kind: 'hardcore', onsite: 2 } },
      'particles.onsite',
      'not used for kind = "hardcore"',
    );
    expectSpecError(
      { ...tree(minimal), particles: { kind: 'fermion', onsite: 2 } },
      'particles.onsite',
      'not used for kind = "fermion"',
    );
    expectSpecError(
      { ...tree(minimal), particles: { kind: 'hardcore', max_per_site: 1 } },
      'particles.max_per_site',
      'not used',
    );
  });

  it('requires moments when the ising strength is nonzero', () => {
    expectSpecError(
      { ...tree(minimal), ising: { strength: 0.5 } },
      'ising.moments',
      'required when ising.strength is not 0',
    );
    expect(validateSpec({ ...tree(minimal), ising: { strength: 0.5, moments: [1, 0, -1] } }).ising.moments).toEqual([
      1, 0, -1,
    ]);
  });

  it('treats a JSON null as a wrong value, not as absent', () => {
    const error = specErrorOf(
      parseSpecText('{"chain": {"sites": 4, "boundary": null}, "levels": {"count": 3}}', 'json'),
    );
    expect(error.keyPath).toBe('chain.boundary');
    expect(error.message).toContain('got null');
  });
});

describe('overrides', () => {
  it('sets numbers, lists and bare strings', () => {
    const raw = tree(minimal);
    applyOverride(raw, 'exchange.strength=2.5');
    applyOverride(raw, 'levels.tunnelling=[1, 0.5]');
    applyOverride(raw, 'particles.kind=hardcore');
    applyOverride(raw, 'chain.boundary="periodic"');
    const spec = validateSpec(raw);
    expect(spec.exchange.strength).toBe(2.5);
    expect(spec.levels.tunnelling).toEqual([1, 0.5]);
    expect(spec.particles.kind).toBe('hardcore');
    expect(spec.chain.boundary).toBe('periodic');
  });

  it('creates missing tables and leaves siblings alone', () => {
    const raw = tree(minimal);
    expect(raw.solve).toBeUndefined();
    applyOverride(raw, 'solve.states=2');
    expect(raw.solve).toEqual({ states: 2 });
    applyOverride(raw, 'chain.boundary=periodic');
    expect(raw.chain).toEqual({ sites: 4, boundary: 'periodic' });
  });

  it('replaces one element of a list', () => {
    const raw = tree({ ...minimal, levels: { count: 3, detuning: [0, 1, 2] } });
    applyOverride(raw, 'levels.detuning[1]=0.3');
    expect(validateSpec(raw).levels.detuning).toEqual([0, 0.3, 2]);
  });

  it('removes a key with null, restoring its default', () => {
    const raw = tree({ ...minimal, solve: { states: 2 } });
    applyOverride(raw, 'solve.states=null');
    expect(validateSpec(raw).solve.states).toBe(4);
  });

  it('leaves validation to validateSpec', () => {
    const raw = tree(minimal);
    applyOverride(raw, 'levels.tunelling=1');
    expect(specErrorOf(raw).keyPath).toBe('levels.tunelling');
  });

  it('applies overrides in order when loading a file', () => {
    const path = writeScratch('override.toml', '[chain]\nsites = 4\n[levels]\ncount = 3\n');
    const { raw, spec } = loadSpec(path, ['particles.kind=boson', 'particles.number=2', 'particles.number=3']);
    expect(spec.particles.number).toBe(3);
    expect(raw.particles).toEqual({ kind: 'boson', number: 3 });
  });

  it('rejects bad syntax, naming the assignment', () => {
    for (const assignment of [
      'exchange.strength',
      '=3',
      'exchange.strength=',
      'exchange..strength=1',
      'levels.tunnelling[x]=1',
      '__proto__.polluted=1',
    ]) {
      const raw = tree(minimal);
      expect(() => applyOverride(raw, assignment)).toThrow(InputError);
      expect(() => applyOverride(raw, assignment)).toThrow(`"${assignment}"`);
    }
    expect(({} as Record<string, unknown>).polluted).toBeUndefined();
  });

  it('rejects paths that do not fit the tree, naming the key path', () => {
    const raw = tree({ ...minimal, levels: { count: 3, tunnelling: 1, detuning: [0, 1, 2] } });
    const cases: Array<[string, string]> = [
      ['levels.tunnelling[0]=2', 'levels.tunnelling'],
      ['levels.detuning[3]=2', 'levels.detuning[3]'],
      ['chain.sites.value=2', 'chain.sites'],
      ['solve.seeds[0]=2', 'solve.seeds'],
    ];
    for (const [assignment, keyPath] of cases) {
      let caught: unknown;
      try {
        applyOverride(raw, assignment);
      } catch (e) {
        caught = e;
      }
      expect(caught).toBeInstanceOf(SpecError);
      expect((caught as SpecError).keyPath).toBe(keyPath);
      expect((caught as SpecError).message).toContain(assignment);
    }
  });
});

describe('rotorWeights', () => {
  // Textbook rigid-rotor algebra (any quantum mechanics text on angular momentum):
  // |<n,0|cos θ|n+1,0>|^2 = (n+1)^2 / ((2n+1)(2n+3)). Worked by hand for the lowest links:
  // n=0: 1/(1*3) = 1/3, n=1: 4/(3*5) = 4/15, n=2: 9/(5*7) = 9/35; normalised by the n=0 value 1/3.
  it('matches the closed form for the lowest links', () => {
    const weights = rotorWeights(4);
    expect(weights).toHaveLength(3);
    expect(weights[0]).toBeCloseTo(1, 14);
    expect(weights[1]).toBeCloseTo(4 / 15 / (1 / 3), 14);
    expect(weights[1]).toBeCloseTo(0.8, 14);
    expect(weights[2]).toBeCloseTo((9 / 35) * 3, 14);
  });

  it('has one weight per open link and tends to 3/4 for high levels', () => {
    expect(rotorWeights(1)).toEqual([]);
    const many = rotorWeights(400);
    expect(many).toHaveLength(399);
    // (n+1)^2 / ((2n+1)(2n+3)) -> 1/4 as n grows, i.e. 3/4 after normalising.
    expect(many[398]).toBeCloseTo(0.75, 5);
    expect(() => rotorWeights(0)).toThrow(RangeError);
  });
});

describe('optional sections', () => {
  const names = OPTIONAL_SECTIONS.map((section) => section.name);

  it('never take the name of a core section, nor of each other', () => {
    for (const name of names) expect(CORE_SECTIONS).not.toContain(name);
    expect(new Set(names).size).toBe(names.length);
  });

  it('put their validated value into spec.extra, and only when present', () => {
    const spec = validateSpec({ ...tree(minimal), units: { energy_unit_hz: 1000 } });
    expect(Object.keys(spec.extra)).toEqual(['units']);
    expect(validateSpec(tree(minimal)).extra).toEqual({});
  });

  it.each(names)('[%s] names an unknown key in its error', (name) => {
    expectSpecError({ ...tree(minimal), [name]: { colour: 'red' } }, `${name}.colour`, 'unknown key');
  });

  it('are offered, after the core sections, for an unknown section', () => {
    expect(specErrorOf({ ...tree(minimal), unit: {} }).message).toBe(
      'unit: unknown section (did you mean units?); valid sections: chain, levels, exchange, ising, particles, solve, lattice, units, evolve, scan, spectrum, thermal, disorder',
    );
  });
});
