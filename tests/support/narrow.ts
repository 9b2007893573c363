// Checked narrowing for tests: a wrong shape fails the test with a message instead of a cast
// hiding it from the type checker.
import type { CutEntanglement } from '../../src/observables/entanglement.js';

/** The member of a `kind`-tagged union with the given kind (for example the pinned basis). */
export function ofKind<T extends { kind: string }, K extends T['kind']>(value: T, kind: K): Extract<T, { kind: K }> {
  if (value.kind !== kind) throw new Error(`expected kind '${kind}', got '${value.kind}'`);
  return value as Extract<T, { kind: K }>;
}

function isCut(x: unknown): x is CutEntanglement {
  if (typeof x !== 'object' || x === null) return false;
  const c = x as Record<string, unknown>;
  return (
    typeof c.cut === 'number' &&
    typeof c.von_neumann === 'number' &&
    typeof c.renyi_2 === 'number' &&
    Array.isArray(c.spectrum)
  );
}

/** The entanglement list of a record's observables (an open-ended map in the record type). */
export function entanglementOf(observables: Record<string, unknown>): CutEntanglement[] {
  const list = observables.entanglement;
  if (!Array.isArray(list) || !list.every(isCut))
    throw new Error(`expected a list of cut entanglements, got ${JSON.stringify(list)}`);
  return list;
}
