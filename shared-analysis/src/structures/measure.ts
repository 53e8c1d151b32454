// Reads one structure's solved currents, headroom and regions off an operating point.

import type { Circuit } from '../circuit';
import type { DeviceRecord, OperatingPoint } from '../solve/types';
import { TECHNOLOGIES } from './technology';
import { isBipolar, polaritySign, topologyOf, type Topology, type Transistor } from './topology';
import type { Structure } from './types';
import { nameTable } from '../names';
import { pointVectors } from '../solve/point';

/** What `measureStructure` returns: magnitudes in A, headroom in V (negative when out of region). */
export interface Measurement {
  iref: number;
  iout: Record<string, number>;
  headroom: Record<string, number>;
  outOfRegion: string[];
}

/**
 * The solved currents (magnitudes) and headroom of one structure at one operating point.
 *
 * IREF is the current the feed delivers into the structure at the reference node: the sum
 * of the currents into every structure terminal on that node (collector and bases of a
 * simple mirror, and the structure's own resistors and diodes listed in `parts`), so
 * base-current loads outside the structure are not counted. Headroom
 * of a bipolar output is −VBC in its own polarity (the distance of the collector beyond the
 * VBC = 0 edge, docs/DEVICE-MODELS.md's forward-active definition); of a MOS output VDS − (VGS − VTH);
 * of a JFET output VDS − (VGS − VP), VP the pinch-off voltage.
 * An output is out of region when its record says so (or, without a record, when the
 * node voltages put it outside forward-active / saturation). Never NaN: a missing node or
 * record counts as 0 V / 0 A.
 *
 * `topology` is the circuit's prebuilt {@link Topology} (from `topologyOf(circuit)`), for
 * callers that measure many structures at many operating points; when absent it is looked
 * up (and built once per Circuit object). `planned` is the structure's `planMeasurement` on that
 * topology, for a caller that has it already.
 */
export function measureStructure(circuit: Circuit, op: OperatingPoint, s: Structure, topology?: Topology, planned?: MeasurementPlan): Measurement {
  const topo = topology ?? topologyOf(circuit);
  const plan = planned ?? planMeasurement(topo, s);
  const iout: Record<string, number> = nameTable();
  const headroom: Record<string, number> = nameTable();
  const outOfRegion: string[] = [];
  const iref = runMeasurement(plan, readerOf(op, topo), (o, current, room, out) => {
    const device = plan.outputs[o].device;
    iout[device] = current;
    headroom[device] = room;
    if (out) outOfRegion.push(device);
  });
  return { iref, iout, headroom, outOfRegion };
}

/** A structure's measurement with every name resolved to an element or node index, for measuring it at many points. */
export interface MeasurementPlan {
  refNode: number | undefined;
  /** The structure's transistors, for IREF: the element and which of its terminals sit on the reference node. */
  devices: { e: number; bipolar: boolean; record: DeviceRecord['type']; out: boolean; ctrl: boolean; common: boolean }[];
  /** The structure's own resistors and diodes on the reference node: +1 when the first node is on it, −1 the second. */
  parts: { e: number; sign: 1 | -1 }[];
  outputs: { device: string; e: number; t: Transistor | undefined }[];
}

/** Resolves the names of a structure's measurement once (see `measureStructure` for what is measured). */
export function planMeasurement(topo: Topology, s: Structure): MeasurementPlan {
  const refNode = topo.nodeIndex.get(s.reference.node);
  const devices: MeasurementPlan['devices'] = [];
  const parts: MeasurementPlan['parts'] = [];
  if (refNode !== undefined) {
    for (const name of s.devices) {
      const t = topo.byName.get(name);
      const e = topo.elementIndex.get(name);
      if (!t || e === undefined) continue;
      devices.push({ e, bipolar: isBipolar(t.tech), record: TECHNOLOGIES[t.tech].record, out: t.out === refNode, ctrl: t.ctrl === refNode, common: t.common === refNode });
    }
    for (const name of Object.keys(s.parts ?? {})) {
      const el = topo.elementByName.get(name);
      const e = topo.elementIndex.get(name);
      if (!el || e === undefined || el.nodes.length < 2) continue;
      if (el.nodes[0] === refNode) parts.push({ e, sign: 1 });
      else if (el.nodes[1] === refNode) parts.push({ e, sign: -1 });
    }
  }
  const outputs = s.outputs.map((o) => ({ device: o.device, e: topo.elementIndex.get(o.device) ?? -1, t: topo.byName.get(o.device) }));
  return { refNode, devices, parts, outputs };
}

/**
 * Measures a planned structure at one point: hands each output's current, headroom and whether it
 * is out of region to `output` (by its position in `plan.outputs`) and returns IREF.
 */
export function runMeasurement(plan: MeasurementPlan, p: PointIndexReader, output: (o: number, current: number, headroom: number, outOfRegion: boolean) => void): number {
  const v = (node: number) => finite(p.volts(node));
  let iref = 0;
  for (const d of plan.devices) {
    const type = p.type(d.e);
    if (d.bipolar) {
      if (type !== 'bjt') continue;
      if (d.out) iref += finite(p.num(d.e, 'ic'));
      if (d.ctrl) iref += finite(p.num(d.e, 'ib'));
      if (d.common) iref += finite(p.num(d.e, 'ie'));
    } else {
      if (type !== d.record) continue;
      const id = finite(p.num(d.e, 'id'));
      // A JFET's gate draws its junctions' current (leakage when reverse-biased); a MOS gate none.
      const ig = type === 'jfet' ? finite(p.num(d.e, 'ig')) : 0;
      if (d.out) iref += id;
      if (d.ctrl) iref += ig;
      if (d.common) iref -= id + ig;
    }
  }
  for (const part of plan.parts) {
    const type = p.type(part.e);
    if (!type) continue;
    const through = type === 'diode' ? p.num(part.e, 'id') : type === 'bjt' || type === 'mosfet' || type === 'jfet' ? 0 : p.num(part.e, 'current');
    iref += part.sign * finite(through);
  }
  plan.outputs.forEach(({ e, t }, o) => {
    if (!t) {
      output(o, 0, 0, false);
      return;
    }
    const type = p.type(e);
    const sign = polaritySign(t.tech);
    if (isBipolar(t.tech)) {
      const r = type === 'bjt';
      const current = Math.abs(finite(r ? p.num(e, 'ic') : undefined));
      const headroom = sign * (v(t.out) - v(t.ctrl));
      const vbe = sign * (v(t.ctrl) - v(t.common));
      const active = r ? p.region(e) === 'forward-active' : vbe > 0 && headroom >= 0;
      output(o, current, headroom, !active);
    } else {
      // Field-effect output: headroom VDS − (VGS − VTH), the pinch-off voltage VP standing for VTH in a JFET (own polarity).
      const facts = TECHNOLOGIES[t.tech];
      const r = type === facts.record;
      const current = Math.abs(finite(r ? p.num(e, 'id') : undefined));
      const vds = sign * (v(t.out) - v(t.common));
      const vgs = sign * (v(t.ctrl) - v(t.common));
      const vov = !r
        ? vgs - (facts.family === 'jfet' ? finite(t.element.model.params.VTO) : sign * finite(t.element.model.params.VTO))
        : facts.family === 'jfet'
          ? sign * finite(p.num(e, 'vgs')) - finite(p.num(e, 'vto'))
          : finite(p.num(e, 'vov'));
      const headroom = vds - vov;
      const active = r ? p.region(e) === facts.activeRegion : vov > 0 && vds >= vov;
      output(o, current, headroom, !active);
    }
  });
  return Math.abs(iref);
}

/** What a measurement reads of a point, by element and node index. */
export interface PointIndexReader {
  volts(node: number): number | undefined;
  /** The record type of an element, undefined when it has none. */
  type(e: number): DeviceRecord['type'] | undefined;
  num(e: number, quantity: string): number | undefined;
  region(e: number): string | undefined;
}

/**
 * Reads by index when the point carries the solver's vectors (no record and no name-keyed table of
 * the whole point is built, which is what makes measuring every structure at every corner cheap),
 * by the point's records (element index → name) otherwise.
 */
export function readerOf(op: OperatingPoint, topo: Topology): PointIndexReader {
  const elements = topo.circuit.elements;
  const vec = pointVectors(op);
  if (vec) {
    return {
      volts: (node) => (node >= 0 ? vec.volts[node] : undefined),
      type: (e) => vec.type(e),
      num: (e, q) => vec.value(e, q),
      region: (e) => vec.region(e),
    };
  }
  const devices = op.devices;
  const rec = (e: number) => (elements[e] ? devices[elements[e].name] : undefined);
  return {
    volts: (node) => op.nodes[topo.nodeName(node)],
    type: (e) => rec(e)?.type,
    num: (e, q) => {
      const val = (rec(e) as unknown as Record<string, unknown> | undefined)?.[q];
      return typeof val === 'number' ? val : undefined;
    },
    region: (e) => {
      const r = rec(e);
      return r && 'region' in r ? r.region : undefined;
    },
  };
}

function finite(x: number | undefined): number {
  return x !== undefined && Number.isFinite(x) ? x : 0;
}
