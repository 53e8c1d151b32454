import { describe, expect, it } from 'vitest';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { pointVectors } from '../../../shared-analysis/src/solve/point';
import type { OperatingPoint } from '../../../shared-analysis/src/solve/types';
import { BipolarColumnsMeasurement, FigureSink, measurePlanned, planMeasurements, readerOf } from '../../../shared-analysis/src/structures/measure';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { topologyOf } from '../../../shared-analysis/src/structures/topology';
import type { Structure } from '../../../shared-analysis/src/structures/types';
import type { Spec } from '../solve/build';
import { circuit, model } from '../solve/build';

const QN = model('QN', 'npn', { IS: 1e-15, BF: 120, VAF: 80 });
const QP = model('QP', 'pnp', { IS: 2e-15, BF: 80, VAF: 50 });
const NM = model('NM', 'nmos', { KP: 1e-4, VTO: 0.6, LAMBDA: 0.03 });

/**
 * Invented values: an NPN mirror with room on its output, one whose 200 kΩ load pulls its output into saturation
 * (about 0.4 mA asked of a load that passes 25 µA at 5 V), a PNP mirror of area 2 and an NMOS mirror, on one 5 V rail.
 */
const SPECS: Spec[] = [
  ['V', 'VCC', 'vcc', '0', 5],
  ['R', 'RR1', 'vcc', 'r1', 4.3e3],
  ['Q', 'QR1', 'r1', 'r1', '0', QN],
  ['Q', 'QO1', 'o1', 'r1', '0', QN],
  ['R', 'RL1', 'vcc', 'o1', 2e3],
  ['R', 'RR3', 'vcc', 'r3', 10e3],
  ['Q', 'QR3', 'r3', 'r3', '0', QN],
  ['Q', 'QO3', 'o3', 'r3', '0', QN],
  ['R', 'RL3', 'vcc', 'o3', 200e3],
  ['R', 'RR2', 'r2', '0', 10e3],
  ['Q', 'QR2', 'r2', 'r2', 'vcc', QP],
  ['Q', 'QO2', 'o2', 'r2', 'vcc', QP, { area: 2 }],
  ['R', 'RL2', 'o2', '0', 1e3],
  ['I', 'IB', 'vcc', 'g', 50e-6],
  ['M', 'MR', 'g', 'g', '0', '0', NM, { w: 10e-6, l: 1e-6 }],
  ['M', 'MO', 'd', 'g', '0', '0', NM, { w: 10e-6, l: 1e-6 }],
  ['R', 'RD', 'vcc', 'd', 20e3],
];

/** Every structure measured by `BipolarColumnsMeasurement` into one-corner buffers (C = 3, corner 1 of them). */
function measuredDirect(op: OperatingPoint, structures: Structure[], c: ReturnType<typeof circuit>): { iref: Float64Array; sink: FigureSink; C: number } {
  const plans = planMeasurements(topologyOf(c), structures);
  const vec = pointVectors(op)!;
  const direct = BipolarColumnsMeasurement.of(plans, vec);
  expect(direct).toBeDefined();
  const C = 3;
  const sink = new FigureSink(plans.outStart[structures.length] * C, C);
  const iref = new Float64Array(structures.length * C);
  direct!.measure(plans, vec as Parameters<BipolarColumnsMeasurement['measure']>[1], readerOf(op, topologyOf(c)), sink, iref, C, 1);
  return { iref, sink, C };
}

describe('the corner phase measurement read straight from the BJT columns', () => {
  it('gives every structure the bits of the measurement through the point reader, at nominal and at two corners', () => {
    const c = circuit(SPECS);
    const solver = new DcSolver(c);
    const structures = recogniseStructures(c);
    expect(structures.length).toBe(4);
    for (const conditions of [{}, { temperatureC: 125, betaScale: 2 }, { temperatureC: -40, betaScale: 0.5 }]) {
      const r = solver.solve({ ...conditions, pointOnly: true, reuseResult: true });
      expect(r.op.converged).toBe(true);
      const { iref, sink, C } = measuredDirect(r.op, structures, c);
      const plans = planMeasurements(topologyOf(c), structures);
      const reader = readerOf(r.op, topologyOf(c));
      structures.forEach((s, i) => {
        // The general path (what the corner phase measured every structure with before), non-finite figures as 0.
        const m = measurePlanned(plans, i, reader, s.outputs);
        expect(Object.is(iref[i * C + 1], m.iref), `${s.id} IREF`).toBe(true);
        s.outputs.forEach((o, j) => {
          const at = (plans.outStart[i] + j) * C + 1;
          expect(Object.is(sink.current[at], m.iout[o.device]), `${o.device} current`).toBe(true);
          expect(Object.is(sink.headroom[at], m.headroom[o.device]), `${o.device} headroom`).toBe(true);
          expect(sink.outOfRegion[at]).toBe(m.outOfRegion.includes(o.device) ? 1 : 0);
        });
      });
    }
  });

  it('reads what the solved point shows: IREF by Kirchhoff at the reference node, headroom −VBC in the output polarity, region from the record', () => {
    const c = circuit(SPECS);
    const structures = recogniseStructures(c);
    const r = new DcSolver(c).solve();
    const { iref, sink, C } = measuredDirect(r.op, structures, c);
    const plans = planMeasurements(topologyOf(c), structures);
    const dev = (name: string) => r.op.devices[name] as unknown as { ic: number; ib: number; region: string };
    const v = (node: string) => r.op.nodes[node];
    const at = (device: string) => {
      const i = structures.findIndex((s) => s.outputs.some((o) => o.device === device));
      return (plans.outStart[i] + structures[i].outputs.findIndex((o) => o.device === device)) * C + 1;
    };
    // Kirchhoff's current law at r1: the reference's collector and both bases are the structure's terminals there.
    const i1 = structures.findIndex((s) => s.devices.includes('QO1'));
    expect(iref[i1 * C + 1]).toBeCloseTo(dev('QR1').ic + dev('QR1').ib + dev('QO1').ib, 15);
    // Headroom of a bipolar output: −VBC in its own polarity (docs/DEVICE-MODELS.md's forward-active edge), VC − VB for NPN, VB − VC for PNP.
    expect(sink.headroom[at('QO1')]).toBeCloseTo(v('o1') - v('r1'), 12);
    expect(sink.headroom[at('QO2')]).toBeCloseTo(v('r2') - v('o2'), 12);
    expect(sink.current[at('QO2')]).toBeCloseTo(Math.abs(dev('QO2').ic), 15);
    // The 200 kΩ load cannot pass the mirrored current: the collector falls below the base, and the record says saturation.
    expect(dev('QO3').region).toBe('saturation');
    expect(sink.headroom[at('QO3')]).toBeLessThan(0);
    expect(sink.outOfRegion[at('QO3')]).toBe(1);
    expect(dev('QO1').region).toBe('forward-active');
    expect(sink.outOfRegion[at('QO1')]).toBe(0);
  });
});
