// Reads one structure's solved currents, headroom and regions off an operating point.

import type { Circuit } from '../circuit';
import type { BjtRecord, DeviceRecord, MosRecord, OperatingPoint } from '../solve/types';
import { isBipolar, polaritySign, topologyOf, type Topology, type Transistor } from './topology';
import type { Structure } from './types';
import { nameTable } from '../names';

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
  const v = (node: number) => finite(op.nodes[topo.nodeName(node)]);
  const refNode = topo.nodeIndex.get(s.reference.node);
  let iref = 0;
  for (const name of s.devices) {
    const t = topo.byName.get(name);
    if (!t || refNode === undefined) continue;
    const rec = op.devices[name];
    iref += terminalCurrentInto(t, rec, refNode);
  }
  // Resistors and diodes of the structure itself (a VBE multiplier's divider, a diode string) on the reference node.
  if (refNode !== undefined && s.parts) {
    for (const name of Object.keys(s.parts)) {
      const el = topo.elementByName.get(name);
      const rec = op.devices[name];
      if (!el || !rec || el.nodes.length < 2) continue;
      const through = rec.type === 'diode' ? rec.id : rec.type === 'bjt' || rec.type === 'mosfet' ? 0 : rec.current;
      if (el.nodes[0] === refNode) iref += finite(through);
      else if (el.nodes[1] === refNode) iref -= finite(through);
    }
  }
  const iout: Record<string, number> = nameTable();
  const headroom: Record<string, number> = nameTable();
  const outOfRegion: string[] = [];
  for (const o of s.outputs) {
    const t = topo.byName.get(o.device);
    const rec = op.devices[o.device];
    if (!t) {
      iout[o.device] = 0;
      headroom[o.device] = 0;
      continue;
    }
    const sign = polaritySign(t.tech);
    if (isBipolar(t.tech)) {
      const r = rec && rec.type === 'bjt' ? rec : undefined;
      iout[o.device] = Math.abs(finite(r?.ic));
      headroom[o.device] = sign * (v(t.out) - v(t.ctrl));
      const vbe = sign * (v(t.ctrl) - v(t.common));
      const active = r ? r.region === 'forward-active' : vbe > 0 && headroom[o.device] >= 0;
      if (!active) outOfRegion.push(o.device);
    } else {
      const r = rec && rec.type === 'mosfet' ? rec : undefined;
      iout[o.device] = Math.abs(finite(r?.id));
      const vds = sign * (v(t.out) - v(t.common));
      const vov = r ? finite(r.vov) : sign * (v(t.ctrl) - v(t.common)) - sign * finite(t.element.model.params.VTO);
      headroom[o.device] = vds - vov;
      const active = r ? r.region === 'saturation' : vov > 0 && vds >= vov;
      if (!active) outOfRegion.push(o.device);
    }
  }
  return { iref: Math.abs(iref), iout, headroom, outOfRegion };
}

/** Current into the terminals of `t` that sit on `node` (positive into the terminal, per the record convention). */
function terminalCurrentInto(t: Transistor, rec: DeviceRecord | undefined, node: number): number {
  let sum = 0;
  if (t.element.kind === 'Q') {
    const r = rec && rec.type === 'bjt' ? (rec as BjtRecord) : undefined;
    if (!r) return 0;
    if (t.out === node) sum += finite(r.ic);
    if (t.ctrl === node) sum += finite(r.ib);
    if (t.common === node) sum += finite(r.ie);
  } else {
    const r = rec && rec.type === 'mosfet' ? (rec as MosRecord) : undefined;
    if (!r) return 0;
    if (t.out === node) sum += finite(r.id);
    if (t.common === node) sum -= finite(r.id);
  }
  return sum;
}

function finite(x: number | undefined): number {
  return x !== undefined && Number.isFinite(x) ? x : 0;
}
