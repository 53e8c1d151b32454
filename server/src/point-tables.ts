// The operating point's name-keyed tables sent as columns and read back on the main thread without building them:
// the tables of a 50,000-element point (a record object, its numbers and a dictionary entry per device and node) were
// about 15 MB of the main thread's heap per analysis held, twice while a result is taken in beside the last one.

import type { Circuit } from '../../shared-analysis/src/circuit';
import type { DeviceRecord, OperatingPoint } from '../../shared-analysis/src/solve/types';
import type { PointVectors } from '../../shared-analysis/src/solve/point';

/**
 * The point's tables as columns. `op.nodes` is `circuit.nodes[i]` → `volts[i]`. `op.devices` has one entry per
 * position k of `order` (an element index; the table's order): a two-terminal record `{ type: types[type[k]],
 * current, voltage, power }` from the columns, or, where `type[k]` is −1, a record that travels whole in a
 * `point-records` part (a nonlinear device's, a transmission line's).
 */
export interface PointColumns {
  volts: Float64Array;
  order: Int32Array;
  types: string[];
  type: Int8Array;
  current: Float64Array;
  voltage: Float64Array;
  power: Float64Array;
}

/** The key order of a two-terminal record, the only shape the columns hold. */
const COLUMN_KEYS = ['type', 'current', 'voltage', 'power'];

function isColumnRecord(rec: DeviceRecord): boolean {
  const keys = Object.keys(rec);
  return keys.length === COLUMN_KEYS.length && keys.every((k, i) => k === COLUMN_KEYS[i]) && typeof rec.type === 'string';
}

/** Each element's index by name, or undefined when two elements share a name (the table then keeps one record for both). */
export function elementsByName(circuit: Circuit): Map<string, number> | undefined {
  const elementOf = new Map<string, number>();
  circuit.elements.forEach((el, e) => elementOf.set(el.name, e));
  return elementOf.size === circuit.elements.length ? elementOf : undefined;
}

/** Record types whose records have the columns' four keys (a transmission line's has a fifth). */
const COLUMN_TYPES = new Set(['resistor', 'voltage-source', 'current-source', 'inductor', 'capacitor', 'controlled-source']);

/** How many records are expected to travel whole (those of other types): how many parts to plan for them. */
export function wholeRecordCount(circuit: Circuit, v: PointVectors): number {
  let count = 0;
  for (let e = 0; e < circuit.elements.length; e++) {
    const t = v.type(e);
    if (t !== undefined && !COLUMN_TYPES.has(t)) count++;
  }
  return count;
}

/**
 * The columns of a point of `circuit` with the solver's vectors `v` (its element names unique: `elementOf`), and the
 * records that travel whole, by position in the devices table.
 */
export function pointColumns(circuit: Circuit, v: PointVectors, elementOf: ReadonlyMap<string, number>): { columns: PointColumns; whole: [number, DeviceRecord][] } {
  const n = circuit.elements.length;
  const order = new Int32Array(n);
  const type = new Int8Array(n);
  const current = new Float64Array(n);
  const voltage = new Float64Array(n);
  const power = new Float64Array(n);
  const types: string[] = [];
  const whole: [number, DeviceRecord][] = [];
  let k = 0;
  for (const [name, rec] of v.deviceEntries()) {
    const e = elementOf.get(name);
    if (e === undefined || k === n) throw new Error(`The point's device table names ${name}, which is not one of the circuit's elements.`);
    order[k] = e;
    if (isColumnRecord(rec)) {
      const r = rec as { type: string; current: number; voltage: number; power: number };
      let t = types.indexOf(r.type);
      if (t < 0) t = types.push(r.type) - 1;
      type[k] = t;
      current[k] = r.current;
      voltage[k] = r.voltage;
      power[k] = r.power;
    } else {
      type[k] = -1;
      whole.push([k, rec]);
    }
    k++;
  }
  return { columns: { volts: v.volts.slice(), order: order.slice(0, k), types, type: type.slice(0, k), current: current.slice(0, k), voltage: voltage.slice(0, k), power: power.slice(0, k) }, whole };
}

/** Whether `key` is an array index, which an object lists before its other keys, in ascending order. */
function isArrayIndex(key: string): boolean {
  const n = Number(key);
  return n >>> 0 === n && n !== 4294967295 && String(n) === key;
}

/** Keys in the order an object built by inserting them in this order lists them: array indices first, ascending. */
function objectKeyOrder(keys: readonly string[]): string[] {
  const indices = keys.filter(isArrayIndex).sort((a, b) => Number(a) - Number(b));
  if (indices.length === 0) return [...keys];
  return [...indices, ...keys.filter((k) => !isArrayIndex(k))];
}

/**
 * A read-only, prototype-free table whose entries are `keys` (in insertion order, each once) and `valueAt` their
 * values, read when asked for: lookups, `in`, `Object.keys`, spreading and JSON see what a `nameTable` filled in
 * that order shows. Writing to it throws (nothing writes a taken-in point's tables).
 */
function readOnlyTable<T>(keys: readonly string[], position: (key: string) => number | undefined, valueAt: (k: number) => T): Record<string, T> {
  let listed: string[] | undefined;
  const at = (key: string | symbol): number | undefined => (typeof key === 'string' ? position(key) : undefined);
  return new Proxy(Object.create(null) as Record<string, T>, {
    get: (_t, key) => {
      const k = at(key);
      return k === undefined ? undefined : valueAt(k);
    },
    has: (_t, key) => at(key) !== undefined,
    ownKeys: () => (listed ??= objectKeyOrder(keys)),
    getOwnPropertyDescriptor: (_t, key) => {
      const k = at(key);
      return k === undefined ? undefined : { value: valueAt(k), writable: true, enumerable: true, configurable: true };
    },
    set: () => false,
    defineProperty: () => false,
    deleteProperty: () => false,
    setPrototypeOf: () => false,
  });
}

/** The records that travel whole, added as their parts arrive, by position in the devices table. */
const wholeRecords = new WeakMap<OperatingPoint, Map<number, DeviceRecord>>();

/**
 * A key's position through a table another part of the host holds by lower-case name (`byLower`: the name of item i
 * lower-cased → i), checked against the name as written (`nameAt`), then mapped to the table's position (`toPosition`).
 * When two names differ only by case the lower-case table holds one of them: the key's own table is made then.
 */
function exactPositions(count: number, nameAt: (i: number) => string, byLower: () => ReadonlyMap<string, number>, toPosition: (i: number) => number): (key: string) => number | undefined {
  let lower: ReadonlyMap<string, number> | undefined;
  let own: Map<string, number> | undefined;
  return (key) => {
    if (!lower && !own) {
      const table = byLower();
      if (table.size === count) lower = table;
      else own = new Map(Array.from({ length: count }, (_, i) => [nameAt(i), i]));
    }
    const i = lower ? lower.get(key.toLowerCase()) : own!.get(key);
    if (i === undefined || nameAt(i) !== key) return undefined;
    const k = toPosition(i);
    return k < 0 ? undefined : k;
  };
}

/**
 * Gives a taken-in point (of `circuit`, whose elements are all in) its tables read from `columns`. Names are looked up
 * through the element index's tables by lower-case name (`byLowerName`, asked on the first look-up, once the index is
 * complete): two maps of 50,000 names of their own were 3.5 MB of each analysis held, and their filling a step of the
 * take-in.
 */
export function installPointTables(op: OperatingPoint, circuit: Circuit, columns: PointColumns, byLowerName: () => { nodes: ReadonlyMap<string, number>; elements: ReadonlyMap<string, number> }): void {
  const whole = new Map<number, DeviceRecord>();
  wholeRecords.set(op, whole);
  // Made when first read and kept, so a record read twice is the same object, as in a table.
  const made = new Map<number, DeviceRecord>();
  const record = (k: number): DeviceRecord | undefined => {
    const t = columns.type[k]!;
    if (t < 0) return whole.get(k);
    let rec = made.get(k);
    if (!rec) made.set(k, (rec = { type: columns.types[t], current: columns.current[k], voltage: columns.voltage[k], power: columns.power[k] } as DeviceRecord));
    return rec;
  };
  const names = Array.from(columns.order, (e) => circuit.elements[e]!.name);
  // An element's position in the devices table (−1: not in it).
  const positionOf = new Int32Array(circuit.elements.length).fill(-1);
  columns.order.forEach((e, k) => (positionOf[e] = k));
  const nodes = circuit.nodes;
  const elements = circuit.elements;
  op.nodes = readOnlyTable(nodes, exactPositions(nodes.length, (i) => nodes[i]!, () => byLowerName().nodes, (i) => i), (i) => columns.volts[i]!);
  op.devices = readOnlyTable(names, exactPositions(elements.length, (e) => elements[e]!.name, () => byLowerName().elements, (e) => positionOf[e]!), (k) => record(k)!);
}

/** Adds records that travel whole (by position in the devices table) to a point given its tables by `installPointTables`. */
export function addWholeRecords(op: OperatingPoint, items: readonly [number, DeviceRecord][]): void {
  const whole = wholeRecords.get(op);
  if (!whole) throw new Error('Device records arrived before the point they belong to.');
  for (const [k, rec] of items) whole.set(k, rec);
}
