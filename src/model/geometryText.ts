// The geometry as `check` prints it for a spec with [lattice]: the sites with their positions, the
// hopping bonds, and the distinct values of the exchange and diagonal-term coupling matrices with how
// many pairs take each, so a user sees what the shape, the field and the range made of the couplings.

import { fmt, plural, table } from '../format/tables.js';
import type { Model, PairList } from './model.js';

/** Sites and bonds listed one by one up to this many; beyond, only the count. */
const LISTED = 64;

/** Coupling values this close (relative to the largest) are one value: rounding, not physics. */
const SAME_VALUE = 1e-12;

function coordinate(x: number): string {
  return fmt(Math.abs(x) < 1e-14 ? 0 : x, 6);
}

/** Distinct values of a pair list with their pair counts, largest magnitude first. */
export function distinctCouplings(pairs: PairList): { value: number; pairs: number }[] {
  let scale = 0;
  for (const v of pairs.value) scale = Math.max(scale, Math.abs(v));
  const sorted = Array.from(pairs.value).sort((a, b) => a - b);
  const groups: { value: number; pairs: number }[] = [];
  for (const v of sorted) {
    const last = groups[groups.length - 1];
    if (last && Math.abs(v - last.value) <= SAME_VALUE * scale) last.pairs++;
    else groups.push({ value: v, pairs: 1 });
  }
  return groups.sort((a, b) => Math.abs(b.value) - Math.abs(a.value) || b.value - a.value);
}

export function describeGeometry(model: Model): string[] {
  const g = model.geometry;
  const lines: string[] = [];
  const field = Array.from(g.field, coordinate).join(', ');
  const periodic = g.boxes.length > 0 ? `, ${plural(g.boxes.length, 'periodic direction')}` : '';
  lines.push(`geometry: ${g.shape}, ${plural(g.sites, 'site')}${periodic}, field [${field}]`);
  // With vacancies the model's numbering differs from the lattice's: show both.
  const shift = Array.from(g.latticeIndex).some((s, k) => s !== k);
  if (g.sites <= LISTED) {
    const header = shift ? ['site', 'lattice site', 'x', 'y', 'z'] : ['site', 'x', 'y', 'z'];
    const rows = Array.from({ length: g.sites }, (_, k) => {
      const xyz = [0, 1, 2].map((c) => coordinate(g.positions[3 * k + c]));
      return shift ? [String(k), String(g.latticeIndex[k]), ...xyz] : [String(k), ...xyz];
    });
    lines.push(table(header, rows));
  } else lines.push(`sites: ${g.sites} (not listed beyond ${LISTED})`);

  const bonds = model.hoppingBonds;
  if (model.kind !== 'pinned') {
    const source = g.customBonds ? 'lattice.bonds' : 'nearest neighbours';
    const listed =
      bonds.count <= LISTED && bonds.count > 0
        ? `: ${Array.from({ length: bonds.count }, (_, b) => `${bonds.i[b]}-${bonds.j[b]}`).join(' ')}`
        : '';
    lines.push(`hopping bonds (${source}): ${bonds.count}${listed}`);
  }
  for (const [name, pairs] of [
    ['exchange V_ij', model.exchangePairs],
    ['diagonal term W_ij', model.isingPairs],
  ] as const) {
    if (pairs.count === 0) {
      lines.push(`${name}: no coupled pair`);
      continue;
    }
    const groups = distinctCouplings(pairs);
    lines.push(`${name}: ${plural(pairs.count, 'coupled pair')}, ${plural(groups.length, 'distinct value')}`);
    const shown = groups.slice(0, LISTED);
    lines.push(
      table(
        ['value', 'pairs'],
        shown.map((group) => [fmt(group.value), String(group.pairs)]),
      ),
    );
    if (groups.length > shown.length) lines.push(`(${groups.length - shown.length} smaller values not listed)`);
  }
  return lines;
}
