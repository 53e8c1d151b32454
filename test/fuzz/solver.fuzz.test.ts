// Property test: a PNP/PMOS circuit equals its NPN/NMOS twin with every source, node voltage and current sign flipped.

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { Model } from '../../shared-analysis/src/circuit';
import { solveOperatingPoint } from '../../shared-analysis/src/solve/dc';
import type { DcSolveResult } from '../../shared-analysis/src/solve/dc';
import type { Spec } from '../unit/solve/build';
import { circuit, model } from '../unit/solve/build';

interface Sample {
  vcc: number;
  rref: number;
  outputs: { area: number; m: number; rload: number }[];
  bjt: { IS: number; BF: number; BR: number; VAF: number };
  mos: { KP: number; VTO: number; LAMBDA: number; GAMMA: number; w: number; l: number; wOut: number };
  rmosRef: number;
  rmosLoad: number;
  rdiode: number;
  tempC: number;
}

const sample: fc.Arbitrary<Sample> = fc.record({
  vcc: fc.double({ min: 1.5, max: 15, noNaN: true }),
  rref: fc.double({ min: 500, max: 200e3, noNaN: true }),
  outputs: fc.array(
    fc.record({
      area: fc.double({ min: 0.25, max: 8, noNaN: true }),
      m: fc.integer({ min: 1, max: 4 }),
      rload: fc.double({ min: 10, max: 1e6, noNaN: true }),
    }),
    { minLength: 1, maxLength: 3 },
  ),
  bjt: fc.record({
    IS: fc.double({ min: 1e-17, max: 1e-13, noNaN: true }),
    BF: fc.double({ min: 20, max: 500, noNaN: true }),
    BR: fc.double({ min: 0.5, max: 5, noNaN: true }),
    VAF: fc.oneof(fc.constant(Infinity), fc.double({ min: 10, max: 200, noNaN: true })),
  }),
  mos: fc.record({
    KP: fc.double({ min: 1e-5, max: 3e-4, noNaN: true }),
    VTO: fc.double({ min: 0.2, max: 1.2, noNaN: true }),
    LAMBDA: fc.double({ min: 0, max: 0.1, noNaN: true }),
    GAMMA: fc.double({ min: 0, max: 0.8, noNaN: true }),
    w: fc.double({ min: 1e-6, max: 100e-6, noNaN: true }),
    l: fc.double({ min: 0.2e-6, max: 5e-6, noNaN: true }),
    wOut: fc.double({ min: 1e-6, max: 100e-6, noNaN: true }),
  }),
  rmosRef: fc.double({ min: 1e3, max: 1e6, noNaN: true }),
  rmosLoad: fc.double({ min: 10, max: 1e6, noNaN: true }),
  rdiode: fc.double({ min: 100, max: 1e5, noNaN: true }),
  tempC: fc.double({ min: -40, max: 125, noNaN: true }),
});

/**
 * A BJT mirror with several outputs, a MOS mirror whose bulk sits at the rail below its
 * source (body effect) and a diode branch. `sign` −1 builds the PNP/PMOS twin: every
 * source negated, device kinds swapped, VTO negated (the trade's PMOS convention) and the
 * diode turned round.
 */
function build(s: Sample, sign: 1 | -1): Spec[] {
  const q: Model = model('QF', sign > 0 ? 'npn' : 'pnp', s.bjt);
  const m: Model = model('MF', sign > 0 ? 'nmos' : 'pmos', { KP: s.mos.KP, VTO: sign * s.mos.VTO, LAMBDA: s.mos.LAMBDA, GAMMA: s.mos.GAMMA });
  const d: Model = model('DF', 'd', { IS: 1e-14, RS: 5 });
  const specs: Spec[] = [
    ['V', 'VCC', 'vcc', '0', sign * s.vcc],
    ['V', 'VSUB', 'sub', '0', sign * -0.5],
    ['R', 'RREF', 'vcc', 'ref', s.rref],
    ['Q', 'QREF', 'ref', 'ref', '0', q],
  ];
  s.outputs.forEach((o, i) => {
    specs.push(['Q', `QOUT${i}`, `out${i}`, 'ref', '0', q, { area: o.area, m: o.m }], ['R', `RL${i}`, 'vcc', `out${i}`, o.rload]);
  });
  specs.push(
    ['R', 'RMREF', 'vcc', 'mref', s.rmosRef],
    ['M', 'MREF', 'mref', 'mref', '0', 'sub', m, { w: s.mos.w, l: s.mos.l }],
    ['M', 'MOUT', 'mout', 'mref', '0', 'sub', m, { w: s.mos.wOut, l: s.mos.l }],
    ['R', 'RML', 'vcc', 'mout', s.rmosLoad],
    ['R', 'RD', 'vcc', 'dn', s.rdiode],
    sign > 0 ? ['D', 'D1', 'dn', '0', d] : ['D', 'D1', '0', 'dn', d],
  );
  return specs;
}

const SIGNED = new Set(['ic', 'ib', 'ie', 'vbe', 'vbc', 'vce', 'id', 'vgs', 'vds', 'vth', 'current', 'voltage']);
const UNSIGNED = new Set(['gm', 'rpi', 'ro', 'vov', 'power']);

/** Compares a result with its twin: signed fields negated, magnitudes and regions equal (diode fields equal: it was turned round). */
function check(a: DcSolveResult, b: DcSolveResult): void {
  expect(a.op.converged).toBe(true);
  expect(b.op.converged).toBe(true);
  const close = (x: number, y: number, what: string): void => {
    expect(Math.abs(x - y), what).toBeLessThanOrEqual(1e-9 * Math.max(Math.abs(x), Math.abs(y)) + 1e-15);
  };
  for (const [name, v] of Object.entries(a.op.nodes)) close(v, -b.op.nodes[name], `node ${name}`);
  for (const [name, rec] of Object.entries(a.op.devices)) {
    const twin = b.op.devices[name] as unknown as Record<string, unknown>;
    for (const [k, v] of Object.entries(rec)) {
      if (typeof v !== 'number') {
        if (k === 'region' || k === 'type') expect(twin[k], `${name}.${k}`).toBe(v);
        continue;
      }
      if (rec.type === 'diode') close(v, twin[k] as number, `${name}.${k}`);
      else if (SIGNED.has(k)) close(v, -(twin[k] as number), `${name}.${k}`);
      else if (UNSIGNED.has(k)) close(v, twin[k] as number, `${name}.${k}`);
    }
  }
}

describe('polarity symmetry', () => {
  it('PNP/PMOS circuits equal their NPN/NMOS twins with every sign flipped', () => {
    // Source: docs/DEVICE-MODELS.md — "PNP mirrors every sign", "PMOS mirrors every sign"; a property of the model equations.
    fc.assert(
      fc.property(sample, (s) => {
        const opts = { temperatureC: s.tempC };
        check(solveOperatingPoint(circuit(build(s, 1)), opts), solveOperatingPoint(circuit(build(s, -1)), opts));
      }),
      { seed: 20240607, numRuns: 80 },
    );
  });
});

/** Values a careless or hostile netlist might carry. */
const wildValue = fc.oneof(
  fc.double({ min: -1e6, max: 1e6, noNaN: true }),
  fc.constantFrom(0, -0, 1e300, -1e300, 1e-300, NaN, Infinity, -Infinity, 1e-12, 5),
);
const nodeName = fc.constantFrom('0', 'a', 'b', 'c', 'd');

/** A random element over five nodes, with any value, including unusable ones. */
const wildElement: fc.Arbitrary<Spec> = fc.oneof<fc.Arbitrary<Spec>[]>(
  fc.tuple(fc.constantFrom('R' as const, 'V' as const, 'I' as const), nodeName, nodeName, wildValue).map(([k, a, b, v]): Spec => [k, k, a, b, v]),
  fc.tuple(nodeName, nodeName).map(([a, b]) => ['C', 'C', a, b] as Spec),
  fc.tuple(nodeName, nodeName).map(([a, b]) => ['L', 'L', a, b] as Spec),
  fc.tuple(fc.constantFrom('E', 'G'), nodeName, nodeName, nodeName, nodeName, wildValue).map(([k, a, b, c, d, v]) => [k, k, a, b, c, d, v] as Spec),
  fc.tuple(fc.constantFrom('F', 'H'), nodeName, nodeName, fc.constantFrom('V', 'VX', 'L'), wildValue).map(([k, a, b, c, v]) => [k, k, a, b, c, v] as Spec),
  fc.tuple(nodeName, nodeName, wildValue, wildValue).map(([a, b, is, area]) => ['D', 'D', a, b, model('DW', 'd', { IS: Math.abs(is), RS: 10 }), { area }] as Spec),
  fc.tuple(nodeName, nodeName, nodeName, fc.boolean(), wildValue, wildValue).map(
    ([c, b, e, pnp, bf, vaf]) => ['Q', 'Q', c, b, e, model('QW', pnp ? 'pnp' : 'npn', { BF: bf, VAF: vaf }), { area: 1 }] as Spec,
  ),
  fc.tuple(nodeName, nodeName, nodeName, nodeName, fc.boolean(), wildValue, wildValue).map(
    ([d, g, s, b, pmos, vto, l]) => ['M', 'M', d, g, s, b, model('MW', pmos ? 'pmos' : 'nmos', { VTO: vto, GAMMA: 0.5 }), { l: Math.abs(l) * 1e-6 }] as Spec,
  ),
);

describe('robustness', () => {
  it('random circuits with unusable values never throw and never return a non-finite number', () => {
    // Source: product rule (binding) — every bad input gets a located finding, never a crash, hang or NaN.
    fc.assert(
      fc.property(fc.array(wildElement, { minLength: 1, maxLength: 9 }), (specs) => {
        // Unique names: the builder keeps them as given, the solver looks controls up by name.
        const named = specs.map((s, i) => [s[0], `${s[0]}${i}`, ...s.slice(2)] as unknown as Spec);
        const r = solveOperatingPoint(circuit(named), { maxIterations: 40 });
        const numbers: number[] = [];
        const visit = (v: unknown): void => {
          if (typeof v === 'number') numbers.push(v);
          else if (v && typeof v === 'object') for (const w of Object.values(v)) visit(w);
        };
        visit(r.op);
        visit(r.findings.map((f) => f.data ?? {}));
        expect(numbers.every(Number.isFinite)).toBe(true);
        expect([...r.x].every(Number.isFinite)).toBe(true);
        for (const f of r.findings) {
          expect(f.code).toMatch(/^[a-z]+(-[a-z]+)*$/);
          expect(f.span.end).toBeGreaterThanOrEqual(f.span.start);
          expect(f.message.length).toBeGreaterThan(10);
        }
        if (!r.op.converged) expect(r.findings.some((f) => f.severity === 'error')).toBe(true);
      }),
      { seed: 77, numRuns: 300 },
    );
  });
});
