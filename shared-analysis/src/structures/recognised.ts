// The transistors recognition found for a structure's devices, kept with the structure (not in its JSON) so the stages
// that read the structure next do not look each device up by name again.

import type { Transistor } from './topology';
import type { Structure } from './types';

/**
 * The property that holds them: keyed by a symbol and not enumerable, so JSON, `Object.keys`, spreading, structured
 * cloning and `copyStructure` leave it out (a copy, or a structure sent to another thread, looks its devices up by
 * name as before). Defined when the structure is made, so every structure keeps one layout.
 */
const RECOGNISED = Symbol('recognised transistors');

/** Keeps `transistors` (one per name of `s.devices`, in that order) with `s`. */
export function keepRecognisedTransistors(s: object, transistors: readonly Transistor[]): void {
  Object.defineProperty(s, RECOGNISED, { value: transistors });
}

/**
 * The transistor recognition found for `s.devices[at]`, or undefined (a structure made or copied elsewhere, or `at`
 * outside the list). A hint only: `Topology.transistorNamed` takes it when it is that topology's view of the name.
 */
export function recognisedTransistor(s: Structure, at: number): Transistor | undefined {
  const list = (s as { [RECOGNISED]?: readonly Transistor[] })[RECOGNISED];
  return list !== undefined && at >= 0 && at < list.length ? list[at] : undefined;
}
