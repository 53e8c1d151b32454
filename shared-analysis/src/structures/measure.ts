// Reads one structure's solved currents, headroom and regions off an operating point.

import type { Circuit } from '../circuit';
import type { DeviceRecord, OperatingPoint } from '../solve/types';
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
 * VBC = 0 edge, docs/DEVICE-MODELS.md's forward-active definition); of a MOS output VDS − (VGS − VTH).
 * An output is out of region when its record says so (or, without a record, when the
 * node voltages put it outside forward-active / saturation). Never NaN: a missing node or
 * record counts as 0 V / 0 A.
 *
 * `topology` is the circuit's prebuilt {@link Topology} (from `topologyOf(circuit)`), for
 * callers that measure many structures at many operating points; when absent it is looked
 * up (and built once per Circuit object).
 */
export function measureStructure(circuit: Circuit, op: OperatingPoint, s: Structure, topology?: Topology): Measurement {
  const topo = topology ?? topologyOf(circuit);
  const p = readerOf(op, topo);
  const v = (node: number) => finite(p.volts(node));
  const refNode = topo.nodeIndex.get(s.reference.node);
  let iref = 0;
  for (const name of s.devices) {
    const t = topo.byName.get(name);
    if (!t || refNode === undefined) continue;
    iref += terminalCurrentInto(t, p, name, refNode);
  }
  // Resistors and diodes of the structure itself (a VBE multiplier's divider, a diode string) on the reference node.
  if (refNode !== undefined && s.parts) {
    for (const name of Object.keys(s.parts)) {
      const el = topo.elementByName.get(name);
      const type = p.type(name);
      if (!el || !type || el.nodes.length < 2) continue;
      const through = type === 'diode' ? p.num(name, 'id') : type === 'bjt' || type === 'mosfet' || type === 'jfet' ? 0 : p.num(name, 'current');
      if (el.nodes[0] === refNode) iref += finite(through);
      else if (el.nodes[1] === refNode) iref -= finite(through);
    }
  }
  const iout: Record<string, number> = nameTable();
  const headroom: Record<string, number> = nameTable();
  const outOfRegion: string[] = [];
  for (const o of s.outputs) {
    const t = topo.byName.get(o.device);
    if (!t) {
      iout[o.device] = 0;
      headroom[o.device] = 0;
      continue;
    }
    const type = p.type(o.device);
    const sign = polaritySign(t.tech);
    if (isBipolar(t.tech)) {
      const r = type === 'bjt';
      iout[o.device] = Math.abs(finite(r ? p.num(o.device, 'ic') : undefined));
      headroom[o.device] = sign * (v(t.out) - v(t.ctrl));
      const vbe = sign * (v(t.ctrl) - v(t.common));
      const active = r ? p.region(o.device) === 'forward-active' : vbe > 0 && headroom[o.device] >= 0;
      if (!active) outOfRegion.push(o.device);
    } else {
      const r = type === 'mosfet';
      iout[o.device] = Math.abs(finite(r ? p.num(o.device, 'id') : undefined));
      const vds = sign * (v(t.out) - v(t.common));
      const vov = r ? finite(p.num(o.device, 'vov')) : sign * (v(t.ctrl) - v(t.common)) - sign * finite(t.element.model.params.VTO);
      headroom[o.device] = vds - vov;
      const active = r ? p.region(o.device) === 'saturation' : vov > 0 && vds >= vov;
      if (!active) outOfRegion.push(o.device);
    }
  }
  return { iref: Math.abs(iref), iout, headroom, outOfRegion };
}

/** The few things a measurement reads of a point, by element name. */
interface MeasureReader {
  volts(node: number): number | undefined;
  /** The record type of a named element, undefined when it has no record. */
  type(name: string): DeviceRecord['type'] | undefined;
  num(name: string, quantity: string): number | undefined;
  region(name: string): string | undefined;
}

const RECORD_TYPE: Record<string, DeviceRecord['type']> = { Q: 'bjt', M: 'mosfet', D: 'diode', J: 'jfet' };

/**
 * Reads by index when the point carries the solver's vectors (no record and no name-keyed table of
 * the whole point is built, which is what makes measuring every structure at every corner cheap),
 * by the point's records otherwise.
 */
function readerOf(op: OperatingPoint, topo: Topology): MeasureReader {
  const vec = pointVectors(op);
  if (vec) {
    const index = topo.elementIndex;
    const elements = topo.circuit.elements;
    return {
      volts: (node) => (node >= 0 ? vec.volts[node] : undefined),
      type: (name) => {
        const e = index.get(name);
        if (e === undefined) return undefined;
        const letter = elements[e].kind;
        const nonlinear = RECORD_TYPE[letter];
        if (nonlinear) return vec.region(e) === undefined ? undefined : nonlinear;
        return vec.value(e, 'current') === undefined ? undefined : (vec.record(e)?.type ?? undefined);
      },
      num: (name, q) => {
        const e = index.get(name);
        return e === undefined ? undefined : vec.value(e, q);
      },
      region: (name) => {
        const e = index.get(name);
        return e === undefined ? undefined : vec.region(e);
      },
    };
  }
  const devices = op.devices;
  return {
    volts: (node) => op.nodes[topo.nodeName(node)],
    type: (name) => devices[name]?.type,
    num: (name, q) => {
      const rec = devices[name] as unknown as Record<string, unknown> | undefined;
      const val = rec?.[q];
      return typeof val === 'number' ? val : undefined;
    },
    region: (name) => {
      const rec = devices[name];
      return rec && 'region' in rec ? rec.region : undefined;
    },
  };
}

/** Current into the terminals of `t` that sit on `node` (positive into the terminal, per the record convention). */
function terminalCurrentInto(t: Transistor, p: MeasureReader, name: string, node: number): number {
  let sum = 0;
  const type = p.type(name);
  if (t.element.kind === 'Q') {
    if (type !== 'bjt') return 0;
    if (t.out === node) sum += finite(p.num(name, 'ic'));
    if (t.ctrl === node) sum += finite(p.num(name, 'ib'));
    if (t.common === node) sum += finite(p.num(name, 'ie'));
  } else {
    if (type !== 'mosfet') return 0;
    const id = finite(p.num(name, 'id'));
    if (t.out === node) sum += id;
    if (t.common === node) sum -= id;
  }
  return sum;
}

function finite(x: number | undefined): number {
  return x !== undefined && Number.isFinite(x) ? x : 0;
}
