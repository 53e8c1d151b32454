// The per-circuit index sizing reads: names without letter case, node incidence and supply-fixed nodes, against brute-force scans written here.

import { describe, expect, it } from 'vitest';
import { circuitIndex, elementNamed } from '../../../shared-analysis/src/fixes/circuit-index';
import { circuitOf } from './elaborated';

// Invented: two rails (one stacked on the other through a second source), a mirror, a floating divider.
const TEXT = `index test
VCC vcc 0 12
VREF vref vcc -2
R1 vcc r 10k
Q1 r r 0 QN
Q2 o r 0 QN
RL vref o 4.7k
Ra a b 1k
Rb b 0 1k
Rc b b 1k
.model QN NPN (IS=1e-15 BF=100)
.end
`;

describe('circuitIndex', () => {
  it('finds elements by name in any letter case, the first of a name', () => {
    const c = circuitOf(TEXT);
    expect(elementNamed(c, 'rl')).toBe(c.elements.find((e) => e.name === 'RL'));
    expect(elementNamed(c, 'Q2')?.kind).toBe('Q');
    expect(elementNamed(c, 'nothing')).toBeUndefined();
    expect(circuitIndex(c)).toBe(circuitIndex(c));
  });

  it('lists each node\'s elements once, in element order, as a scan of every element does', () => {
    const c = circuitOf(TEXT);
    const ix = circuitIndex(c);
    for (let k = 0; k < c.nodes.length; k++) {
      const listed = Array.from(ix.touching.subarray(ix.touchStart[k], ix.touchStart[k + 1]));
      const scan = c.elements.map((e, i) => (e.nodes.includes(k) ? i : -1)).filter((i) => i >= 0);
      expect(listed).toEqual(scan);
    }
  });

  it('marks ground and every node joined to it through voltage sources as fixed, and those sources as pinning', () => {
    const c = circuitOf(TEXT);
    const ix = circuitIndex(c);
    const fixedNames = c.nodes.filter((_, k) => ix.fixed[k] === 1).sort();
    expect(fixedNames).toEqual(['0', 'vcc', 'vref'].sort());
    expect(ix.pinning.map((e) => e.name)).toEqual(['VCC', 'VREF']);
    expect(ix.splittable).toBe(true);
  });

  it('does not offer to split a circuit with a controlled source', () => {
    const c = circuitOf('ctl\nV1 a 0 1\nR1 a b 1k\nE1 c 0 b 0 2\nR2 c 0 1k\n.end\n');
    expect(circuitIndex(c).splittable).toBe(false);
  });
});
