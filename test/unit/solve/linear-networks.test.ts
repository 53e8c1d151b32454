// Linear networks: closed-form answers for every linear element kind, and seeded random resistor networks against mathjs.

import { lusolve } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { solveOperatingPoint } from '../../../shared-analysis/src/solve/dc';
import type { TwoTerminalRecord } from '../../../shared-analysis/src/solve/types';
import type { Spec } from './build';
import { circuit } from './build';
import { rng } from '../../seeded-random';

/** Solves `specs` and compares node voltages and element currents with `expected` to relative tolerance `rel`. */
function check(specs: Spec[], expected: { nodes?: Record<string, number>; currents?: Record<string, number> }, rel = 1e-9): void {
  const r = solveOperatingPoint(circuit(specs));
  expect(r.op.converged).toBe(true);
  expect(r.findings.filter((f) => f.severity === 'error')).toEqual([]);
  for (const [n, v] of Object.entries(expected.nodes ?? {})) expect(r.op.nodes[n]).toBeCloseTo(v, 9 - Math.max(0, Math.ceil(Math.log10(Math.abs(v) + 1e-30))));
  for (const [name, i] of Object.entries(expected.currents ?? {})) {
    const rec = r.op.devices[name] as TwoTerminalRecord;
    expect(Math.abs(rec.current - i)).toBeLessThanOrEqual(rel * Math.abs(i) + 1e-15);
  }
}

describe('closed-form linear networks', () => {
  it('divides a voltage', () => {
    // Source: Ohm's and Kirchhoff's laws — V(mid) = V·R2/(R1 + R2) (common practice).
    check(
      [
        ['V', 'V1', 'in', '0', 10],
        ['R', 'R1', 'in', 'mid', 3000],
        ['R', 'R2', 'mid', '0', 7000],
      ],
      { nodes: { in: 10, mid: 7 }, currents: { R1: 1e-3, R2: 1e-3, V1: -1e-3 } },
    );
  });

  it('drives a current source into a resistor (current flows from plus through the source to minus)', () => {
    // Source: Ohm's law; I1 pushes 2 mA out of its minus node into n, so V(n) = 2 mA · 1 kΩ (common practice).
    check(
      [
        ['I', 'I1', '0', 'n', 2e-3],
        ['R', 'R1', 'n', '0', 1000],
      ],
      { nodes: { n: 2 }, currents: { I1: 2e-3, R1: 2e-3 } },
    );
  });

  it('treats an inductor and a zero-ohm resistor as shorts and a capacitor as open', () => {
    // Source: DC behaviour of L and C (common practice): L shorts, C opens; R = 0 is a short with a known current.
    check(
      [
        ['V', 'V1', 'a', '0', 6],
        ['L', 'L1', 'a', 'b'],
        ['R', 'R0', 'b', 'c', 0],
        ['R', 'R1', 'c', '0', 1200],
        ['C', 'C1', 'c', 'd'],
        ['R', 'R2', 'd', '0', 1000],
      ],
      { nodes: { b: 6, c: 6, d: 0 }, currents: { L1: 5e-3, R0: 5e-3, C1: 0 } },
    );
  });

  it('solves a voltage-controlled voltage source (E) amplifier', () => {
    // Source: definition of an ideal VCVS, V(out) = gain·V(ctrl) (Ho, Ruehli, Brennan 1975 MNA element).
    check(
      [
        ['V', 'V1', 'in', '0', 0.25],
        ['R', 'RIN', 'in', '0', 1e4],
        ['E', 'E1', 'out', '0', 'in', '0', -8],
        ['R', 'RL', 'out', '0', 2000],
      ],
      { nodes: { out: -2 }, currents: { E1: 1e-3, RL: -1e-3 } },
    );
  });

  it('solves a transconductance (G) stage', () => {
    // Source: ideal VCCS, I = gm·V(ctrl) from out+ through the element to out−; V(out) = −gm·V·RL (common practice).
    check(
      [
        ['V', 'V1', 'in', '0', 0.1],
        ['G', 'G1', 'out', '0', 'in', '0', 0.01],
        ['R', 'RL', 'out', '0', 500],
      ],
      { nodes: { out: -0.5 }, currents: { G1: 1e-3 } },
    );
  });

  it('solves current-controlled sources (F and H) sensing a 0 V source', () => {
    // Source: ideal CCCS/CCVS definitions; VSENSE carries 1 mA, F copies 5×, H gives 2 kΩ·1 mA (common practice).
    check(
      [
        ['V', 'V1', 'in', '0', 1],
        ['R', 'R1', 'in', 's', 1000],
        ['V', 'VSENSE', 's', '0', 0],
        ['F', 'F1', 'f', '0', 'VSENSE', 5],
        ['R', 'RF', 'f', '0', 100],
        ['H', 'H1', 'h', '0', 'VSENSE', 2000],
        ['R', 'RH', 'h', '0', 1000],
      ],
      { nodes: { f: -0.5, h: 2 }, currents: { VSENSE: 1e-3, F1: 5e-3, H1: -2e-3 } },
    );
  });

  it('balances a Wheatstone bridge', () => {
    // Source: balanced bridge R1/R2 = R3/R4 gives zero detector current (common practice).
    check(
      [
        ['V', 'V1', 'top', '0', 12],
        ['R', 'R1', 'top', 'a', 1000],
        ['R', 'R2', 'a', '0', 2000],
        ['R', 'R3', 'top', 'b', 4700],
        ['R', 'R4', 'b', '0', 9400],
        ['R', 'RDET', 'a', 'b', 50],
      ],
      { nodes: { a: 8, b: 8 }, currents: { RDET: 0 } },
    );
  });
});

describe('seeded random resistor networks against mathjs lusolve', () => {
  for (let seed = 1; seed <= 12; seed++) {
    it(`network ${seed}`, () => {
      const rand = rng(seed * 7919);
      const nNodes = 3 + Math.floor(rand() * 12);
      const specs: Spec[] = [];
      const name = (i: number): string => (i === 0 ? '0' : `n${i}`);
      // A spanning tree keeps every node connected; extra resistors add meshes.
      for (let i = 1; i <= nNodes; i++) specs.push(['R', `RT${i}`, name(i), name(Math.floor(rand() * i)), 10 ** (1 + 4 * rand())]);
      const extra = Math.floor(rand() * 2 * nNodes);
      for (let k = 0; k < extra; k++) {
        const a = Math.floor(rand() * (nNodes + 1));
        const b = Math.floor(rand() * (nNodes + 1));
        if (a !== b) specs.push(['R', `RX${k}`, name(a), name(b), 10 ** (1 + 4 * rand())]);
      }
      // Voltage sources on distinct nodes to ground cannot form a loop.
      const vNodes = new Set<number>();
      const nV = 1 + Math.floor(rand() * Math.min(3, nNodes));
      while (vNodes.size < nV) vNodes.add(1 + Math.floor(rand() * nNodes));
      for (const v of vNodes) specs.push(['V', `V${v}`, name(v), '0', 20 * rand() - 10]);
      const nI = Math.floor(rand() * 3);
      for (let k = 0; k < nI; k++) specs.push(['I', `I${k}`, name(Math.floor(rand() * (nNodes + 1))), name(1 + Math.floor(rand() * nNodes)), 1e-3 * (2 * rand() - 1)]);

      // Independent nodal assembly: unknowns v1..vN then one current per source (plus-to-minus through it).
      const vs = specs.filter((s) => s[0] === 'V') as ['V', string, string, string, number][];
      const size = nNodes + vs.length;
      const A = Array.from({ length: size }, () => new Array<number>(size).fill(0));
      const b = new Array<number>(size).fill(0);
      const idx = (n: string): number => (n === '0' ? -1 : Number(n.slice(1)) - 1);
      for (const s of specs) {
        const p = idx(s[2] as string);
        const m = idx(s[3] as string);
        if (s[0] === 'R') {
          const g = 1 / (s[4] as number);
          if (p >= 0) A[p][p] += g;
          if (m >= 0) A[m][m] += g;
          if (p >= 0 && m >= 0) { A[p][m] -= g; A[m][p] -= g; }
        } else if (s[0] === 'I') {
          const i = s[4] as number;
          if (p >= 0) b[p] -= i;
          if (m >= 0) b[m] += i;
        }
      }
      vs.forEach((s, k) => {
        const row = nNodes + k;
        const p = idx(s[2]);
        A[p][row] += 1;
        A[row][p] += 1;
        b[row] = s[4];
      });
      const sol = (lusolve(A, b) as number[][]).map((r) => r[0]);

      const r = solveOperatingPoint(circuit(specs));
      expect(r.op.converged).toBe(true);
      // Source: mathjs lusolve as general-purpose reference library; agreement to 1e-9 relative + 1e-12 absolute.
      for (let i = 1; i <= nNodes; i++) expect(Math.abs(r.op.nodes[`n${i}`] - sol[i - 1])).toBeLessThanOrEqual(1e-9 * Math.abs(sol[i - 1]) + 1e-12);
      vs.forEach((s, k) => {
        const cur = (r.op.devices[s[1]] as TwoTerminalRecord).current;
        expect(Math.abs(cur - sol[nNodes + k])).toBeLessThanOrEqual(1e-9 * Math.abs(sol[nNodes + k]) + 1e-15);
      });
      // Tellegen's theorem: absorbed power sums to zero (common practice).
      const total = Object.values(r.op.devices).reduce((s, d) => s + (d as TwoTerminalRecord).power, 0);
      const scale = Object.values(r.op.devices).reduce((s, d) => s + Math.abs((d as TwoTerminalRecord).power), 0);
      expect(Math.abs(total)).toBeLessThanOrEqual(1e-9 * scale + 1e-15);
    });
  }
});
