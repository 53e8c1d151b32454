// What every device judge reads: the operating point through one accessor, the rails, each device's role, the noise floor and the series paths between rails.

import type { ResolvedOptions } from '../../analysis';
import type { Circuit, Element } from '../../circuit';
import { NOISE_FLOOR } from '../../fixes/format';
import { JUNCTION_GMIN } from '../../solve/newton';
import type { DeviceRecord, OperatingPoint } from '../../solve/types';
import { namedPointReader, pointVectors, type NamedPointReader, type PointVectors } from '../../solve/point';
import { dissipation, dissipationAt } from './power';
import { railsByIndex } from '../../structures/rails';
import { topologyOf, type Attachment, type Topology, type Transistor } from '../../structures/topology';
import type { Rail, Structure, Technology } from '../../structures/types';
import type { Finding, RelatedLocation, Severity } from '../../types';
import { nameTable } from '../../names';

/** Everything `judgeDevices` reads. */
export interface DeviceCheckContext {
  circuit: Circuit;
  op: OperatingPoint;
  structures: Structure[];
  options: ResolvedOptions;
}

/** What a transistor is there to do, read from the wiring alone (never from the operating point). */
export type TransistorRole =
  /** Control tied to its own output: a reference or level-shift junction, always at the edge of its active region. */
  | 'diode-connected'
  /** A current source or sink: its control sits on a mirror line or a bias-only node, or its common terminal is degenerated to a rail. */
  | 'current-source'
  /** Stacked on another transistor of its kind (its common terminal is that one's output). */
  | 'cascode'
  /** A switch, an amplifier or something else whose region the wiring does not pin down. */
  | 'other';

/** One side of a device's main path walked outwards through series elements until a rail or a branching node. */
export interface PathSide {
  /** The rail the side ends at, when it ends at one. */
  rail?: Rail;
  /** The series elements crossed, nearest first. */
  elements: Element[];
}

/** The severity table entry of a code. */
export type CodeTable = Record<string, { severity: Severity; summary: string }>;

/** The longest series chain walked from one terminal (keeps a pathological ladder linear). */
const MAX_CHAIN = 64;

/**
 * The shared state of one judging pass: built once per analysis, read by every judge. Node
 * voltages and device records are read only through `v` and `record`, so the layout of the
 * operating point can change without touching the judges.
 */
export class JudgeContext {
  readonly topo: Topology;
  /** Reads `op` by name without building the records of every device. */
  private readonly at: NamedPointReader;
  readonly rails: Map<number, Rail>;
  readonly findings: Finding[] = [];
  /**
   * Lower-case names of every device of a recognised structure and of the elements of its reference feed, made
   * when a judge first asks (only a device that is off or out of its region does: a healthy circuit never).
   */
  private members?: Set<string>;
  /** Lowest and highest rail potential. */
  readonly railSpan: { low: number; high: number };
  /** Transistors by output (collector/drain) node, built on first use. */
  private byOut?: Map<number, Transistor[]>;
  /** The point's vectors, when records can be read by element index (see `recordAt`). */
  private readonly records: PointVectors | undefined;
  /** The index in `circuit.elements` of the element being judged (set by `judgeEachDevice`), or -1. */
  judged = -1;

  constructor(
    readonly circuit: Circuit,
    readonly op: OperatingPoint,
    readonly structures: Structure[],
    readonly options: ResolvedOptions,
    private readonly codes: CodeTable,
  ) {
    this.topo = topologyOf(circuit);
    this.at = namedPointReader(op, this.topo);
    this.rails = railsByIndex(circuit);
    let low = 0;
    let high = 0;
    for (const r of this.rails.values()) {
      if (r.volts < low) low = r.volts;
      if (r.volts > high) high = r.volts;
    }
    this.railSpan = { low, high };
    this.records = pointVectors(op) && this.topo.elementIndex.size === circuit.elements.length ? pointVectors(op) : undefined;
  }

  /** Whether an element (by name, any case) is a device of a recognised structure or an element of its reference feed. */
  inStructure(name: string): boolean {
    if (!this.members) {
      this.members = new Set<string>();
      for (const s of this.structures) {
        for (const d of lowerNames(s.devices)) this.members.add(d);
        for (const e of lowerNames(s.reference.elements)) this.members.add(e);
      }
    }
    return this.members.has(name.toLowerCase());
  }

  /** The solved voltage of a node (0 V for ground or an unknown node). */
  v(node: number): number {
    const x = this.at.volts(this.topo.nodeName(node));
    return x !== undefined && Number.isFinite(x) ? x : 0;
  }

  /** The operating-point record of an element, by its hierarchical name. */
  record(name: string): DeviceRecord | undefined {
    return this.at.record(name);
  }

  /**
   * The record of circuit element `e` (what `record` gives for its name): read by index when the point has the
   * solver's vectors and every element has a name of its own, by name otherwise (a name written twice reads the
   * last element of that name, as the point's table does).
   */
  /** The transistor view of `el`: read by its index when it is the element being judged, else by its name. */
  transistorOf(el: Element): Transistor | undefined {
    const k = this.judged;
    return k >= 0 && this.circuit.elements[k] === el ? this.topo.transistorOfElement(k) : this.topo.byName.get(el.name);
  }

  recordAt(e: number): DeviceRecord | undefined {
    return this.records ? this.records.record(e) : this.at.record(this.circuit.elements[e].name);
  }

  /** `dissipation` of element `e`'s record, read from the point's vectors without the record where it has them. */
  powerAt(e: number): number | undefined {
    return this.records ? dissipationAt(this.records, e) : dissipation(this.recordAt(e));
  }

  nodeName(node: number): string {
    return this.topo.nodeName(node);
  }

  /** The rail a node is, when a voltage source (chain) fixes it. */
  rail(node: number): Rail | undefined {
    return this.rails.get(node);
  }

  /**
   * Whether a device is "off": every terminal current below the 1 pA floor (docs/DEVICE-MODELS.md "Regions").
   * The solver places a 1 pS conductance across each junction for robustness; the current that
   * conductance carries at the device's junction voltages (`leakVolts`) is no device current, so it
   * is allowed on top of the floor.
   */
  isOff(currents: number[], leakVolts: number): boolean {
    return currentsOff(currents, leakVolts);
  }

  /** A transistor's role from the wiring: see `TransistorRole`. */
  role(t: Transistor): TransistorRole {
    if (t.ctrl === t.out) return 'diode-connected';
    // Stacked on another device of its kind: its common terminal is that device's output.
    if (!this.rails.has(t.common) && this.transistorsAtOutput(t.common).some((x) => x !== t && x.tech === t.tech)) return 'cascode';
    if (this.isMirrorLine(t.ctrl, t.tech, t)) return 'current-source';
    if (this.isBiasNode(t.ctrl)) return 'current-source';
    if (!this.rails.has(t.common) && this.degeneratedToRail(t)) return 'current-source';
    return 'other';
  }

  /** The transistors whose output terminal (collector, drain) is `node`. */
  transistorsAtOutput(node: number): Transistor[] {
    if (!this.byOut) {
      this.byOut = new Map();
      for (const x of this.topo.transistors) {
        const list = this.byOut.get(x.out);
        if (list) list.push(x);
        else this.byOut.set(x.out, [x]);
      }
    }
    return this.byOut.get(node) ?? [];
  }

  /**
   * A mirror's base or gate line of the technology: the control of a diode-connected transistor
   * (other than `except`), or a node where one device's output meets the controls of two or more
   * devices of the kind (the reference side of a cascode or wide-swing mirror, whose input device
   * is not itself diode-connected).
   */
  isMirrorLine(node: number, tech: Technology, except?: Transistor): boolean {
    const controls = (this.topo.byCtrl.get(node) ?? []).filter((x) => x.tech === tech);
    if (controls.some((x) => x !== except && x.ctrl === x.out)) return true;
    return controls.length >= 2 && this.transistorsAtOutput(node).some((x) => x.tech === tech);
  }

  /** The diode-connected transistor of the technology whose control is `node`, other than `except`. */
  diodeConnectedAt(node: number, tech: Technology, except?: Transistor): Transistor | undefined {
    return (this.topo.byCtrl.get(node) ?? []).find((x) => x !== except && x.tech === tech && x.ctrl === x.out);
  }

  /** A rail whose only connections are the sources that fix it and control terminals: a bias voltage, not a supply. */
  isBiasNode(node: number): boolean {
    if (!this.rails.has(node) || node === 0) return false;
    let controls = 0;
    for (const a of this.topo.at(node)) {
      const k = a.element.kind;
      if (k === 'V' || k === 'C') continue;
      if ((k === 'Q' || k === 'M') && a.slot === 1) {
        controls++;
        continue;
      }
      return false;
    }
    return controls > 0;
  }

  /** A resistor from the transistor's common terminal to a rail (emitter or source degeneration). */
  private degeneratedToRail(t: Transistor): boolean {
    return this.topo.conducting(t.common).some((a) => {
      if (a.element.kind !== 'R') return false;
      const other = a.element.nodes[a.slot === 0 ? 1 : 0];
      return this.rails.has(other);
    });
  }

  /**
   * Walks from `node` away from `via` through elements in series (a node with exactly one other
   * current-carrying connection besides control terminals) until it reaches a rail or a node where
   * the path branches. Resistors, diodes, inductors, floating sources and the main path of a
   * transistor (collector–emitter, drain–source) are crossed; anything else ends the walk.
   */
  walk(node: number, via: Element): PathSide {
    const elements: Element[] = [];
    let at = node;
    let prev = via;
    for (let step = 0; step < MAX_CHAIN; step++) {
      const rail = this.rails.get(at);
      if (rail) return { rail, elements };
      let next: Attachment | undefined;
      let count = 0;
      for (const a of this.topo.conducting(at)) {
        if (a.element === prev || isControl(a)) continue;
        if (++count > 1) break;
        next = a;
      }
      if (count !== 1 || !next) return { elements };
      const other = farEnd(next);
      if (other === undefined) return { elements };
      elements.push(next.element);
      prev = next.element;
      at = other;
    }
    return { elements };
  }

  /** Related locations for elements, with a note each. */
  related(items: { element: Element; message: string }[]): RelatedLocation[] {
    return items.map(({ element, message }) => ({ uri: element.origin.uri, span: element.origin.span, message }));
  }

  /** Adds a finding located on an element's card. */
  emit(code: string, at: Element, message: string, data: Record<string, unknown>, related?: RelatedLocation[]): void {
    const info = this.codes[code];
    this.findings.push({
      code,
      severity: info?.severity ?? 'warning',
      message,
      uri: at.origin.uri,
      span: at.origin.span,
      ...(related && related.length > 0 ? { related } : {}),
      data: jsonSafe({ device: at.name, ...data }),
    });
  }
}

/**
 * Lower-case names of a list, by list: a value edit's structures share their lists with the last analysis's, so
 * each name is lowered (and hashed) once rather than once per edit (25,000 names on the 20k array). A list of
 * another length than when it was lowered is lowered again.
 */
const loweredNames = new WeakMap<readonly string[], string[]>();
function lowerNames(list: readonly string[]): string[] {
  let out = loweredNames.get(list);
  if (!out || out.length !== list.length) loweredNames.set(list, (out = list.map((x) => x.toLowerCase())));
  return out;
}

/**
 * Whether terminal currents are all below the 1 pA "off" floor (docs/DEVICE-MODELS.md "Regions"), allowing on
 * top of it the current the solver's 1 pS robustness conductance carries across `leakVolts`.
 */
export function currentsOff(currents: number[], leakVolts: number): boolean {
  const floor = offFloor(leakVolts);
  return currents.every((i) => below(i, floor));
}

/**
 * Whether a transistor or diode record is off (see `currentsOff`); false for other records. Read field by field
 * (no list of the currents): the structure checks ask it of every device of every structure.
 */
export function recordIsOff(rec: DeviceRecord | undefined): boolean {
  if (!rec) return false;
  if (rec.type === 'bjt') {
    const floor = offFloor(Math.abs(rec.vbe) + Math.abs(rec.vbc));
    return below(rec.ic, floor) && below(rec.ib, floor) && below(rec.ie, floor);
  }
  if (rec.type === 'mosfet') return below(rec.id, offFloor(Math.abs(rec.vds)));
  if (rec.type === 'jfet') {
    const floor = offFloor(Math.abs(rec.vds) + Math.abs(rec.vgs));
    return below(rec.id, floor) && below(rec.ig, floor);
  }
  if (rec.type === 'diode') return below(rec.id, offFloor(Math.abs(rec.vd)));
  return false;
}

/** The "off" floor of `currentsOff` at junction voltages `leakVolts`. */
function offFloor(leakVolts: number): number {
  return NOISE_FLOOR.A + JUNCTION_GMIN * Math.abs(leakVolts);
}

/** A current under the floor, as `currentsOff` tests each one (NaN counts as under). */
function below(current: number, floor: number): boolean {
  return !(Math.abs(current) >= floor);
}

/** A base or gate connection (a MOS gate carries no current, a JFET gate only its junctions' leakage; a base current is a side load, not the branch's current). */
function isControl(a: Attachment): boolean {
  return (a.element.kind === 'Q' || a.element.kind === 'M' || a.element.kind === 'J') && a.slot === 1;
}

/** The node at the other end of a series element entered through `a`, or undefined when it does not pass current through. */
function farEnd(a: Attachment): number | undefined {
  const e = a.element;
  switch (e.kind) {
    case 'R':
    case 'D':
    case 'L':
    case 'I':
    case 'V':
      return e.nodes[a.slot === 0 ? 1 : 0];
    case 'Q':
      // Collector ↔ emitter.
      return a.slot === 0 ? e.nodes[2] : a.slot === 2 ? e.nodes[0] : undefined;
    case 'M':
      // Drain ↔ source.
      return a.slot === 0 ? e.nodes[2] : a.slot === 2 ? e.nodes[0] : undefined;
    default:
      return undefined;
  }
}

/** Replaces non-finite numbers (not JSON-safe) by null and drops undefined fields. */
export function jsonSafe(data: Record<string, unknown>): Record<string, unknown> {
  const fix = (v: unknown): unknown => {
    if (typeof v === 'number') return Number.isFinite(v) ? v : null;
    if (Array.isArray(v)) return v.map(fix);
    if (v && typeof v === 'object') {
      const o: Record<string, unknown> = nameTable();
      for (const [k, x] of Object.entries(v)) if (x !== undefined) o[k] = fix(x);
      return o;
    }
    return v;
  };
  return fix(data) as Record<string, unknown>;
}
