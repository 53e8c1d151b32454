// The MNA layout's numbering and linear stamps against a plain numbering and a dense stamp sum written out here (the usual MNA rules: Ho, Ruehli and Brennan, IEEE Trans. Circuits Syst. 22, 1975).

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { MnaLayout } from '../../../shared-analysis/src/solve/mna';
import { circuit, model } from './build';

const QS = model('QS', 'npn', { IS: 1e-15, BF: 100, RB: 50, RC: 20 });
const DS = model('DS', 'd', { IS: 1e-14, RS: 5 });

/** Every linear kind, a 0 Ω and an unusable resistor, devices with and without internal nodes. */
const MIXED = circuit([
  ['V', 'VCC', 'vcc', '0', 5],
  ['R', 'R1', 'vcc', 'a', 1e3],
  ['R', 'R0', 'a', 'b', 0],
  ['Q', 'Q1', 'b', 'c', '0', QS],
  ['R', 'RNAN', 'c', '0', Number.NaN],
  ['L', 'L1', 'c', 'd', 1e-6],
  ['D', 'D1', 'd', '0', DS],
  ['E', 'E1', 'e', '0', 'a', 'b', 2],
  ['R', 'R2', 'e', '0', 470],
  ['G', 'G1', 'a', '0', 'd', '0', 1e-3],
  ['H', 'H1', 'f', '0', 'VCC', 10],
  ['R', 'R3', 'f', '0', 2.2e3],
  ['F', 'F1', 'b', '0', 'L1', 0.5],
  ['I', 'I1', '0', 'd', 1e-3],
  ['C', 'C1', 'a', '0', 1e-9],
]);

/** The numbering by its rule: the netlist nodes but ground, each device's internal nodes in element order, then the branch currents in element order. */
function plainNumbering(c: Circuit): string[] {
  const out: string[] = [];
  for (let i = 1; i < c.nodes.length; i++) out.push(`node ${c.nodes[i]}`);
  for (const el of c.elements) {
    if (el.kind === 'Q' && el.model.params.RC > 0) out.push(`${el.name} internal collector`);
    if (el.kind === 'Q' && el.model.params.RB > 0) out.push(`${el.name} internal base`);
    if (el.kind === 'D' && el.model.params.RS > 0) out.push(`${el.name} internal anode`);
  }
  for (const el of c.elements) {
    const branch = el.kind === 'V' || el.kind === 'L' || el.kind === 'E' || el.kind === 'H' || (el.kind === 'R' && el.resistance === 0);
    if (branch) out.push(`the current through ${el.name}`);
  }
  return out;
}

/** The linear part of the MNA matrix summed element by element into a dense n × n array (row-major), from the netlist alone. */
function denseLinear(c: Circuit, layout: MnaLayout): Float64Array {
  const n = layout.size;
  const m = new Float64Array(n * n);
  const add = (r: number, col: number, v: number) => {
    if (r >= 0 && col >= 0) m[r * n + col] += v;
  };
  const branchOf = (name: string) => layout.unknowns.findIndex((u) => u.kind === 'branch' && c.elements[u.element].name === name);
  for (const el of c.elements) {
    const a = el.nodes[0] - 1;
    const b = el.nodes[1] - 1;
    const incidence = (k: number) => {
      add(a, k, 1);
      add(b, k, -1);
      add(k, a, 1);
      add(k, b, -1);
    };
    if (el.kind === 'R' && el.resistance > 0) {
      const g = 1 / el.resistance;
      add(a, a, g);
      add(b, b, g);
      add(a, b, -g);
      add(b, a, -g);
    } else if ((el.kind === 'R' && el.resistance === 0) || el.kind === 'V' || el.kind === 'L') incidence(branchOf(el.name));
    else if (el.kind === 'E') {
      const k = branchOf(el.name);
      incidence(k);
      add(k, el.nodes[2] - 1, -el.gain);
      add(k, el.nodes[3] - 1, el.gain);
    } else if (el.kind === 'G') {
      add(a, el.nodes[2] - 1, el.gain);
      add(a, el.nodes[3] - 1, -el.gain);
      add(b, el.nodes[2] - 1, -el.gain);
      add(b, el.nodes[3] - 1, el.gain);
    } else if (el.kind === 'H') {
      const k = branchOf(el.name);
      incidence(k);
      add(k, branchOf(el.control), -el.gain);
    } else if (el.kind === 'F') {
      add(a, branchOf(el.control), el.gain);
      add(b, branchOf(el.control), -el.gain);
    }
  }
  return m;
}

describe('MNA layout', () => {
  const layout = new MnaLayout(MIXED);

  it('numbers nodes, internal nodes and branch currents as the rule says, and names each', () => {
    const expected = plainNumbering(MIXED);
    expect(layout.size).toBe(expected.length);
    expect(Array.from({ length: layout.size }, (_, k) => layout.describeUnknown(k))).toEqual(expected);
    // The listed unknowns say the same as the descriptions and the kind codes.
    layout.unknowns.forEach((u, k) => {
      const text = u.kind === 'node' ? `node ${MIXED.nodes[u.node]}` : u.kind === 'internal' ? u.label : `the current through ${MIXED.elements[u.element].name}`;
      expect(text).toBe(expected[k]);
      expect(layout.unknownKind[k]).toBe(u.kind === 'node' ? 0 : u.kind === 'internal' ? 1 : 2);
    });
  });

  it('sums the linear stamps into the pattern as the dense sum does', () => {
    const n = layout.size;
    const fromLayout = new Float64Array(n * n);
    const { rows, cols } = layout.pattern;
    for (let e = 0; e < rows.length; e++) fromLayout[rows[e] * n + cols[e]] += layout.linearValues[e];
    const dense = denseLinear(MIXED, layout);
    for (let k = 0; k < n * n; k++) expect(fromLayout[k]).toBeCloseTo(dense[k], 15);
  });

  it('keeps each resistor stamp where its conductance sits, and none for an unusable value', () => {
    const { rows, cols } = layout.pattern;
    MIXED.elements.forEach((el, i) => {
      const stamp = layout.resistorStamps.get(i);
      if (el.kind !== 'R' || Number.isNaN(el.resistance)) {
        expect(stamp).toBeUndefined();
        expect(layout.resistorStamps.conductance(i)).toBeUndefined();
        return;
      }
      const a = el.nodes[0] - 1;
      const b = el.nodes[1] - 1;
      if (el.resistance === 0) {
        expect(stamp?.kind).toBe('short');
        const k = layout.branchOfElement.get(i)!;
        expect(stamp).toMatchObject({ branch: k });
        const d = layout.resistorStamps.shortDiagonal(i);
        expect([rows[d], cols[d]]).toEqual([k, k]);
        return;
      }
      expect(stamp?.kind).toBe('conductance');
      expect(layout.resistorStamps.conductance(i)).toBe(1 / el.resistance);
      const where = [
        [a, a],
        [b, b],
        [a, b],
        [b, a],
      ];
      (stamp as { positions: readonly number[] }).positions.forEach((p, q) => {
        const [r, c] = where[q];
        if (r < 0 || c < 0) expect(p).toBe(-1);
        else expect([rows[p], cols[p]]).toEqual([r, c]);
      });
    });
  });

  it('moves a resistor stamp on a value edit by the conductance difference', () => {
    const edited = { ...MIXED, elements: MIXED.elements.map((el) => (el.name === 'R2' ? { ...el, resistance: 1e3 } : el)) };
    const moved = new MnaLayout(MIXED);
    const r2 = MIXED.elements.findIndex((el) => el.name === 'R2');
    expect(moved.adoptResistances(edited, [r2])).toBe(true);
    const rebuilt = new MnaLayout(edited);
    for (let e = 0; e < rebuilt.linearValues.length; e++) expect(moved.linearValues[e]).toBeCloseTo(rebuilt.linearValues[e], 15);
    expect(moved.resistorStamps.conductance(r2)).toBe(1e-3);
    expect(moved.readers.find((r) => r.element === r2)).toMatchObject({ g: 1e-3 });
    // The operating point reads each conductance reader's g from the stamps' column: the same number before and after the edit.
    for (const layout of [new MnaLayout(MIXED), moved]) {
      for (const r of layout.readers) if (r.kind === 'conductance') expect(layout.resistorStamps.conductanceOrZero(r.element)).toBe(r.g);
    }
  });

  it('lists each kind\'s usable instances, their terminals and their pattern slots, however the kinds interleave and whatever is left out', () => {
    // Kinds interleaved, and a diode whose node list is cut short so the layout leaves it out (dc-bad-node).
    const c = circuit([
      ['V', 'V1', 'a', '0', 1],
      ['D', 'D1', 'a', 'b', DS],
      ['Q', 'Q1', 'b', 'c', '0', QS],
      ['D', 'DCUT', 'c', '0', DS],
      ['R', 'R1', 'c', '0', 100],
      ['Q', 'Q2', 'a', 'b', 'c', QS],
      ['D', 'D2', 'b', '0', DS],
    ]);
    c.elements[3].nodes = [c.elements[3].nodes[0]];
    const l = new MnaLayout(c);
    expect(l.skipped).toEqual(new Set([3]));
    // The pattern slot of (row, col) found by scanning the pattern, −1 when either side is ground.
    const slotOf = (row: number, col: number) => {
      if (row < 0 || col < 0) return -1;
      for (let p = 0; p < l.pattern.rows.length; p++) if (l.pattern.rows[p] === row && l.pattern.cols[p] === col) return p;
      return -2;
    };
    const elementsOf = (letter: string) => c.elements.flatMap((el, i) => (el.kind === letter && !l.skipped.has(i) ? [i] : []));
    expect(l.tables.length).toBe(2);
    for (const table of l.tables) {
      const { count, elementIndex, terminals, positions } = table.instances;
      const t = table.kind.terminalCount;
      expect(Array.from(elementIndex)).toEqual(elementsOf(c.elements[elementIndex[0]].kind));
      expect(count).toBe(elementIndex.length);
      expect(terminals.length).toBe(count * t);
      expect(positions.length).toBe(count * t * t);
      for (let i = 0; i < count; i++) {
        for (let r = 0; r < t; r++) {
          for (let col = 0; col < t; col++) expect(positions[i * t * t + r * t + col]).toBe(slotOf(terminals[i * t + r], terminals[i * t + col]));
        }
      }
    }
  });
});
