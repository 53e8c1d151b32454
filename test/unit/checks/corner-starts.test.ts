// The corner solves' predicted starts: the same corner points as solves from the nominal start and as cold solves, in fewer Newton iterations.

import { describe, expect, it } from 'vitest';
import { resolveOptions, type AnalysisOptions } from '../../../shared-analysis/src/analysis';
import { CornerStarts } from '../../../shared-analysis/src/checks/corner-starts';
import { cornerScope, cornerSourceValues, cornerSpecs, processCornerParameters, runCorners, supplySources, type CornerStats } from '../../../shared-analysis/src/checks/corners';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import type { BjtRecord, MosRecord } from '../../../shared-analysis/src/solve/types';
import type { Structure } from '../../../shared-analysis/src/structures/types';
import { solvedNetlist } from './solved-netlist';

const URI = '/starts.cir';

/** The corners of one netlist, from predicted starts or from the nominal start only, with the effort. */
function corners(netlist: string, predictStarts: boolean, options: AnalysisOptions) {
  const { circuit, solver, nominal, structures } = solvedNetlist(netlist, URI);
  const stats = {} as CornerStats;
  const resolved = resolveOptions(options);
  runCorners({ circuit, solver, structures, options: resolved, nominal, stats, predictStarts });
  return { circuit, structures, stats, options: resolved, nominal };
}

/** Every corner figure of every structure, in order. */
function figures(structures: Structure[]): number[] {
  const out: number[] = [];
  for (const s of structures) {
    for (const c of s.corners) {
      out.push(c.converged ? 1 : 0, c.iref, ...Object.values(c.iout), ...Object.values(c.headroom), c.outOfRegion.length);
    }
  }
  return out;
}

/**
 * The one helper: the corners from predicted starts equal those from the nominal start to the solver's
 * tolerance (`TOLERANCES` in solve/newton.ts: updates within 1e-9 relative plus 1 nV), every output current equals a cold
 * solve's (Newton from zero, with its continuations) of the same corner, and the predictions save iterations.
 */
function check(netlist: string, options: AnalysisOptions, expected: { corners: number }): void {
  const predicted = corners(netlist, true, options);
  const plain = corners(netlist, false, options);
  const a = figures(predicted.structures);
  const b = figures(plain.structures);
  expect(predicted.stats.corners).toBe(expected.corners);
  expect(predicted.stats.converged).toBe(expected.corners);
  expect(a).toHaveLength(b.length);
  for (let i = 0; i < a.length; i++) expect(Math.abs(a[i] - b[i])).toBeLessThanOrEqual(1e-7 * Math.abs(b[i]) + 1e-12);
  expect(predicted.stats.iterations).toBeLessThan(plain.stats.iterations);

  // Source: an independent computation — each corner solved from zero by a fresh solver, the output's current read off its record.
  const { circuit, options: resolved, nominal } = predicted;
  const sources = supplySources(circuit);
  const dcOf = new Map(circuit.elements.filter((e) => e.kind === 'V').map((e) => [e.name, e.kind === 'V' ? e.dc : 0]));
  const specs = cornerSpecs(resolved, nominal.op.temperatureC, sources, cornerScope(circuit));
  const cold = new DcSolver(circuit);
  specs.forEach((spec, k) => {
    const r = cold.solve({
      temperatureC: spec.temperatureC,
      betaScale: spec.betaScale,
      sourceValues: cornerSourceValues(spec, sources, dcOf),
      ...(spec.process ? { deviceParameters: processCornerParameters(circuit, resolved, spec.process) } : {}),
    });
    expect(r.op.converged).toBe(true);
    for (const s of predicted.structures) {
      expect(s.corners[k].label).toBe(spec.label);
      for (const o of s.outputs) {
        const rec = r.op.devices[o.device] as BjtRecord | MosRecord;
        const current = Math.abs(rec.type === 'bjt' ? rec.ic : rec.id);
        expect(Math.abs(s.corners[k].iout[o.device] - current)).toBeLessThanOrEqual(1e-7 * current + 1e-15);
      }
    }
  });
}

// Invented cells: a resistor-fed NPN mirror with two outputs, and a resistor-fed NMOS mirror, on one 5 V supply.
const mixed = `bipolar and MOS mirrors on one supply
VCC vcc 0 5
RR vcc r 12k
QR r r 0 qn
Q1 o1 r 0 qn
Q2 o2 r 0 qn
R1 vcc o1 3k
R2 vcc o2 6.8k
RG vcc g 27k
M1 g g 0 0 nch W=10u L=1u
M2 d g 0 0 nch W=20u L=1u
RD vcc d 4.7k
.model qn npn (IS=1e-15 BF=120 VAF=80)
.model nch nmos (KP=100u VTO=0.6 LAMBDA=0.02)
.end
`;

describe('predicted corner starts', () => {
  it('finds the points of the nominal start and of cold solves at every supply, temperature and beta corner', () => check(mixed, {}, { corners: 26 }));

  it('does so with the MOS process axis too: four axes, 3⁴ − 1 = 80 corners', () =>
    check(mixed, { corners: { processKpTolerance: 0.1, processVtoShift: 0.05 } }, { corners: 80 }));

  it('predicts by inclusion–exclusion over the moved axes: wrong by the cross term of all of them only', () => {
    // x(s, t, b) = 1 + s + 2t + 3b + 5st + 7sb + 11tb (no three-way term) in each unknown: a corner that moves
    // two axes is predicted without their cross term (x(a) + x(b) − x(0)), one that moves all three exactly
    // (inclusion–exclusion, common practice).
    const specs = cornerSpecs(resolveOptions({}), 27, ['VCC'], { bipolar: true });
    const f = (s: number, t: number, b: number) => 1 + s + 2 * t + 3 * b + 5 * s * t + 7 * s * b + 11 * t * b;
    const levels = (spec: (typeof specs)[number]) => [spec.supplyScale - 1, (spec.temperatureC - 27) / 100, spec.betaScale - 1] as const;
    const starts = new CornerStarts(specs, 27, Float64Array.of(f(0, 0, 0), 2 * f(0, 0, 0)));
    let predicted = 0;
    for (const k of starts.order()) {
      const [s, t, b] = levels(specs[k]);
      const start = starts.start(k);
      const moved = [s, t, b].filter((v) => v !== 0).length;
      if (moved < 2) expect(start).toBeUndefined();
      else {
        predicted++;
        const missing = moved === 3 ? 0 : 5 * s * t + 7 * s * b + 11 * t * b;
        expect(start![0]).toBeCloseTo(f(s, t, b) - missing, 12);
        expect(start![1]).toBeCloseTo(2 * (f(s, t, b) - missing), 12);
      }
      starts.solved(k, Float64Array.of(f(s, t, b), 2 * f(s, t, b)));
    }
    // 12 corners move two axes, 8 move three.
    expect(predicted).toBe(20);
  });

  it('leaves a self-biased loop to the nominal start, where a prediction could keep another state', () => {
    // An invented ΔVBE cell without a start-up path (as in startup.test.ts): it can rest at zero current everywhere.
    const cell = `ΔVBE cell\nVCC vcc 0 5\nQ1 n1 n1 0 qn\nQ2 p n1 x qn 8\nR x 0 1k\nQP1 p p vcc qp\nQP2 n1 p vcc qp\n.model qn npn (BF=100)\n.model qp pnp (BF=50)\n.end\n`;
    const predicted = corners(cell, true, {});
    const plain = corners(cell, false, {});
    expect(predicted.stats.iterations).toBe(plain.stats.iterations);
    expect(figures(predicted.structures)).toEqual(figures(plain.structures));
  });
});
