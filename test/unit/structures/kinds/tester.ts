// The one table-driven tester every structure kind's tests go through: circuits it matches, look-alikes it rejects, circuits where a more specific kind wins.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../../../shared-analysis/src/analysis';
import type { Circuit } from '../../../../shared-analysis/src/circuit';
import { analyseStructures } from '../../../../shared-analysis/src/checks/structures';
import { kindOf } from '../../../../shared-analysis/src/structures/catalogue';
import { Matcher } from '../../../../shared-analysis/src/structures/match';
import { recogniseStructures } from '../../../../shared-analysis/src/structures/recognise';
import type { Structure, StructureKind, Technology } from '../../../../shared-analysis/src/structures/types';
import { DcSolver } from '../../../../shared-analysis/src/solve/dc';
import { fixture } from '../fixtures';

/** A circuit the kind must be recognised in, and what it must find there. */
export interface MatchCase {
  name: string;
  circuit: () => Circuit;
  technology: Technology;
  reference: string;
  devices: string[];
  outputs: { device: string; ratio: number }[];
  /**
   * Solve the circuit and require the hand estimate of every output (and IREF) within this
   * fraction of the solved value (the 10 % on healthy circuits); `false` skips the solve.
   */
  within?: number | false;
}

/** A circuit that looks like the kind but is not one: no structure of the kind may be reported. */
export interface RejectCase {
  name: string;
  circuit: () => Circuit;
}

/** A circuit where a more specific kind contains this kind's pattern and must win. */
export interface YieldCase {
  name: string;
  circuit: () => Circuit;
  to: StructureKind;
}

export interface KindCases {
  kind: StructureKind;
  matches: MatchCase[];
  rejects: RejectCase[];
  yields: YieldCase[];
}

/** Runs one kind's tables. */
export function kindTests(c: KindCases): void {
  describe(`${c.kind}: matches`, () => {
    it('has cases', () => expect(c.matches.length).toBeGreaterThan(0));
    for (const m of c.matches) {
      it(m.name, () => {
        const circuit = m.circuit();
        const got = recogniseStructures(circuit).filter((s) => s.kind === c.kind);
        const s = got.find((x) => x.reference.device === m.reference);
        expect(s, `no ${c.kind} on ${m.reference}; found ${got.map((x) => x.id).join(', ') || 'none'}`).toBeDefined();
        expect(s!.technology).toBe(m.technology);
        expect([...s!.devices].sort()).toEqual([...m.devices].sort());
        expect(s!.outputs.map((o) => o.device)).toEqual(m.outputs.map((o) => o.device));
        s!.outputs.forEach((o, i) => expect(o.ratio).toBeCloseTo(m.outputs[i].ratio, 9));
        if (m.within !== false) expectEstimateNearSolved(circuit, s!, m.within ?? 0.1);
      });
    }
  });
  describe(`${c.kind}: rejects look-alikes`, () => {
    for (const r of c.rejects) {
      it(r.name, () => {
        const circuit = r.circuit();
        expect(recogniseStructures(circuit).filter((s) => s.kind === c.kind).map((s) => s.id)).toEqual([]);
        // The kind's recogniser alone, on every transistor it is tried on, finds nothing either.
        const m = new Matcher(circuit);
        const kind = kindOf(c.kind);
        for (const t of m.ordered) {
          if ((t.out === t.ctrl) !== (kind.seeds === 'diode-connected')) continue;
          expect(kind.recognise(m, t), `${c.kind} on ${t.name}`).toBeUndefined();
        }
      });
    }
  });
  // The most specific kind of a family has nothing to yield to.
  if (c.yields.length === 0) return;
  describe(`${c.kind}: yields to a more specific kind`, () => {
    for (const y of c.yields) {
      it(`${y.name} is a ${y.to}`, () => {
        const got = recogniseStructures(y.circuit());
        expect(got.some((s) => s.kind === y.to)).toBe(true);
        expect(got.filter((s) => s.kind === c.kind).map((s) => s.id)).toEqual([]);
      });
    }
  });
}

/** Solves the circuit, runs the structure checks, and compares the hand estimate with the solved currents. */
export function expectEstimateNearSolved(circuit: Circuit, s: Structure, within: number): void {
  const op = new DcSolver(circuit).solve().op;
  expect(op.converged).toBe(true);
  const all = recogniseStructures(circuit);
  const mine = all.find((x) => x.id === s.id)!;
  analyseStructures({ circuit, op, structures: all, options: resolveOptions() });
  const est = mine.estimate!;
  const sol = mine.solved!;
  expect(est, 'no estimate').toBeDefined();
  const rel = (e: number, x: number) => Math.abs(x - e) / Math.max(Math.abs(x), 1e-30);
  expect(rel(est.iref, sol.iref), `IREF ${est.iref} by hand, ${sol.iref} solved`).toBeLessThan(within);
  for (const o of mine.outputs) {
    const e = est.iout[o.device];
    const x = sol.iout[o.device];
    expect(x, `${o.device} solved`).toBeGreaterThan(0);
    expect(rel(e, x), `IOUT(${o.device}) ${e} by hand, ${x} solved`).toBeLessThan(within);
  }
  for (const v of mine.voltages ?? []) {
    expect(v.estimate, `${v.name} by hand`).toBeDefined();
    expect(rel(v.estimate!, v.solved!), `${v.name} ${v.estimate} by hand, ${v.solved} solved`).toBeLessThan(within);
  }
}

/** The shared fixture of a kind in each of the four technologies, as match cases. */
export function fixtureMatches(kind: StructureKind, reference: string, devices: string[], output: string): MatchCase[] {
  return (['npn', 'pnp', 'nmos', 'pmos'] as Technology[]).map((tech) => ({
    name: `the ${tech.toUpperCase()} fixture`,
    circuit: () => fixture(kind, tech).circuit,
    technology: tech,
    reference,
    devices,
    outputs: [{ device: output, ratio: 1 }],
  }));
}
