// A solved point as text: its plan before the solve, its record after.

import { formatBytes } from '../format/bytes.js';
import { columnScale, describeDimension, fmt, fmtNoise, fmtSmall, plural, table } from '../format/tables.js';
import type { PointPlan, PointRecord } from './solvePoint.js';
import type { StateRecord } from './record.js';
import { OBSERVABLES } from '../observables/catalogue.js';
import { isChainLattice, latticeOf } from '../spec/lattice.js';
import type { Spec } from '../spec/spec.js';
import { pointGroupText } from '../symmetry/group.js';

/** Where the sites are, in a few words: "chain", "square lattice 2x3", "custom array, 1 vacancy". */
export function siteArrangement(spec: Spec): string {
  const lattice = latticeOf(spec);
  if (!lattice || (isChainLattice(lattice) && lattice.vacancies.length === 0)) return 'chain';
  const shape = lattice.shape === 'custom' ? 'custom array' : `${lattice.shape} lattice ${lattice.size.join('x')}`;
  return lattice.vacancies.length > 0 ? `${shape}, ${plural(lattice.vacancies.length, 'vacancy', 'vacancies')}` : shape;
}

export function describePlan(plan: PointPlan, limit: number): string {
  const lines = [
    `particles        ${plan.model.kind}, ${plan.model.sites} sites x ${plan.model.levels} levels`,
    `basis dimension  ${describeDimension(plan.dimension)}`,
    `operator         ${plan.storage === 'on-the-fly' ? 'applied on the fly (no stored matrix)' : 'stored sparse matrix'}` +
      (plan.nonzeros !== null ? `, ${plan.nonzeros} nonzeros` : ''),
    `arithmetic       ${plan.model.isComplex ? 'complex (Peierls phases)' : 'real'}`,
    `memory estimate  ${formatBytes(plan.memory.totalBytes)} (limit ${formatBytes(limit)})`,
  ];
  if (plan.symmetries.length > 0) {
    const used = plan.symmetries.filter((c) => plan.used?.[c.name]).map((c) => c.name);
    const howMany = plan.sectorThreads > 1 ? `, ${plan.sectorThreads} at a time` : '';
    lines.splice(
      3,
      0,
      `symmetries       ${used.length > 0 ? used.join(', ') + ` (checked on the operator; solved sector by sector${howMany})` : 'none found'}`,
    );
    // which mirrors, rotations or automorphisms were kept, left unused or broken
    const point = plan.symmetries.find(
      (c) => (c.name === 'point_group' || c.name === 'automorphism') && plan.used?.[c.name],
    );
    if (point) lines.splice(4, 0, `  ${point.name}: ${point.detail}`);
  }
  for (const [part, bytes] of Object.entries(plan.memory.parts))
    lines.push(`  ${part.padEnd(14)} ${formatBytes(bytes)}`);
  return lines.join('\n');
}

/** How tables write a quantum number of a symmetry the model does not have. */
export const NOT_APPLICABLE = 'n/a';

/** A +1 / -1 quantum number as the JSON has it, or n/a. */
function sign(value: number | null): string {
  if (value === null) return NOT_APPLICABLE;
  return value > 0 ? '+1' : '-1';
}

/** The record as text; `arrangement` names the geometry (siteArrangement; a chain when not given). */
export function describeRecord(r: PointRecord, arrangement = 'chain'): string {
  const out: string[] = [];
  out.push(
    `${r.basis.kind} ${arrangement}: ${r.basis.sites} sites x ${r.basis.levels} levels, dimension ${r.basis.dimension}, ` +
      `${r.solver.method} (${plural(r.solver.iterations, 'product')}, ${fmt(r.solver.seconds, 3)} s)` +
      (r.solver.converged ? '' : '  NOT CONVERGED'),
  );
  out.push('');
  const labels = r.sectors;
  // a point-group column only when the solve used one
  const pointColumn = labels?.some((l) => l.point_group !== undefined) ?? false;
  const quantum = (k: number) => {
    const l = labels?.[k];
    if (!l) return [];
    return [
      l.momentum === null
        ? NOT_APPLICABLE
        : typeof l.momentum === 'number'
          ? `${l.momentum}`
          : `(${l.momentum.join(',')})`,
      sign(l.parity),
      sign(l.level_flip),
      l.charge === null ? NOT_APPLICABLE : String(l.charge),
      ...(pointColumn ? [l.point_group ? pointGroupText(l.point_group) : NOT_APPLICABLE] : []),
    ];
  };
  // Differences of energies are rounding noise below the energies' own scale.
  const energyScale = columnScale(r.energies);
  out.push(
    table(
      [
        'state',
        'energy',
        'E - E0',
        'residual',
        ...(labels ? ['k (2pi/L)', 'parity', 'flip', 'charge'] : []),
        ...(pointColumn ? ['point group'] : []),
      ],
      r.energies.map((e, k) => [
        String(k),
        fmtNoise(e, energyScale, 12),
        fmtNoise(e - r.energies[0], energyScale, 8),
        fmtSmall(r.solver.residuals[k], 1),
        ...quantum(k),
      ]),
    ),
  );
  if (labels?.some((l) => l.momentum === null || l.parity === null || l.level_flip === null || l.charge === null)) {
    out.push(`(${NOT_APPLICABLE}: the model has no such symmetry)`);
  }
  out.push('');
  out.push(
    `gap ${fmtNoise(r.gap, energyScale)}   ground-state degeneracy ${r.solver.degeneracy}   string width ${fmtNoise(r.observables.string_width, 1, 8)}`,
  );
  if (r.solver.degeneracy_complete === false) {
    out.push(
      `WARNING: not every copy of the ground level was found (${r.solver.degeneracy} found, cap or budget reached); the observables below average only those`,
    );
  }
  const cuts = r.observables.entanglement as
    { cut?: number; sites?: number[]; von_neumann: number; renyi_2: number }[] | undefined;
  for (const c of cuts ?? []) {
    const which = c.sites ? `sites ${c.sites.join(', ')}` : `sites 0..${(c.cut ?? 0) - 1}`;
    out.push(
      `entanglement of ${which} with the rest: von Neumann ${fmt(c.von_neumann, 8)}, Renyi-2 ${fmt(c.renyi_2, 8)}`,
    );
  }
  out.push('');
  const N = r.basis.levels;
  // Itinerant kinds (src/observables/itinerant.ts): mean occupations per mode, densities, pairs on a site.
  const o = r.observables as PointRecord['observables'] & {
    density?: number[];
    double_occupancy?: number[];
    condensate_fraction?: number;
    momentum_distribution?: number[] | null;
  };
  const itinerant = Array.isArray(o.density) && Array.isArray(o.double_occupancy);
  const header = [
    'site',
    ...Array.from({ length: N }, (_, n) => (itinerant ? `<n_${n}>` : `P(n=${n})`)),
    'mean n',
    'spread',
    ...(itinerant ? ['density', 'pairs'] : []),
  ];
  // Probabilities and moments of levels: rounding noise is measured against 1 or the column's size.
  const meanScale = columnScale(r.observables.level_mean, 1);
  const spreadScale = columnScale(r.observables.spread, 1);
  const densityScale = itinerant ? columnScale(o.density!, 1) : 1;
  const rows = r.observables.populations.map((p, i) => [
    String(i),
    ...p.map((q) => fmtNoise(q, 1, 6)),
    fmtNoise(r.observables.level_mean[i], meanScale, 6),
    fmtNoise(r.observables.spread[i], spreadScale, 6),
    ...(itinerant ? [fmtNoise(o.density![i], densityScale, 6), fmtNoise(o.double_occupancy![i], densityScale, 6)] : []),
  ]);
  out.push(table(header, rows));
  if (itinerant) {
    out.push('');
    out.push(
      `condensate fraction ${fmt(o.condensate_fraction, 8)}   (largest eigenvalue of the one-body density matrix / particle number)`,
    );
    if (o.momentum_distribution) {
      out.push(
        `momentum distribution n(k), k = 2 pi m / L, m = 0..${o.momentum_distribution.length - 1}: ${o.momentum_distribution.map((x) => fmt(x, 6)).join('  ')}`,
      );
    }
  }
  if (r.states) out.push('', ...describeStates(r.states, r.energies[0], energyScale));
  return out.join('\n');
}

/**
 * solve.observables = "each": one row per state with its scalar observables and the site means of
 * the per-site ones (names, order and heads from the catalogue); the full values are in the JSON.
 */
function describeStates(states: StateRecord[], e0: number, energyScale: number): string[] {
  const shown = OBSERVABLES.filter(
    (o) =>
      o.record !== undefined &&
      ((o.shape === 'scalar' && typeof states[0].observables[o.name] === 'number') ||
        (o.siteMean === true && Array.isArray(states[0].observables[o.name]))),
  );
  const valueOf = (s: StateRecord, name: string): number => {
    const v = s.observables[name];
    return Array.isArray(v) ? (v as number[]).reduce((a, b) => a + b, 0) / v.length : (v as number);
  };
  const scales = shown.map((o) =>
    columnScale(
      states.map((s) => valueOf(s, o.name)),
      1,
    ),
  );
  const note = (s: StateRecord): string =>
    [s.mixture_of ? `mixture of ${s.mixture_of.join(', ')}` : '', s.level_incomplete ? 'level incomplete' : '']
      .filter(Boolean)
      .join('; ');
  const lines = [
    'each state\'s observables (solve.observables = "each"; per-site ones as their mean over sites):',
    table(
      ['state', 'E - E0', ...shown.map((o) => (o.siteMean ? `${o.short} mean` : o.short)), 'note'],
      states.map((s) => [
        String(s.index),
        fmtNoise(s.energy - e0, energyScale, 8),
        ...shown.map((o, c) => fmtNoise(valueOf(s, o.name), scales[c], 6)),
        note(s),
      ]),
    ),
  ];
  if (states.some((s) => s.mixture_of))
    lines.push('(mixture of: copies of one level found in one sector, reported as their equal mixture)');
  if (states.some((s) => s.level_incomplete))
    lines.push(
      '(level incomplete: the level may have copies that were not found, beyond the states asked for; its values cover only those found)',
    );
  return lines;
}
