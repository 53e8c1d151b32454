// Reads one structure's solved currents, headroom and regions off an operating point.

import { float64Column, int32Column, int8Column, uint8Column } from '../columns';
import type { Circuit } from '../circuit';
import type { DeviceRecord, OperatingPoint } from '../solve/types';
import { TECHNOLOGIES } from './technology';
import { isBipolar, polaritySign, topologyOf, type Topology, type Transistor } from './topology';
import type { Structure } from './types';
import { recognisedRefNode, recognisedTransistor } from './recognised';
import { nameTable } from '../names';
import { pointVectors, type PointVectors } from '../solve/point';
import { RECORD_LIMIT, SolvedVectors, quietClamp } from '../solve/solved-point';
import { BJT } from '../devices/bjt';
import { DIODE } from '../devices/diode';
import { JFET } from '../devices/jfet';
import { MOSFET } from '../devices/mosfet';
import type { DeviceKind } from '../devices/device';

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
 * up (and built once per Circuit object).
 */
export function measureStructure(circuit: Circuit, op: OperatingPoint, s: Structure, topology?: Topology): Measurement {
  const topo = topology ?? topologyOf(circuit);
  return measurePlanned(plannedStructure(topo, s), 0, readerOf(op, topo), s.outputs);
}

const singlePlans = new WeakMap<Structure, { topo: Topology; plans: MeasurementPlans }>();

/**
 * The plan of one structure, made once per structure and topology: sizing measures a target's
 * structure at every value it verifies, and the spread's Monte Carlo at every sample.
 */
function plannedStructure(topo: Topology, s: Structure): MeasurementPlans {
  const known = singlePlans.get(s);
  if (known && known.topo === topo) return known.plans;
  const plans = planMeasurements(topo, [s]);
  singlePlans.set(s, { topo, plans });
  return plans;
}

/**
 * Planned structure `i` of `plans` measured through `reader`, as `measureStructure` reports it;
 * `outputs` are the structure's outputs in their order. For a caller that measures every structure
 * at one point: the plans flattened and the reader made once, not once per structure.
 */
export function measurePlanned(plans: MeasurementPlans, i: number, reader: PointIndexReader, outputs: readonly { device: string }[]): Measurement {
  const iout: Record<string, number> = nameTable();
  const headroom: Record<string, number> = nameTable();
  const outOfRegion: string[] = [];
  const sink = scratchSink(outputs.length);
  runMeasurement(plans, i, reader, sink, irefCell, 0);
  const iref = irefCell[0];
  for (let o = 0; o < outputs.length; o++) {
    const device = outputs[o].device;
    iout[device] = sink.current[o];
    headroom[device] = sink.headroom[o];
    if (sink.outOfRegion[o]) outOfRegion.push(device);
  }
  return { iref, iout, headroom, outOfRegion };
}

let scratch: OutputSink | undefined;
/** Where `measurePlanned` has `runMeasurement` write IREF. */
const irefCell = new Float64Array(1);

/**
 * A sink for `count` outputs at stride 1, shared by every `measurePlanned` call (each reads it back
 * before the next call writes it): three typed arrays per structure measured were most of its cost.
 */
function scratchSink(count: number): OutputSink {
  if (!scratch || scratch.current.length < count) {
    const n = Math.max(count, 16);
    scratch = new FigureSink(n, 1);
  } else {
    // What a plan with fewer outputs leaves unwritten reads as 0, as in fresh arrays.
    scratch.current.fill(0, 0, count);
    scratch.headroom.fill(0, 0, count);
    scratch.outOfRegion.fill(0, 0, count);
  }
  return scratch;
}

// Bits of `MeasurementPlans.devFlags`: the device is bipolar; its output, control or common terminal is on the reference node.
export const DEV_BIPOLAR = 1;
export const DEV_OUT = 2;
export const DEV_CTRL = 4;
export const DEV_COMMON = 8;

/**
 * The measurements of many structures with every name resolved to an element or node index, in flat
 * arrays: structure i's devices at [devStart[i], devStart[i + 1]), its parts and outputs likewise. What
 * the corner phase reads at every corner for every structure. A plan as objects (arrays of small
 * records, each output pointing into the topology) was a walk over scattered memory per structure per
 * corner, which at 100,000 elements cost more than its arithmetic.
 */
export interface MeasurementPlans {
  /** The structure's transistors, for IREF: the element, its record type, and which of its terminals sit on the reference node (`DEV_*` bits). */
  devStart: Int32Array;
  devE: Int32Array;
  devFlags: Uint8Array;
  devRecord: DeviceRecord['type'][];
  /** The structure's own resistors and diodes on the reference node: +1 when the first node is on it, −1 the second. */
  partStart: Int32Array;
  partE: Int32Array;
  partSign: Int8Array;
  outStart: Int32Array;
  /** The output's element index (−1 when no element has its name). */
  outE: Int32Array;
  /** Output, control and common node of each output's transistor (3 per output). */
  outNodes: Int32Array;
  /** The output's transistor, undefined when the output is no transistor of the circuit. */
  outT: (Transistor | undefined)[];
}

/** Resolves the names of the structures' measurements once, straight into the flat arrays (see `measureStructure` for what is measured). */
export function planMeasurements(topo: Topology, structures: readonly Structure[]): MeasurementPlans {
  // Sized for every name resolving; the arrays are cut to what did.
  let devices = 0;
  let outputs = 0;
  let parts = 0;
  // Indexed loops: this runs once per list of structures, mostly uncompiled, where a for-of makes an object per step.
  for (let i = 0; i < structures.length; i++) {
    const s = structures[i];
    devices += s.devices.length;
    outputs += s.outputs.length;
    if (s.parts) parts += Object.keys(s.parts).length;
  }
  const f: MeasurementPlans = {
    devStart: int32Column(structures.length + 1),
    devE: int32Column(devices),
    devFlags: uint8Column(devices),
    devRecord: [],
    partStart: int32Column(structures.length + 1),
    partE: int32Column(parts),
    partSign: int8Column(parts),
    outStart: int32Column(structures.length + 1),
    outE: int32Column(outputs),
    outNodes: int32Column(3 * outputs),
    outT: [],
  };
  let d = 0;
  let q = 0;
  let o = 0;
  for (let i = 0; i < structures.length; i++) {
    const s = structures[i];
    const refNode = topo.nodeNamed(s.reference.node, recognisedRefNode(s));
    if (refNode !== undefined) {
      for (let j = 0; j < s.devices.length; j++) {
        const name = s.devices[j];
        // Through the transistor recognition found for the name, when it is this topology's (no look-up by name).
        const known = recognisedTransistor(s, j);
        const t = topo.transistorNamed(name, known);
        const e = topo.elementNamed(name, known);
        if (!t || e === undefined) continue;
        f.devE[d] = e;
        f.devFlags[d] = (isBipolar(t.tech) ? DEV_BIPOLAR : 0) | (t.out === refNode ? DEV_OUT : 0) | (t.ctrl === refNode ? DEV_CTRL : 0) | (t.common === refNode ? DEV_COMMON : 0);
        f.devRecord.push(TECHNOLOGIES[t.tech].record);
        d++;
      }
      if (s.parts) {
        const names = Object.keys(s.parts);
        for (let j = 0; j < names.length; j++) {
          const name = names[j];
          const el = topo.elementByName.get(name);
          const e = topo.elementIndex.get(name);
          if (!el || e === undefined || el.nodes.length < 2) continue;
          if (el.nodes[0] !== refNode && el.nodes[1] !== refNode) continue;
          f.partE[q] = e;
          f.partSign[q++] = el.nodes[0] === refNode ? 1 : -1;
        }
      }
    }
    for (let j = 0; j < s.outputs.length; j++) {
      const out = s.outputs[j];
      const known = recognisedTransistor(s, s.devices.indexOf(out.device));
      const t = topo.transistorNamed(out.device, known);
      f.outE[o] = topo.elementNamed(out.device, known) ?? -1;
      if (t) {
        f.outNodes[3 * o] = t.out;
        f.outNodes[3 * o + 1] = t.ctrl;
        f.outNodes[3 * o + 2] = t.common;
      }
      f.outT.push(t);
      o++;
    }
    f.devStart[i + 1] = d;
    f.partStart[i + 1] = q;
    f.outStart[i + 1] = o;
  }
  f.devE = f.devE.subarray(0, d);
  f.devFlags = f.devFlags.subarray(0, d);
  f.partE = f.partE.subarray(0, q);
  f.partSign = f.partSign.subarray(0, q);
  return f;
}

const planCache = new WeakMap<readonly Structure[], { topo: Topology; count: number; plans: MeasurementPlans }>();

/**
 * The flat plans of a list of structures, made once per list (and topology): the nominal check and
 * the corner phase measure the same list. A list whose length changed since is planned again.
 */
export function plannedMeasurements(topo: Topology, structures: readonly Structure[]): MeasurementPlans {
  const known = planCache.get(structures);
  if (known && known.topo === topo && known.count === structures.length) return known.plans;
  const plans = planMeasurements(topo, structures);
  planCache.set(structures, { topo, count: structures.length, plans });
  return plans;
}

/** The plans `plannedMeasurements` made for this list of structures and topology, or undefined when it made none (nothing is planned here). */
export function knownPlans(topo: Topology, structures: readonly Structure[]): MeasurementPlans | undefined {
  const known = planCache.get(structures);
  return known && known.topo === topo && known.count === structures.length ? known.plans : undefined;
}

/**
 * Where `runMeasurement` writes the figures of output o (its position among the structure's outputs):
 * at `first + o·stride` of each array (1 for out of region). Arrays rather than a callback per output:
 * the corner phase measures every structure at every corner, and a callback that is not inlined gets
 * its numbers boxed.
 */
export interface OutputSink {
  current: Float64Array;
  headroom: Float64Array;
  outOfRegion: Uint8Array;
  first: number;
  stride: number;
}

/**
 * Zeroed arrays of `size` figures read at `stride`, from 0. A class, not an object literal: V8 builds a
 * literal's template at its second run and forgets then what type each field holds, which gave up the
 * measurement compiled for the nominal point at the first corner.
 */
export class FigureSink implements OutputSink {
  readonly current: Float64Array;
  readonly headroom: Float64Array;
  readonly outOfRegion: Uint8Array;
  /** Declared, then set in the constructor: a field stored once is taken by V8 for a constant, and the code that read it was given up when the corner phase moved it. */
  first: number;

  constructor(
    size: number,
    readonly stride: number,
  ) {
    this.current = float64Column(size);
    this.headroom = float64Column(size);
    this.outOfRegion = uint8Column(size);
    this.first = 0;
  }
}

/** The record types a measurement reads quantities of, with the device kind whose columns hold them. */
const KIND_OF_RECORD: Readonly<Partial<Record<DeviceRecord['type'], DeviceKind>>> = { bjt: BJT, mosfet: MOSFET, jfet: JFET, diode: DIODE };

/** The position of quantity `name` in `kind`'s columns (`PointIndexReader.quantity` reads by it). */
function positionOf(kind: DeviceKind, name: string): number {
  const q = kind.quantities.indexOf(name);
  if (q < 0) throw new Error(`device kind ${kind.letter} has no quantity ${name}`);
  return q;
}

// The quantities a measurement reads, resolved to their positions once (a look-up by name at every read was most of a corner's measuring).
const BJT_IC = positionOf(BJT, 'ic');
const BJT_IB = positionOf(BJT, 'ib');
const BJT_IE = positionOf(BJT, 'ie');
const MOS_ID = positionOf(MOSFET, 'id');
const MOS_VOV = positionOf(MOSFET, 'vov');
const JFET_ID = positionOf(JFET, 'id');
const JFET_IG = positionOf(JFET, 'ig');
const JFET_VGS = positionOf(JFET, 'vgs');
const JFET_VTO = positionOf(JFET, 'vto');
const DIODE_ID = positionOf(DIODE, 'id');
/** The BJT's forward-active region as its columns' code. */
const BJT_FORWARD_ACTIVE = BJT.regions.indexOf('forward-active');

/**
 * Measures planned structure `i` of `plans` at one point: writes each output's current, headroom and region into `sink`
 * and IREF into `iref[at]`. Written, not returned: a number returned from a call the compiler does not inline is a heap
 * object, one per structure per corner.
 */
export function runMeasurement(plans: MeasurementPlans, i: number, p: PointIndexReader, sink: OutputSink, irefOut: Float64Array, irefAt: number): void {
  let iref = 0;
  for (let d = plans.devStart[i]; d < plans.devStart[i + 1]; d++) {
    const e = plans.devE[d];
    const flags = plans.devFlags[d];
    const type = p.type(e);
    if (flags & DEV_BIPOLAR) {
      if (type !== 'bjt') continue;
      // IC, IB, IE in that order through one call site: each site of a call is inlined or not on its own, and the
      // compiler's budget for a function this size left some out, whose number then came back as a heap object.
      for (let bit = DEV_OUT; bit <= DEV_COMMON; bit <<= 1) if (flags & bit) iref += p.quantityOrZero(e, bit === DEV_OUT ? BJT_IC : bit === DEV_CTRL ? BJT_IB : BJT_IE);
    } else {
      if (type !== plans.devRecord[d]) continue;
      const jfet = type === 'jfet';
      const id = finite(p.quantity(e, jfet ? JFET_ID : MOS_ID));
      // A JFET's gate draws its junctions' current (leakage when reverse-biased); a MOS gate none.
      const ig = jfet ? finite(p.quantity(e, JFET_IG)) : 0;
      if (flags & DEV_OUT) iref += id;
      if (flags & DEV_CTRL) iref += ig;
      if (flags & DEV_COMMON) iref -= id + ig;
    }
  }
  for (let q = plans.partStart[i]; q < plans.partStart[i + 1]; q++) {
    const e = plans.partE[q];
    const type = p.type(e);
    if (!type) continue;
    const through = type === 'diode' ? p.quantity(e, DIODE_ID) : type === 'bjt' || type === 'mosfet' || type === 'jfet' ? 0 : p.num(e, 'current');
    iref += plans.partSign[q] * finite(through);
  }
  const first = plans.outStart[i];
  for (let o = first; o < plans.outStart[i + 1]; o++) {
    const t = plans.outT[o];
    const at = sink.first + (o - first) * sink.stride;
    if (!t) {
      sink.current[at] = 0;
      sink.headroom[at] = 0;
      sink.outOfRegion[at] = 0;
      continue;
    }
    const e = plans.outE[o];
    const vOut = p.voltsOrZero(plans.outNodes[3 * o]);
    const vCtrl = p.voltsOrZero(plans.outNodes[3 * o + 1]);
    const vCommon = p.voltsOrZero(plans.outNodes[3 * o + 2]);
    const type = p.type(e);
    const sign = polaritySign(t.tech);
    if (isBipolar(t.tech)) {
      const r = type === 'bjt';
      const current = Math.abs(r ? p.quantityOrZero(e, BJT_IC) : 0);
      const headroom = sign * (vOut - vCtrl);
      const vbe = sign * (vCtrl - vCommon);
      const active = r ? p.region(e) === 'forward-active' : vbe > 0 && headroom >= 0;
      sink.current[at] = current;
      sink.headroom[at] = headroom;
      sink.outOfRegion[at] = active ? 0 : 1;
    } else {
      // Field-effect output: headroom VDS − (VGS − VTH), the pinch-off voltage VP standing for VTH in a JFET (own polarity).
      const facts = TECHNOLOGIES[t.tech];
      const r = type === facts.record;
      const jfet = facts.family === 'jfet';
      const current = Math.abs(finite(r ? p.quantity(e, jfet ? JFET_ID : MOS_ID) : undefined));
      const vds = sign * (vOut - vCommon);
      const vgs = sign * (vCtrl - vCommon);
      const vov = !r
        ? vgs - (jfet ? finite(t.element.model.params.VTO) : sign * finite(t.element.model.params.VTO))
        : jfet
          ? sign * finite(p.quantity(e, JFET_VGS)) - finite(p.quantity(e, JFET_VTO))
          : finite(p.quantity(e, MOS_VOV));
      const headroom = vds - vov;
      const active = r ? p.region(e) === facts.activeRegion : vov > 0 && vds >= vov;
      sink.current[at] = current;
      sink.headroom[at] = headroom;
      sink.outOfRegion[at] = active ? 0 : 1;
    }
  }
  irefOut[irefAt] = Math.abs(iref);
}

/**
 * `runMeasurement` of every planned structure at many points of one solver (the corner phase's), the structures built of
 * BJTs alone read straight from their table's columns. Which table, instance and record type an element has is fixed for
 * every point of a solver, so it is resolved here once; `runMeasurement` looked each up again through the point's reader
 * for every device and output at every corner (about 70 ms of the 100,000-element array's corner phase). A structure
 * with another device, a part or an output that is no BJT of that table is measured by `runMeasurement`. Every figure is
 * the same number: the same columns read in the same order, clamped as `quantityOrZero` and `voltsOrZero` clamp.
 */
export class BipolarColumnsMeasurement {
  private constructor(
    /** Per structure, 1 when it is read from the columns. */
    private readonly direct: Uint8Array,
    /** The BJT table every structure read directly reads. */
    private readonly table: number,
    /** Per device of the plans, its instance in that table (of a structure read directly). */
    private readonly devInstance: Int32Array,
    /** Per output of the plans, its instance and its polarity's sign (of a structure read directly). */
    private readonly outInstance: Int32Array,
    private readonly outSign: Float64Array,
  ) {}

  /** The direct reading of `plans` at points of the solver `vec` came from; undefined when no structure can be read so. */
  static of(plans: MeasurementPlans, vec: PointVectors): BipolarColumnsMeasurement | undefined {
    if (!(vec instanceof SolvedVectors)) return undefined;
    const count = plans.outStart.length - 1;
    const direct = uint8Column(count);
    const devInstance = int32Column(plans.devE.length);
    const outInstance = int32Column(plans.outE.length);
    const outSign = float64Column(plans.outE.length);
    let table = -1;
    let any = false;
    for (let i = 0; i < count; i++) {
      let ok = plans.partStart[i] === plans.partStart[i + 1];
      for (let d = plans.devStart[i]; ok && d < plans.devStart[i + 1]; d++) {
        const e = plans.devE[d];
        const t = vec.deviceTableOf(e);
        ok = (plans.devFlags[d] & DEV_BIPOLAR) !== 0 && vec.type(e) === 'bjt' && t >= 0 && (table < 0 || t === table);
        if (ok) {
          table = t;
          devInstance[d] = vec.deviceInstanceOf(e);
        }
      }
      for (let o = plans.outStart[i]; ok && o < plans.outStart[i + 1]; o++) {
        const tr = plans.outT[o];
        const e = plans.outE[o];
        const t = vec.deviceTableOf(e);
        ok = tr !== undefined && isBipolar(tr.tech) && vec.type(e) === 'bjt' && t >= 0 && (table < 0 || t === table);
        if (ok) {
          table = t;
          outInstance[o] = vec.deviceInstanceOf(e);
          outSign[o] = polaritySign(tr!.tech);
        }
      }
      if (ok) {
        direct[i] = 1;
        any = true;
      }
    }
    return any && table >= 0 && vec.tableRegions(table) === BJT.regions ? new BipolarColumnsMeasurement(direct, table, devInstance, outInstance, outSign) : undefined;
  }

  /**
   * Every structure of `plans` at the point `vec` (a point of the solver this was made for; `reader` reads it): IREF of
   * structure i into `iref[i·C + k]`, output o's figures into the sink's arrays at `o·C + k`, as `runMeasurement` writes
   * them with the sink moved to each structure's first output, then IREF, each current and each headroom that is not
   * finite made 0 (as the corner phase keeps them: in the same pass, for each of the arrays' places is a cache line of its
   * own, C numbers from the last structure's).
   */
  measure(plans: MeasurementPlans, vec: SolvedVectors, reader: PointIndexReader, sink: OutputSink, iref: Float64Array, C: number, k: number): void {
    const columns = vec.tableColumns(this.table);
    const forwardActive = BJT_FORWARD_ACTIVE;
    const count = plans.outStart.length - 1;
    for (let i = 0; i < count; i++) {
      if (this.direct[i] === 1) this.measureDirect(plans, i, columns.values[BJT_IC], columns.values[BJT_IB], columns.values[BJT_IE], columns.region, forwardActive, vec.volts, sink, iref, C, k);
      else measureThrough(plans, i, reader, sink, iref, C, k);
    }
  }

  private measureDirect(plans: MeasurementPlans, i: number, ic: Float64Array, ib: Float64Array, ie: Float64Array, region: Uint8Array, forwardActive: number, volts: Float64Array, sink: OutputSink, irefOut: Float64Array, C: number, k: number): void {
    let iref = 0;
    for (let d = plans.devStart[i]; d < plans.devStart[i + 1]; d++) {
      const flags = plans.devFlags[d];
      const n = this.devInstance[d];
      // IC, IB, IE in that order, as `runMeasurement` adds them.
      if (flags & DEV_OUT) iref += columnValue(ic[n]);
      if (flags & DEV_CTRL) iref += columnValue(ib[n]);
      if (flags & DEV_COMMON) iref += columnValue(ie[n]);
    }
    const { current, headroom, outOfRegion } = sink;
    for (let o = plans.outStart[i]; o < plans.outStart[i + 1]; o++) {
      const at = o * C + k;
      const n = this.outInstance[o];
      const sign = this.outSign[o];
      const vOut = nodeValue(volts, plans.outNodes[3 * o]);
      const vCtrl = nodeValue(volts, plans.outNodes[3 * o + 1]);
      current[at] = finiteOrZero(Math.abs(columnValue(ic[n])));
      headroom[at] = finiteOrZero(sign * (vOut - vCtrl));
      outOfRegion[at] = region[n] === forwardActive ? 0 : 1;
    }
    irefOut[i * C + k] = finiteOrZero(Math.abs(iref));
  }
}

/** Structure i measured through `reader` into the places `BipolarColumnsMeasurement.measure` writes, non-finite figures 0. */
function measureThrough(plans: MeasurementPlans, i: number, reader: PointIndexReader, sink: OutputSink, irefOut: Float64Array, C: number, k: number): void {
  sink.first = plans.outStart[i] * C + k;
  runMeasurement(plans, i, reader, sink, irefOut, i * C + k);
  irefOut[i * C + k] = finiteOrZero(irefOut[i * C + k]);
  const { current, headroom } = sink;
  for (let o = plans.outStart[i]; o < plans.outStart[i + 1]; o++) {
    current[o * C + k] = finiteOrZero(current[o * C + k]);
    headroom[o * C + k] = finiteOrZero(headroom[o * C + k]);
  }
}

function finiteOrZero(x: number): number {
  return Number.isFinite(x) ? x : 0;
}

/** A column's value as `quantityOrZero` gives it: past ±RECORD_LIMIT clamped (NaN as 0). */
function columnValue(val: number): number {
  return Math.abs(val) <= RECORD_LIMIT ? val : quietClamp(val);
}

/** A node's volts as `voltsOrZero` gives them: 0 for ground's −1, an index past the vector or a value that is not finite. */
function nodeValue(volts: Float64Array, node: number): number {
  const v = node >= 0 ? volts[node] : 0;
  return Number.isFinite(v) ? v : 0;
}

/** What a measurement reads of a point, by element and node index. */
export interface PointIndexReader {
  volts(node: number): number | undefined;
  /** The record type of an element, undefined when it has none. */
  type(e: number): DeviceRecord['type'] | undefined;
  num(e: number, quantity: string): number | undefined;
  /** Quantity `q` of a device record by its position in its kind's `quantities` (as `PointVectors.quantity`). */
  quantity(e: number, q: number): number | undefined;
  /** `volts(node)` as a finite number: 0 where it is undefined or not finite. */
  voltsOrZero(node: number): number;
  /** `quantity(e, q)` as a finite number: 0 where it is undefined or not finite. */
  quantityOrZero(e: number, q: number): number;
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
  if (vec) return new VectorReader(vec);
  const devices = op.devices;
  const rec = (e: number) => (elements[e] ? devices[elements[e].name] : undefined);
  const num = (e: number, q: string): number | undefined => {
    const val = (rec(e) as unknown as Record<string, unknown> | undefined)?.[q];
    return typeof val === 'number' ? val : undefined;
  };
  const volts = (node: number): number | undefined => op.nodes[topo.nodeName(node)];
  const quantity = (e: number, q: number): number | undefined => {
    const type = rec(e)?.type;
    const name = type ? KIND_OF_RECORD[type]?.quantities[q] : undefined;
    return name === undefined ? undefined : num(e, name);
  };
  return {
    volts,
    voltsOrZero: (node) => finite(volts(node)),
    quantityOrZero: (e, q) => finite(quantity(e, q)),
    type: (e) => rec(e)?.type,
    num,
    quantity,
    region: (e) => {
      const r = rec(e);
      return r && 'region' in r ? r.region : undefined;
    },
  };
}

/**
 * A point read through the solver's vectors. Its methods are one class's, the same functions at every point:
 * a measurement compiled for the readers of one corner's point then keeps its code at the next corner's.
 */
class VectorReader implements PointIndexReader {
  constructor(private readonly vec: PointVectors) {}

  volts(node: number): number | undefined {
    return node >= 0 ? this.vec.volts[node] : undefined;
  }

  type(e: number): DeviceRecord['type'] | undefined {
    return this.vec.type(e);
  }

  num(e: number, quantity: string): number | undefined {
    return this.vec.value(e, quantity);
  }

  quantity(e: number, q: number): number | undefined {
    return this.vec.quantity(e, q);
  }

  voltsOrZero(node: number): number {
    const v = node >= 0 ? this.vec.volts[node] : 0;
    return Number.isFinite(v) ? v : 0;
  }

  quantityOrZero(e: number, q: number): number {
    return this.vec.quantityOrZero(e, q);
  }

  region(e: number): string | undefined {
    return this.vec.region(e);
  }
}

function finite(x: number | undefined): number {
  return x !== undefined && Number.isFinite(x) ? x : 0;
}
