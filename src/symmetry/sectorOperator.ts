// The pinned Hamiltonian inside one symmetry sector, stored in compressed rows.

import type { PinnedBasis } from '../basis/basis.js';
import type { SectorBasis } from './sectorBasis.js';
import type { Model } from '../model/model.js';
import type { VectorArena } from '../simd/arena.js';
import { CsrBuilder, type BuiltRows, type ChunkSpares, type CsrOperator } from '../operator/csr.js';
import { columnBuffer, PinnedColumns } from '../operator/pinnedRows.js';

/**
 * Row a holds <r~_a|H|r~_b> = conj(<r~_b|H|r~_a>), and column a is H|r~_a> =
 * sum_s <s|H|r_a> chi(g_s) sqrt(n_b/n_a) |r~_b> with s = g_s r_b, so each row comes from the
 * column of its own representative, conjugated.
 *
 * With `spares`, the build reuses chunks an earlier build handed back (and hands back its own).
 * With `rest`, rows from `rest.from` on are built by another thread: `rest.start` asks for them,
 * and `rest.take` waits for them once this thread has built the rows before.
 */
export function buildSectorOperator(
  model: Model,
  basis: PinnedBasis,
  sector: SectorBasis,
  arena?: VectorArena | null,
  spares?: ChunkSpares | null,
  rest?: { from: number; start: () => void; take: () => BuiltRows } | null,
): CsrOperator {
  const isComplex = model.isComplex || sector.complexCharacters;
  const split = rest && rest.from > 0 && rest.from < sector.dim ? rest : null;
  split?.start();
  const builder = new CsrBuilder(sector.dim, isComplex, spares);
  buildSectorRows(model, basis, sector, 0, split ? split.from : sector.dim, builder);
  if (split) builder.absorb(split.take());
  return builder.finish(arena);
}

/** Rows [from, to) of a sector's matrix into `builder` (which then holds to - from rows). */
export function buildSectorRows(
  model: Model,
  basis: PinnedBasis,
  sector: SectorBasis,
  from: number,
  to: number,
  builder: CsrBuilder,
): void {
  const columns = new PinnedColumns(model, basis);
  const buf = columnBuffer(model);
  const { repOf, elementOf, reps } = sector.orbits;
  const { sectorOfRep, norm, charRe, charIm, repIndex } = sector;
  const sqrtNorm = norm.map(Math.sqrt);
  for (let a = from; a < to; a++) {
    columns.of(reps[repIndex[a]], buf);
    const inv = 1 / sqrtNorm[a];
    for (let e = 0; e < buf.count; e++) {
      const hr = buf.re[e];
      const hi = buf.im[e];
      if (hr === 0 && hi === 0) continue;
      const t = buf.targets[e];
      const b = sectorOfRep[repOf[t]];
      if (b < 0) continue;
      const g = elementOf[t];
      const xr = charRe[g];
      const xi = charIm[g];
      const f = sqrtNorm[b] * inv;
      // conj(h chi) * sqrt(n_b / n_a)
      const vr = (hr * xr - hi * xi) * f;
      const vi = -(hr * xi + hi * xr) * f;
      if (vr === 0 && vi === 0) continue;
      builder.add(b, vr, vi);
    }
    builder.endRow();
  }
}
