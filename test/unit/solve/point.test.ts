// The operating point as vectors: index reads, lazily built records and index-based measurement agree with the name-keyed tables.

import { describe, expect, it } from 'vitest';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { BJT } from '../../../shared-analysis/src/devices/bjt';
import { deviceKindOf } from '../../../shared-analysis/src/devices/registry';
import { collectGarbage } from '../../../server/src/collect';
import { namedPointReader, pointReader, pointVectors } from '../../../shared-analysis/src/solve/point';
import type { OperatingPoint } from '../../../shared-analysis/src/solve/types';
import { measurePlanned, measureStructure, planMeasurements, readerOf } from '../../../shared-analysis/src/structures/measure';
import { topologyOf } from '../../../shared-analysis/src/structures/topology';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { structureVoltages } from '../../../shared-analysis/src/structures/voltages';
import type { Spec } from './build';
import { circuit, model } from './build';

const QN = model('QN', 'npn', { IS: 1e-15, BF: 120, VAF: 80 });
const QP = model('QP', 'pnp', { IS: 2e-15, BF: 80, VAF: 50 });
const NM = model('NM', 'nmos', { KP: 1e-4, VTO: 0.6, LAMBDA: 0.03 });
const DD = model('DD', 'd', { IS: 1e-14 });

/** Two NPN mirrors, a PNP mirror and an NMOS mirror on one 5 V rail, with a diode and two sources of each kind: invented values. */
const SPECS: Spec[] = [
  ['V', 'VCC', 'vcc', '0', 5],
  ['R', 'RR1', 'vcc', 'r1', 4.3e3],
  ['Q', 'QR1', 'r1', 'r1', '0', QN],
  ['Q', 'QO1', 'o1', 'r1', '0', QN],
  ['R', 'RL1', 'vcc', 'o1', 2e3],
  ['R', 'RR2', 'r2', '0', 10e3],
  ['Q', 'QR2', 'r2', 'r2', 'vcc', QP],
  ['Q', 'QO2', 'o2', 'r2', 'vcc', QP, { area: 2 }],
  ['R', 'RL2', 'o2', '0', 1e3],
  ['I', 'IB', 'vcc', 'g', 50e-6],
  ['M', 'MR', 'g', 'g', '0', '0', NM, { w: 10e-6, l: 1e-6 }],
  ['M', 'MO', 'd', 'g', '0', '0', NM, { w: 10e-6, l: 1e-6 }],
  ['R', 'RD', 'vcc', 'd', 20e3],
  ['D', 'D1', 'vcc', 'k', DD],
  ['R', 'RK', 'k', '0', 47e3],
];

function solved(): { c: ReturnType<typeof circuit>; op: OperatingPoint } {
  const c = circuit(SPECS);
  const r = new DcSolver(c).solve();
  expect(r.op.converged).toBe(true);
  return { c, op: r.op };
}

describe('operating point vectors', () => {
  it('read every node voltage and every record by index, as the name-keyed tables show them', () => {
    const { c, op } = solved();
    const v = pointVectors(op)!;
    expect(v).toBeDefined();
    c.nodes.forEach((name, i) => expect(v.volts[i]).toBe(op.nodes[name]));
    c.elements.forEach((el, e) => {
      expect(v.record(e)).toEqual(op.devices[el.name]);
      const rec = op.devices[el.name] as unknown as Record<string, unknown>;
      // A device kind's quantities read by position in its columns too (what a measurement resolved once).
      const kind = deviceKindOf(el.kind);
      for (const [k, val] of Object.entries(rec)) {
        if (typeof val !== 'number') continue;
        expect(v.value(e, k)).toBe(val);
        if (kind) expect(v.quantity(e, kind.quantities.indexOf(k)), `${el.name} ${k}`).toBe(val);
      }
      if (!kind) expect(v.quantity(e, 0)).toBeUndefined();
      expect(v.quantity(e, 99)).toBeUndefined();
      expect(v.region(e)).toBe('region' in rec ? rec.region : undefined);
      expect(v.type(e)).toBe(rec['type']);
      // Names every object inherits are no quantity of any record.
      for (const inherited of ['constructor', 'toString', '__proto__', 'hasOwnProperty']) expect(v.value(e, inherited)).toBeUndefined();
    });
    expect(v.value(0, 'no-such-quantity')).toBeUndefined();
  });

  it('read by name as the name-keyed tables show them, without building the tables; through the tables when two elements share a name', () => {
    const { c, op } = solved();
    const at = namedPointReader(op, topologyOf(c));
    const names = [...c.nodes, 'no-such-node', '__proto__', 'constructor'];
    const elements = [...c.elements.map((el) => el.name), 'RNONE', '__proto__'];
    const read = () => ({ nodes: names.map((n) => at.volts(n)), devices: elements.map((e) => at.record(e)) });
    const got = read();
    // Nothing above read a table: they are still accessors (see lazyPoint).
    expect(Object.getOwnPropertyDescriptor(op, 'devices')?.get).toBeDefined();
    expect(got).toEqual({ nodes: names.map((n) => op.nodes[n]), devices: elements.map((e) => op.devices[e]) });
    // Two resistors called RL1: the table keeps the record of the one its build order puts last, and the reader agrees.
    const twice = circuit([...SPECS, ['R', 'RL1', 'vcc', 'k', 1e3]]);
    const r = new DcSolver(twice).solve().op;
    expect(namedPointReader(r, topologyOf(twice)).record('RL1')).toEqual(r.devices['RL1']);
  });

  it('give a resistor the current Ohm\'s law gives for its solved node voltages', () => {
    const { c, op } = solved();
    const v = pointVectors(op)!;
    const e = c.elements.findIndex((x) => x.name === 'RL1');
    const [a, b] = c.elements[e].nodes;
    // Ohm's law, computed here from the solved node voltages.
    expect(v.value(e, 'current')).toBeCloseTo((v.volts[a] - v.volts[b]) / 2e3, 15);
  });

  it('build the same tables whether they are read first or after index reads, and copy into JSON whole', () => {
    const { op } = solved();
    const copy = JSON.parse(JSON.stringify(op)) as OperatingPoint;
    expect(Object.keys(copy)).toEqual(['converged', 'temperatureC', 'iterations', 'fallbacks', 'nodes', 'devices']);
    expect(copy.nodes).toEqual(op.nodes);
    expect(copy.devices).toEqual(op.devices);
    expect(structuredClone(op).devices).toEqual(op.devices);
    // A copy has no vectors; the reader falls back to the names.
    expect(pointVectors(copy)).toBeUndefined();
    // Neither has a spread copy or a structured clone: what a point keeps beside its fields is not enumerable.
    const spread = { ...op };
    expect(Object.keys(spread)).toEqual(Object.keys(copy));
    expect(Object.keys(op)).toEqual(Object.keys(copy));
    expect(pointVectors(spread)).toBeUndefined();
    expect(pointVectors(structuredClone(op))).toBeUndefined();
    expect(pointVectors(op)).toBeDefined();
  });

  it('let a caller replace a table', () => {
    const { op } = solved();
    op.nodes = { vcc: 1 };
    expect(op.nodes).toEqual({ vcc: 1 });
    // Replacing one point's table leaves another point's alone (the accessors are shared by every point).
    expect(solved().op.nodes['vcc']).toBe(5);
  });

  it('build each point\'s tables from its own vectors, whichever point is read first', () => {
    const c = circuit(SPECS);
    const solver = new DcSolver(c);
    const cold = solver.solve({ temperatureC: -40 }).op;
    const hot = solver.solve({ temperatureC: 125 }).op;
    // Read the later point first: each table must still come from its own point's vectors.
    for (const op of [hot, cold]) {
      const v = pointVectors(op)!;
      c.nodes.forEach((name, i) => expect(op.nodes[name]).toBe(v.volts[i]));
      c.elements.forEach((el, e) => expect(op.devices[el.name]).toEqual(v.record(e)));
    }
    expect(hot.nodes['r1']).not.toBe(cold.nodes['r1']);
  });

  it('read every point through the same reader functions, each point its own values', () => {
    const c = circuit(SPECS);
    const solver = new DcSolver(c);
    const points = [-40, 27, 125].map((temperatureC) => solver.solve({ temperatureC }).op);
    const vectors = points.map((op) => pointVectors(op)!);
    // One function per reader for every point (closures made per point gave a measurement compiled for one corner's
    // readers a call target the next corner's did not match).
    for (const reader of ['record', 'type', 'value', 'quantity', 'region', 'nodeEntries', 'deviceEntries'] as const) {
      expect(new Set(vectors.map((v) => v[reader])).size, reader).toBe(1);
    }
    // Each point still reads its own solve: the collector current of QO1 against its record in that point's own table,
    // and the three temperatures give three different currents.
    const e = c.elements.findIndex((el) => el.name === 'QO1');
    const ic = BJT.quantities.indexOf('ic');
    const readCurrents = points.map((op, k) => {
      const viaReader = readerOf(op, topologyOf(c)).quantity(e, ic);
      expect(viaReader).toBe((op.devices['QO1'] as { ic: number }).ic);
      expect(vectors[k].value(e, 'ic')).toBe(viaReader);
      return viaReader;
    });
    expect(new Set(readCurrents).size).toBe(3);
  });

  it('measure every structure by index exactly as from a copied point read by name', () => {
    const { c, op } = solved();
    const copy = JSON.parse(JSON.stringify(op)) as OperatingPoint;
    const structures = recogniseStructures(c);
    expect(structures.length).toBeGreaterThanOrEqual(3);
    for (const s of structures) {
      expect(measureStructure(c, op, s)).toEqual(measureStructure(c, copy, s));
      expect(structureVoltages(s, op, c)).toEqual(structureVoltages(s, copy));
    }
    // All plans flattened into one set and read through one reader (what the hand analysis does) give the same figures.
    const plans = planMeasurements(topologyOf(c), structures);
    const reader = readerOf(op, topologyOf(c));
    structures.forEach((s, i) => expect(measurePlanned(plans, i, reader, s.outputs)).toEqual(measureStructure(c, copy, s)));
    const byIndex = pointReader(c, op);
    const byName = pointReader(c, copy);
    c.elements.forEach((_, e) => expect(byIndex.record(e)).toEqual(byName.record(e)));
    c.nodes.forEach((_, i) => expect(byIndex.volts(i)).toBe(byName.volts(i)));
  });

  it('read a figure as a finite number (0 where there is none) as the plain readers do, by index and from a copy read by name', () => {
    const { c, op } = solved();
    const copy = JSON.parse(JSON.stringify(op)) as OperatingPoint;
    const finiteOrZero = (v: number | undefined): number => (v !== undefined && Number.isFinite(v) ? v : 0);
    for (const point of [op, copy]) {
      const reader = readerOf(point, topologyOf(c));
      // Every element with every quantity position of the widest kind and one past it, and every node and one past them.
      const positions = 1 + ['Q', 'M', 'D'].reduce((most, k) => Math.max(most, deviceKindOf(k)!.quantities.length), 0);
      c.elements.forEach((_, e) => {
        for (let q = 0; q < positions; q++) expect(reader.quantityOrZero(e, q)).toBe(finiteOrZero(reader.quantity(e, q)));
      });
      for (let i = -1; i <= c.nodes.length; i++) expect(reader.voltsOrZero(i)).toBe(finiteOrZero(reader.volts(i)));
    }
  });

  it('are the same when a solve writes them into the vectors of the last such solve, and leave no trace of it', () => {
    // A device with no Early voltage whose beta takes it from forward-active (ro unbounded, flagged)
    // into saturation (no flag) between two solves: 4.3 V over 100 kΩ drives the base, so
    // IC ≈ β·43 µA against the 4.3 mA the 1 kΩ collector resistor allows at VCE = 0.7 V.
    const QX = model('QX', 'npn', { IS: 1e-15, BF: 100 });
    const c = circuit([...SPECS, ['R', 'RB', 'vcc', 'b', 100e3], ['Q', 'QS', 'cs', 'b', '0', QX], ['R', 'RC', 'vcc', 'cs', 1e3]]);
    const solver = new DcSolver(c);
    const kept = solver.solve({ betaScale: 0.5 });
    const keptDevices = structuredClone(kept.op.devices);
    const keptX = Float64Array.from(kept.x);
    const active = solver.solve({ betaScale: 0.5, reuseResult: true });
    expect(active.op.devices['QS']).toMatchObject({ region: 'forward-active', roInfinite: true });
    expect(active.op.devices).toEqual(keptDevices);
    const reused = solver.solve({ betaScale: 2, temperatureC: 85, sourceValues: { VCC: 4.5 }, initialGuess: kept.x, reuseResult: true });
    const plain = solver.solve({ betaScale: 2, temperatureC: 85, sourceValues: { VCC: 4.5 }, initialGuess: kept.x });
    expect(reused.op.converged).toBe(true);
    expect(reused.op.devices['QS']).toMatchObject({ region: 'saturation' });
    expect(reused.op.devices['QS']).not.toHaveProperty('roInfinite');
    expect(reused.x).toEqual(plain.x);
    expect(reused.op.nodes).toEqual(plain.op.nodes);
    expect(reused.op.devices).toEqual(plain.op.devices);
    c.elements.forEach((_, e) => expect(pointVectors(reused.op)!.record(e)).toEqual(pointVectors(plain.op)!.record(e)));
    // The result of a solve without the flag keeps its own vectors.
    expect(kept.op.devices).toEqual(keptDevices);
    expect(kept.x).toEqual(keptX);
  });

  it('does not keep its solver alive: the records read the same after the solver is collected', async () => {
    const c = circuit(SPECS);
    let solver: DcSolver | undefined = new DcSolver(c);
    const op = solver.solve().op;
    const v = pointVectors(op)!;
    // Read before the solver goes; the tables (built on first read) are not built yet.
    const records = c.elements.map((_, e) => JSON.stringify(v.record(e) ?? null));
    const volts = [...v.volts];
    const solverRef = new WeakRef(solver);
    solver = undefined;
    // A WeakRef's target is kept until the job that made it ends.
    await new Promise((r) => setImmediate(r));
    collectGarbage();
    // The solver holds the matrix and its factors (tens of megabytes at 50,000 elements): a point kept for hovers must not keep them.
    expect(solverRef.deref()).toBeUndefined();
    expect(c.elements.map((_, e) => JSON.stringify(v.record(e) ?? null))).toEqual(records);
    expect([...v.volts]).toEqual(volts);
    expect(c.elements.map((el) => JSON.stringify(op.devices[el.name] ?? null))).toEqual(records);
  });
});
