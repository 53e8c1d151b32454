// The operating point as vectors indexed by node and element; the name-keyed records are built only when something reads them.

import type { Circuit } from '../circuit';
import type { DeviceRecord, Fallback, OperatingPoint } from './types';
import { registerLazyTable } from '../output-guard';

/**
 * Index-based access to one solved operating point, for code that reads many values of many
 * points (corners, measurements, sweeps): no name look-up, no table of every device built.
 */
export interface PointVectors {
  /** Volts by circuit node index (`circuit.nodes`), ground (index 0) included; exactly what `op.nodes` shows. */
  readonly volts: Float64Array;
  /** The record of circuit element `e` (what `op.devices[name]` shows), or undefined when the element has none. */
  record(e: number): DeviceRecord | undefined;
  /** The `type` of element `e`'s record without building the record; undefined when the element has none. */
  type(e: number): DeviceRecord['type'] | undefined;
  /**
   * One number of element `e`'s record without building the record: a device kind's quantity
   * (`'ic'`, `'vov'`, ...) or a two-terminal element's `'current'`, `'voltage'` or `'power'`;
   * undefined when the element has no such number.
   */
  value(e: number, quantity: string): number | undefined;
  /**
   * Quantity `q` of element `e`'s device kind by its position in the kind's `quantities`: what
   * `value(e, kind.quantities[q])` gives, without the look-up by name (for a reader of many points that
   * resolved its names once); undefined for an element without a device record or a position past its kind's.
   */
  quantity(e: number, q: number): number | undefined;
  /** `quantity(e, q)` as a finite number: 0 where it is undefined, a value past ±1e300 at that limit. */
  quantityOrZero(e: number, q: number): number;
  /** The region name of a nonlinear device's record, undefined for other elements. */
  region(e: number): string | undefined;
  /**
   * The `nodes` and `devices` tables' entries in their order, produced one at a time (for a writer
   * that streams a large point without building its tables; records are not kept).
   */
  nodeEntries(): Iterable<[string, number]>;
  deviceEntries(): Iterable<[string, DeviceRecord]>;
  /** The same entries read by position (for a writer that takes them one by one and keeps none: no pair made per entry). */
  nodeTable(): EntryTable<number>;
  deviceTable(): EntryTable<DeviceRecord>;
}

/** A table's entries by position: entry k (0 ≤ k < `count`) is `name(k)` → `value(k)` (a record is made at each call). */
export interface EntryTable<T> {
  readonly count: number;
  name(k: number): string;
  value(k: number): T;
}

/**
 * A table's entries through one pair and one step result, refilled at each step: for a reader that takes an entry
 * before it asks for the next and keeps neither (the JSON writer), where a generator made both for every node and
 * device (about 25 MB at 100,000 elements). Not for a reader that keeps the pairs (a spread into a list).
 */
export class TableEntries<T> implements IterableIterator<readonly [string, T]> {
  private k = 0;
  private readonly pair: [string, T | undefined] = ['', undefined];
  private readonly step = { done: false, value: this.pair as readonly [string, T] };

  constructor(private readonly table: EntryTable<T>) {}

  [Symbol.iterator](): this {
    return this;
  }

  next(): IteratorResult<readonly [string, T]> {
    const { table, pair, step } = this;
    const k = this.k;
    if (k >= table.count) {
      step.done = true;
      pair[0] = '';
      pair[1] = undefined;
      return step as IteratorResult<readonly [string, T]>;
    }
    this.k = k + 1;
    pair[0] = table.name(k);
    pair[1] = table.value(k);
    return step as IteratorResult<readonly [string, T]>;
  }
}

/** A table's entries as pairs, one at a time. */
export function* entriesOf<T>(table: EntryTable<T>): Iterable<[string, T]> {
  for (let k = 0; k < table.count; k++) yield [table.name(k), table.value(k)];
}

type PointTables = { nodes: Record<string, number>; devices: Record<string, DeviceRecord> };

/** What a lazy point keeps beside its fields: its vectors, how to build its tables, and the tables once built. */
interface PointState {
  v: PointVectors;
  build: () => PointTables;
  built?: PointTables;
}

/**
 * Where a lazy point keeps its `PointState`: a property keyed by a symbol and not enumerable, which JSON, spreading,
 * `Object.keys` and structured cloning all leave out (a copy of a point has none, and is read by its names). Two
 * WeakMaps held it before; an entry in one cost about as much as the rest of making a point, and sizing makes about
 * 16,000 points for 1,000 targets.
 */
const STATE: unique symbol = Symbol('lazy point state');

type StatefulPoint = OperatingPoint & { readonly [STATE]?: PointState };

/** The vectors behind a point the solver returned, or undefined for a point built by hand (tests) or copied (JSON, another thread). */
export function pointVectors(op: OperatingPoint): PointVectors | undefined {
  return (op as StatefulPoint)[STATE]?.v;
}

/** What reads a point by index: the solver's vectors when the point has them, the name-keyed tables otherwise. */
export interface PointReader {
  volts(node: number): number;
  record(e: number): DeviceRecord | undefined;
}

/** A reader of `op`, a point of `circuit`: by index when the solver's vectors are there, by name otherwise. */
export function pointReader(circuit: Circuit, op: OperatingPoint): PointReader {
  const v = pointVectors(op);
  if (v) {
    const volts = v.volts;
    return { volts: (node) => (node >= 0 && node < volts.length ? volts[node] : 0), record: (e) => v.record(e) };
  }
  const nodes = op.nodes;
  const devices = op.devices;
  return {
    volts: (node) => nodes[circuit.nodes[node]] ?? 0,
    record: (e) => {
      const el = circuit.elements[e];
      return el ? devices[el.name] : undefined;
    },
  };
}

/** The tables of lazy point `op`, built on the first read of either. */
function tablesOf(op: OperatingPoint): PointTables {
  const state = (op as StatefulPoint)[STATE]!;
  return (state.built ??= state.build());
}

/** An assignment replaces the table with a plain data property. */
function assigned(op: OperatingPoint, key: 'nodes' | 'devices', value: unknown): void {
  Object.defineProperty(op, key, { value, writable: true, enumerable: true, configurable: true });
}

/*
 * The accessors are the same functions for every point, made once per table (they find their point as `this`): a pair made
 * per point gave every point a hidden class of its own, thousands in a sizing run, and made every read
 * of a point's fields megamorphic.
 */
function tableAccessor(key: 'nodes' | 'devices'): PropertyDescriptor {
  return {
    enumerable: true,
    configurable: true,
    get(this: OperatingPoint) {
      return tablesOf(this)[key];
    },
    set(this: OperatingPoint, value: unknown) {
      assigned(this, key, value);
    },
  };
}
const NODES_TABLE = tableAccessor('nodes');
const DEVICES_TABLE = tableAccessor('devices');
// Assigned, a table is a plain data property (`assigned`), so while the accessor is there the table is the built one.
registerLazyTable('nodes', NODES_TABLE);
registerLazyTable('devices', DEVICES_TABLE);

/**
 * An OperatingPoint whose `nodes` and `devices` tables are built by `build` on first read (and
 * then kept), with `vectors` registered for `pointVectors`. The tables are ordinary enumerable
 * properties to every reader: JSON, spreading and structured cloning build and copy them.
 */
export function lazyPoint(head: { converged: boolean; temperatureC: number; iterations: number; fallbacks: Fallback[] }, v: PointVectors, build: () => PointTables): OperatingPoint {
  const op = { converged: head.converged, temperatureC: head.temperatureC, iterations: head.iterations, fallbacks: head.fallbacks } as OperatingPoint;
  const state: PointState = { v, build };
  Object.defineProperty(op, STATE, { value: state });
  Object.defineProperty(op, 'nodes', NODES_TABLE);
  Object.defineProperty(op, 'devices', DEVICES_TABLE);
  return op;
}

/** Reads a point by node and element name, as `op.nodes[name]` and `op.devices[name]` show it. */
export interface NamedPointReader {
  volts(node: string): number | undefined;
  record(element: string): DeviceRecord | undefined;
  /** `record(element)` of the element at index `e` of the circuit indexed, the name's own (`elementIndex.get(element)`). */
  recordAt(e: number, element: string): DeviceRecord | undefined;
}

/**
 * A name reader of `op`, a point of the circuit `names` indexes (a `Topology`): through the solver's vectors when the
 * point has them, so a check that reads a few devices does not build the records of all of them; through the tables
 * otherwise, and when two elements share a name (the table then holds the record its build order leaves last).
 */
export function namedPointReader(op: OperatingPoint, names: { circuit: Circuit; nodeIndex: ReadonlyMap<string, number>; elementIndex: ReadonlyMap<string, number> }): NamedPointReader {
  const v = pointVectors(op);
  if (!v || names.elementIndex.size !== names.circuit.elements.length) return { volts: (node) => op.nodes[node], record: (element) => op.devices[element], recordAt: (_e, element) => op.devices[element] };
  return {
    volts: (node) => {
      const i = names.nodeIndex.get(node);
      return i === undefined ? undefined : v.volts[i];
    },
    record: (element) => {
      const e = names.elementIndex.get(element);
      return e === undefined ? undefined : v.record(e);
    },
    recordAt: (e) => v.record(e),
  };
}
