// Garbage collection on request: a full one for the moments a large analysis has just become garbage, a young-generation one between the parts of a large result.

import { getHeapSpaceStatistics, setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';

/** Circuits from this many elements up are large enough that collecting right after dropping one pays for itself. */
export const COLLECT_FROM_ELEMENTS = 5000;

/** The runtime's collection function (with `--expose-gc`'s options), or undefined when it refuses one. */
const runtimeCollector: ((options?: { type: 'major' | 'minor' }) => void) | undefined = (() => {
  try {
    setFlagsFromString('--expose-gc');
    const gc: unknown = runInNewContext('gc');
    if (typeof gc === 'function') return gc as (options?: { type: 'major' | 'minor' }) => void;
  } catch {
    // Fall through: collection is an optimisation only.
  }
  return undefined;
})();

/**
 * Runs a full collection now, or does nothing when the runtime refuses one. V8 grows the heap
 * rather than collect while it has room, so a dropped analysis of a big netlist would otherwise
 * stay resident (and add to the peak) while the next one is built.
 */
export const collectGarbage: () => void = runtimeCollector ? () => runtimeCollector() : () => undefined;

/**
 * Two full collections in a row, for a thread that has just let a large analysis go and is about to hold less for a
 * while. After one collection the worker's heap stayed committed at its analysis's size (105 MB for the 50,000-element
 * netlist, 51 MB of it in use) until the next analysis, through the main thread's take-in of the result, where the
 * server's memory peaks; after a second one right after the first it was 83 MB, and the process's memory at the end of
 * that take-in 20-25 MB lower (one process driving the worker as the server does, load 5; docs/PERFORMANCE.md). As far
 * as V8's heap statistics show, the pages where an analysis's garbage lay mixed with what lives on are emptied by the
 * first collection's sweeping and given back only at the next one (a list of objects dropped whole goes back at once).
 * The second costs as much CPU as the first (a marking of what is live, 150-300 ms there).
 */
export function collectAndReleaseGarbage(): void {
  collectGarbage();
  collectGarbage();
}

/** Bytes in use in the young generation (its semi-space and its large objects). */
function youngGenerationBytes(): number {
  let bytes = 0;
  for (const space of getHeapSpaceStatistics()) if (space.space_name === 'new_space' || space.space_name === 'new_large_object_space') bytes += space.space_used_size;
  return bytes;
}

/**
 * Collects the young generation only, now, when it holds more than `bytes` (nothing when the runtime refuses).
 * A young collection's cost is what survives it: while a large result is taken in nearly everything new does,
 * and V8 collects when its semi-space (16 MB) is full, a pause of that much copying inside whatever task filled
 * it. Called between parts with a few megabytes, it copies that much at a moment of the caller's choosing. Not
 * after every part: objects that live through two collections are moved to the old generation, and the
 * parts in flight would be among them.
 */
export function collectYoungGenerationPast(bytes: number): void {
  if (runtimeCollector && youngGenerationBytes() > bytes) runtimeCollector({ type: 'minor' });
}
