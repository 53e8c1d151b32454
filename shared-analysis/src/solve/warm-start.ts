// What a re-analysis keeps of the last one to start Newton from its solution: the solution vector, its temperature, and a fingerprint of the unknowns it is indexed by.

import type { Circuit } from '../circuit';

/**
 * The converged nominal solution of an earlier analysis, for the next analysis of an edited text
 * to start Newton from. Used only when the new circuit has the same unknowns (`unknowns` equal and
 * the same length): a value edit keeps them, a topology edit does not.
 */
export interface WarmStart {
  /** Fingerprint of the MNA unknowns (see `unknownsFingerprint`). */
  unknowns: string;
  /** The solution vector (`DcSolveResult.x`). */
  x: Float64Array;
  /** The temperature it was solved at (°C): a start at another temperature shifts the junctions first. */
  temperatureC: number;
}

/**
 * A fingerprint of what the MNA unknowns of `circuit` stand for: the node names in order and, per
 * element in order, its kind, name and nodes, and for a resistor whether it is 0 Ω (solved as a
 * branch with a current unknown). Two circuits with equal fingerprints number their unknowns the
 * same way, so one's solution is a meaningful start for the other. Values other than that do not
 * enter: a value edit keeps the fingerprint. Two 32-bit FNV-1a hashes with different seeds; a
 * collision could only give Newton a poor start, never a wrong answer.
 */
export function unknownsFingerprint(circuit: Circuit): string {
  let a = 0x811c9dc5;
  let b = 0x01000193 ^ 0x5bd1e995;
  const add = (s: string) => {
    for (let i = 0; i < s.length; i++) {
      const c = s.charCodeAt(i);
      a = Math.imul(a ^ c, 0x01000193);
      b = Math.imul(b ^ c, 0x01000193) ^ (b >>> 15);
    }
    a = Math.imul(a ^ 0xff, 0x01000193);
    b = Math.imul(b ^ 0xfe, 0x01000193);
  };
  for (const n of circuit.nodes) add(n);
  add('|');
  for (const e of circuit.elements) {
    add(e.kind);
    add(e.name);
    for (const n of e.nodes) add(String(n));
    if (e.kind === 'R') add(e.resistance === 0 ? '0' : '*');
  }
  return `${circuit.nodes.length}:${circuit.elements.length}:${(a >>> 0).toString(16)}:${(b >>> 0).toString(16)}`;
}
