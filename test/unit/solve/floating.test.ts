// Circuits with parts that have no DC path to ground: those nodes are tied to ground through 1 TΩ, reported, and the rest solves normally.

import { describe, expect, it } from 'vitest';
import { TIE_CONDUCTANCE, solveOperatingPoint } from '../../../shared-analysis/src/solve/dc';
import type { DcSolveResult } from '../../../shared-analysis/src/solve/dc';
import type { MosRecord, TwoTerminalRecord } from '../../../shared-analysis/src/solve/types';
import type { Spec } from './build';
import { circuit, model } from './build';

const NM = model('NM', 'nmos', { VTO: 1, KP: 2e-5 });

/**
 * Solves `specs` and checks: converged, exactly `tied` reported as tied, a floating-node finding
 * naming them, the expected node voltages within `tol` volts, and every number finite.
 */
function check(specs: Spec[], expected: { tied: string[]; nodes: Record<string, number>; tol: number }): DcSolveResult {
  const r = solveOperatingPoint(circuit(specs));
  expect(r.op.converged).toBe(true);
  expect(r.op.tiedNodes).toEqual(expected.tied);
  const f = r.findings.find((x) => x.code === 'dc-singular-matrix' && x.data?.kind === 'floating-node');
  expect(f).toBeDefined();
  expect(f!.data?.tied).toBe(true);
  expect(f!.message).toMatch(/tied .* to ground through 1 TΩ/);
  for (const [node, volts] of Object.entries(expected.nodes)) expect(Math.abs(r.op.nodes[node] - volts), node).toBeLessThanOrEqual(expected.tol);
  for (const v of Object.values(r.op.nodes)) expect(Number.isFinite(v)).toBe(true);
  return r;
}

describe('floating parts are tied and the rest of the circuit solves', () => {
  it('an unwired MOSFET gate: the gate is tied to 0 V, the device is off, the drain sits at the supply', () => {
    // Source: Shichman–Hodges level 1 (docs/DEVICE-MODELS.md): VGS = 0 < VTO = 1 V is cutoff, ID = 0, so R1 drops
    // only the 1 pS channel robustness current (5 V · 1 pS · 1 kΩ = 5 nV, Ohm's law).
    const r = check(
      [
        ['V', 'V1', 'vdd', '0', 5],
        ['R', 'R1', 'vdd', 'd', 1000],
        ['M', 'M1', 'd', 'g', '0', '0', NM],
      ],
      { tied: ['g'], nodes: { vdd: 5, d: 5, g: 0 }, tol: 1e-8 },
    );
    expect((r.op.devices.M1 as MosRecord).region).toBe('cutoff');
  });

  it('a node group behind a capacitor: the driven side is exact, the floating pair is tied', () => {
    // Source: Ohm's law — no DC current flows through C1, so R1 drops nothing and b = 5 V.
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 1000],
        ['C', 'C1', 'b', 'c'],
        ['R', 'R2', 'c', 'd', 100],
      ],
      { tied: ['c', 'd'], nodes: { a: 5, b: 5, c: 0, d: 0 }, tol: 1e-9 },
    );
  });

  it('an isolated island holding its own source keeps the source voltage across it', () => {
    // Source: KVL — V(x) − V(y) = 2 V inside the island; both ends carry equal 1 pS ties, so by
    // symmetry of the two equal ties the island centres on 0 V: x = +1 V, y = −1 V.
    check(
      [
        ['V', 'V1', 'a', '0', 3],
        ['R', 'R1', 'a', '0', 1000],
        ['V', 'V2', 'x', 'y', 2],
        ['R', 'R2', 'x', 'y', 1000],
      ],
      { tied: ['x', 'y'], nodes: { a: 3, x: 1, y: -1 }, tol: 1e-9 },
    );
  });

  it('the grounded part gives the same answer as the circuit without the floating part', () => {
    // Source: a node with no DC path exchanges no DC current with the rest of the circuit (KCL on the
    // cut), so a MOS mirror's operating point must not change when an unwired device is added (common practice).
    const mirror: Spec[] = [
      ['V', 'VDD', 'vdd', '0', 5],
      ['I', 'IREF', 'vdd', 'g', 100e-6],
      ['M', 'M1', 'g', 'g', '0', '0', NM],
      ['M', 'M2', 'out', 'g', '0', '0', NM],
      ['R', 'RL', 'vdd', 'out', 10e3],
    ];
    const alone = solveOperatingPoint(circuit(mirror));
    const r = check([...mirror, ['M', 'M3', 'out', 'nc', '0', '0', NM]], { tied: ['nc'], nodes: { nc: 0 }, tol: 1e-12 });
    for (const node of ['vdd', 'g', 'out']) expect(r.op.nodes[node]).toBeCloseTo(alone.op.nodes[node], 7);
  });

  it('a current-source cut-set is tied, and its meaningless voltage is reported with the net current', () => {
    // Source: Ohm's law through the tie — a net 1 mA into a node held only by 1 pS sits at
    // 1 mA / 1 pS = 1 GV; the grounded divider beside it is exact (10 V across 1 kΩ + 1 kΩ gives 5 V).
    const r = check(
      [
        ['I', 'I1', '0', 'a', 1e-3],
        ['R', 'R9', 'a', 'a2', 1000],
        ['V', 'V1', 'b', '0', 10],
        ['R', 'R1', 'b', 'c', 1000],
        ['R', 'R2', 'c', '0', 1000],
      ],
      { tied: ['a', 'a2'], nodes: { c: 5 }, tol: 1e-9 },
    );
    const big = r.findings.find((f) => f.code === 'dc-implausible-voltage');
    expect(big).toBeDefined();
    expect(big!.span).toEqual({ start: 0, end: 50 });
    expect(big!.message).toMatch(/no meaning.*I1 forces a net 1 mA/);
    expect(big!.data?.netCurrent as number).toBeCloseTo(1e-3, 10); // 1e-9 relative: the tied voltages are solved to RELTOL
    // Both nodes carry a tie: 1 mA = (V(a) + V(a2))·1 pS (KCL on the island). The ties are equal and
    // R9 is tiny beside 1 TΩ, so half the current leaves through each: R9 carries 0.5 mA (KCL at a2).
    expect((r.op.nodes.a + r.op.nodes.a2) * TIE_CONDUCTANCE).toBeCloseTo(1e-3, 10);
    expect((r.op.devices.R9 as TwoTerminalRecord).current).toBeCloseTo(0.5e-3, 9);
  });

  it('two equal, opposite current sources on a node leave it at the tie voltage with no warning', () => {
    // Source: KCL — the sources cancel, so nothing flows through the tie and the node sits at 0 V.
    const r = check(
      [
        ['I', 'I1', '0', 'a', 1e-3],
        ['I', 'I2', 'a', '0', 1e-3],
        ['V', 'V1', 'b', '0', 1],
        ['R', 'R1', 'b', '0', 1000],
      ],
      { tied: ['a'], nodes: { a: 0, b: 1 }, tol: 1e-9 },
    );
    expect(r.findings.some((f) => f.code === 'dc-implausible-voltage')).toBe(false);
  });

  it('a loop of voltage sources is still not solved, and a floating node beside it is not tied', () => {
    const r = solveOperatingPoint(
      circuit([
        ['V', 'V1', 'a', '0', 5],
        ['V', 'V2', 'a', '0', 5],
        ['C', 'C1', 'a', 'f'],
      ]),
    );
    expect(r.op.converged).toBe(false);
    expect(r.op.tiedNodes).toBeUndefined();
    const f = r.findings.find((x) => x.data?.kind === 'floating-node');
    expect(f!.message).toMatch(/No operating point was computed\.$/);
    expect(r.findings.some((x) => x.data?.kind === 'voltage-loop')).toBe(true);
  });

  it('a fully grounded circuit reports no tied nodes', () => {
    const r = solveOperatingPoint(
      circuit([
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', '0', 1000],
      ]),
    );
    expect(r.op.tiedNodes).toBeUndefined();
  });
});
