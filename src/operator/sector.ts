// The pinned Hamiltonian inside one symmetry sector, stored in compressed rows.

import type { PinnedBasis } from '../basis.js';
import type { SectorBasis } from '../basis/sectors.js';
import type { Model } from '../model.js';
import type { VectorArena } from '../simd.js';
import { CsrBuilder, type ChunkSpares, type CsrOperator } from './csr.js';
import { columnBuffer, PinnedColumns } from './pinnedRows.js';

/**
 * Row a holds <r~_a|H|r~_b> = conj(<r~_b|H|r~_a>), and column a is H|r~_a> =
 * sum_s <s|H|r_a> chi(g_s) sqrt(n_b/n_a) |r~_b> with s = g_s r_b, so each row comes from the
 * column of its own representative, conjugated.
 */
/** With `spares`, the build reuses chunks an earlier build handed back (and hands back its own). */
export function buildSectorOperator(model: Model, basis: PinnedBasis, sector: SectorBasis, arena?: VectorArena | null, spares?: ChunkSpares | null): CsrOperator {
  const isComplex = model.isComplex || sector.complexCharacters;
  const columns = new PinnedColumns(model, basis);
  const buf = columnBuffer(model);
  const builder = new CsrBuilder(sector.dim, isComplex, spares);
  const { repOf, elementOf, reps } = sector.orbits;
  const { sectorOfRep, norm, charRe, charIm, repIndex } = sector;
  const sqrtNorm = norm.map(Math.sqrt);
  for (let a = 0; a < sector.dim; a++) {
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
  return builder.finish(arena);
}
