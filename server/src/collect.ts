// A full garbage collection on request, for the moments a large analysis has just become garbage.

import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';

/** Circuits from this many elements up are large enough that collecting right after dropping one pays for itself. */
export const COLLECT_FROM_ELEMENTS = 5000;

/**
 * Runs a full collection now, or does nothing when the runtime refuses one. V8 grows the heap
 * rather than collect while it has room, so a dropped analysis of a big netlist would otherwise
 * stay resident (and add to the peak) while the next one is built.
 */
export const collectGarbage: () => void = (() => {
  try {
    setFlagsFromString('--expose-gc');
    const gc: unknown = runInNewContext('gc');
    if (typeof gc === 'function') return gc as () => void;
  } catch {
    // Fall through: collection is an optimisation only.
  }
  return () => undefined;
})();
