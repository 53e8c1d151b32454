// Random and hostile circuits through recognition, hand analysis and the structure checks: never a throw, a NaN or an unlocated finding.

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../../shared-analysis/src/analysis';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { analyseStructures, STRUCTURE_CODES } from '../../../shared-analysis/src/checks/structures';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { estimateStructure } from '../../../shared-analysis/src/structures/estimate';
import { measureStructure } from '../../../shared-analysis/src/structures/measure';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import type { StructureKind, Technology } from '../../../shared-analysis/src/structures/types';
import { CircuitBuilder } from './build';
import { fixture } from './fixtures';

const KINDS: StructureKind[] = ['simple-mirror', 'widlar-source', 'helper-mirror', 'wilson-mirror', 'improved-wilson-mirror', 'cascode-mirror', 'degenerated-mirror'];
const TECHS: Technology[] = ['npn', 'pnp', 'nmos', 'pmos'];

/** Values a netlist can end up with after a typo or a bad expression: zero, negative, tiny, huge. */
const hostile = fc.oneof(
  fc.constantFrom(0, -1, 1e-30, 1e30, -1e3, 1e-300),
  fc.double({ min: 1e-3, max: 1e7, noNaN: true }),
);

/** What the runs produced, so a property that never reaches the checks fails instead of passing vacuously. */
const seen = { structures: 0, findings: new Set<string>() };

/** Everything the checks return must be located, coded and free of non-finite numbers. */
function expectClean(circuit: Circuit, withSolve: boolean): void {
  const structures = recogniseStructures(circuit);
  seen.structures += structures.length;
  const op = withSolve ? new DcSolver(circuit).solve({ maxIterations: 60 }).op : undefined;
  const findings = analyseStructures({ circuit, op, structures, options: resolveOptions() });
  for (const f of findings) {
    seen.findings.add(f.code);
    expect(STRUCTURE_CODES[f.code]).toBeDefined();
    expect(f.span.end).toBeGreaterThanOrEqual(f.span.start);
    expect(f.message).not.toMatch(/NaN|undefined|Infinity/);
    expect(JSON.stringify(f.data ?? {})).not.toMatch(/NaN|Infinity/);
  }
  // Structures travel to the editor and the CLI as JSON: a NaN or Infinity would arrive as null.
  expect(JSON.stringify(structures)).not.toMatch(/null/);
  for (const s of structures) {
    // No estimate only when neither the feed nor a solve gives IREF.
    if (!s.estimate) {
      expect(s.reference.feed === 'other' && !op?.converged).toBe(true);
      continue;
    }
    const e = s.estimate;
    expect(Number.isFinite(e.iref)).toBe(true);
    expect(Number.isFinite(e.vControl)).toBe(true);
    for (const v of Object.values(e.iout)) expect(Number.isFinite(v)).toBe(true);
    for (const st of e.steps) {
      expect(Number.isFinite(st.value), `${st.quantity} = ${st.value}`).toBe(true);
      expect(st.substituted).not.toMatch(/NaN|undefined/);
    }
    for (const v of Object.values(s.outputResistance)) expect(Number.isFinite(v)).toBe(true);
    for (const v of Object.values(s.headroom)) expect(Number.isFinite(v)).toBe(true);
    for (const c of Object.values(s.compliance)) expect(Number.isFinite(c.min) && Number.isFinite(c.max)).toBe(true);
    if (op) {
      const m = measureStructure(circuit, op, s);
      expect(Number.isFinite(m.iref)).toBe(true);
    }
  }
}

describe('hostile values in otherwise well-formed structures', () => {
  it('every kind and polarity with random supply, resistors and model parameters (seeded)', () => {
    fc.assert(
      fc.property(
        fc.constantFrom(...KINDS),
        fc.constantFrom(...TECHS),
        hostile,
        hostile,
        hostile,
        fc.record({ BF: hostile, IS: hostile, VAF: hostile, KP: hostile, VTO: fc.double({ min: -2, max: 2, noNaN: true }), LAMBDA: hostile, NF: hostile }),
        fc.boolean(),
        (kind, tech, supply, rRef, rLoad, model, withSolve) => {
          const bip = tech === 'npn' || tech === 'pnp';
          const params: Record<string, number> = bip ? { BF: model.BF, IS: model.IS * 1e-16, VAF: model.VAF, NF: Math.min(model.NF, 5) } : { KP: model.KP * 1e-5, VTO: model.VTO, LAMBDA: Math.min(model.LAMBDA, 10) };
          const { circuit } = fixture(kind, tech, { supply: Math.min(supply, 1e3), rRef, rLoad, model: params });
          expectClean(circuit, withSolve);
        },
      ),
      { seed: 20260601, numRuns: 150 },
    );
    expect(seen.structures).toBeGreaterThan(100);
    for (const code of ['reference-starved', 'mirror-output-out-of-region', 'estimate-differs-from-solved']) expect(seen.findings).toContain(code);
  });
});

describe('structures from elsewhere', () => {
  it('a Wilson structure without its roles gives an empty estimate, not a throw', () => {
    const { circuit } = fixture('wilson-mirror', 'npn');
    const s = recogniseStructures(circuit)[0];
    delete s.roles;
    const e = estimateStructure(circuit, s, { temperatureC: 27 });
    expect(e.irefFrom).toBe('unknown');
    expect(e.iout).toEqual({ Q3: 0 });
  });
});

describe('random transistor soups', () => {
  it('random extra transistors, resistors and sources wired onto every kind of structure (seeded)', () => {
    const nodeNames = ['0', 'vcc', 'a', 'b', 'c', 'out', 'e2', 'x'];
    const node = fc.constantFrom(...nodeNames);
    const element = fc.oneof(
      { arbitrary: fc.record({ k: fc.constant('q' as const), n: fc.tuple(node, node, node), pnp: fc.boolean(), area: hostile }), weight: 3 },
      { arbitrary: fc.record({ k: fc.constant('m' as const), n: fc.tuple(node, node, node), p: fc.boolean(), w: hostile }), weight: 3 },
      { arbitrary: fc.record({ k: fc.constant('r' as const), n: fc.tuple(node, node), v: hostile }), weight: 2 },
      { arbitrary: fc.record({ k: fc.constant('i' as const), n: fc.tuple(node, node), v: hostile }), weight: 1 },
    );
    const before = seen.structures;
    fc.assert(
      fc.property(fc.constantFrom(...KINDS), fc.constantFrom(...TECHS), fc.array(element, { minLength: 1, maxLength: 6 }), fc.boolean(), (kind, tech, els, withSolve) => {
        const { b } = fixture(kind, tech);
        b.model('qn2', 'npn').model('qp2', 'pnp').model('nn2', 'nmos', { VTO: 0.5 }).model('pp2', 'pmos', { VTO: -0.5 });
        els.forEach((e, i) => {
          if (e.k === 'q') b.q(`QZ${i}`, e.n[0], e.n[1], e.n[2], e.pnp ? 'qp2' : 'qn2', { area: e.area });
          else if (e.k === 'm') b.mos(`MZ${i}`, e.n[0], e.n[1], e.n[2], e.p ? 'vcc' : '0', e.p ? 'pp2' : 'nn2', { w: e.w * 1e-6 });
          else if (e.k === 'r') b.r(`RZ${i}`, e.n[0], e.n[1], e.v);
          else b.i(`IZ${i}`, e.n[0], e.n[1], e.v * 1e-6);
        });
        expectClean(b.build(), withSolve);
      }),
      { seed: 7341, numRuns: 200 },
    );
    // Extra wiring breaks some structures and makes others; the property must have reached the checks often.
    expect(seen.structures - before).toBeGreaterThan(100);
  });

  it('a ring of mirrors feeding each other does not loop forever', () => {
    // Two NMOS/PMOS mirrors whose outputs feed each other's references (a self-biased loop).
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 3.3)
      .model('nn', 'nmos', { VTO: 0.5, KP: 1e-4 })
      .model('pp', 'pmos', { VTO: -0.5, KP: 4e-5 })
      .mos('MN1', 'x', 'x', '0', '0', 'nn')
      .mos('MN2', 'y', 'x', '0', '0', 'nn')
      .mos('MP1', 'y', 'y', 'vdd', 'vdd', 'pp')
      .mos('MP2', 'x', 'y', 'vdd', 'vdd', 'pp');
    const circuit = b.build();
    const structures = recogniseStructures(circuit);
    expect(structures.map((s) => [s.id, s.reference.feed, s.reference.fedBy])).toEqual([
      ['simple-mirror:MN1', 'mirror-output', 'simple-mirror:MP1'],
      ['simple-mirror:MP1', 'mirror-output', 'simple-mirror:MN1'],
    ]);
    const e = estimateStructure(circuit, structures[0], { temperatureC: 27, structures });
    expect(e.iref).toBe(0);
    expectClean(circuit, true);
  });
});
