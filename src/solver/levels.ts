// The solved low spectrum grouped into levels, for observables of each state (solve.observables =
// "each"). Two states belong to one level when they lie within the degeneracy window of the
// level's lowest energy (the window solver.degeneracy counts ground copies in). Copies of a level
// found in the same sector span a space in which no one basis vector is singled out (the solver's
// choice is arbitrary), so they are reported as their equal mixture; copies in different sectors
// keep their own quantum numbers and their own observables.

import { degeneracyWindow } from './eigensolver.js';

export interface SpectrumFound {
  /** Every state found, ascending: the lowest `solve.states` and any further copies of the ground level. */
  energies: ArrayLike<number>;
  /** A key per state naming its sector, or null when the whole space was solved as one. */
  sectors: string[] | null;
  tolerance: number;
  /** States in the space solved: when every one was found, no level can continue beyond them. */
  dimension: number;
  /** Whether every state converged to the tolerance; if not, no level is known to be whole. */
  converged: boolean;
  /** Whether every copy of the ground level was found (the solver's degeneracyComplete). */
  groundComplete: boolean;
}

export interface StateGroup {
  /** Indices of the states mixed in equal weights (one index: a state of its own). */
  members: number[];
  /** True when the level may have copies that were not found, so `members` may be only part of it. */
  incomplete: boolean;
}

/**
 * Groups the found states into equal mixtures (copies of one level in one sector), in order of
 * their lowest member. A level is marked incomplete when the solver did not converge, when it is
 * the ground level and its copies were not all found, or when it is the highest level found
 * (other than the ground level) and the space was not solved in full: nobody looked for copies
 * beyond the requested count, so its last copy may lie just past the cut.
 */
export function groupLevels(found: SpectrumFound): StateGroup[] {
  const { energies, sectors, tolerance } = found;
  const count = energies.length;
  // Level of each state: a new level starts beyond the window of the current level's lowest energy.
  const levelOf = new Array<number>(count);
  let levelStart = 0;
  let level = -1;
  for (let k = 0; k < count; k++) {
    if (k === 0 || energies[k] - energies[levelStart] > degeneracyWindow(energies[levelStart], tolerance)) {
      level++;
      levelStart = k;
    }
    levelOf[k] = level;
  }
  const top = count > 0 ? levelOf[count - 1] : -1;
  const incompleteLevel = (l: number): boolean => {
    if (!found.converged) return true;
    if (l === 0) return !found.groundComplete;
    return l === top && count < found.dimension;
  };
  const groups: StateGroup[] = [];
  const open = new Map<string, StateGroup>();
  for (let k = 0; k < count; k++) {
    const key = `${levelOf[k]}|${sectors ? sectors[k] : ''}`;
    let group = open.get(key);
    if (!group) {
      group = { members: [], incomplete: incompleteLevel(levelOf[k]) };
      open.set(key, group);
      groups.push(group);
    }
    group.members.push(k);
  }
  return groups;
}
