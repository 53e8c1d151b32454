// One solved operating point read by index: the vectors a solve filled, and its records made from them when asked.

import type { Circuit, Element } from '../circuit';
import type { DeviceColumns, DeviceTable } from '../devices/device';
import { nameTable } from '../names';
import type { DeviceOrder, LinearReader } from './mna';
import { entriesOf, type EntryTable, type PointVectors } from './point';
import type { DeviceRecord, OperatingPoint, TwoTerminalRecord } from './types';

/** Largest magnitude written into a record; anything beyond is clamped and reported. */
export const RECORD_LIMIT = 1e300;

/** How a value past ±RECORD_LIMIT is written: `clamp(value, where)` gets the label made only when it clamps. */
export type Clamp = (val: number, where: () => string) => number;

function inRange(val: number): boolean {
  return Math.abs(val) <= RECORD_LIMIT;
}

/** What clamping a point's tables found: each value clamped (`current of R1`), and the elements whose records had one. */
export interface Clamped {
  overflowed: string[];
  elements: Set<number>;
}

/** RECORD_LIMIT held in a typed array, so the clamp's branches all give the compiler a double (see `unbounded` in devices/physics.ts). */
const LIMIT_CELL = Float64Array.of(RECORD_LIMIT);

/** `val` within ±RECORD_LIMIT, NaN as 0, without saying so. */
export function quietClamp(val: number): number {
  return inRange(val) ? val : Number.isNaN(val) ? 0 : val > 0 ? LIMIT_CELL[0] : -LIMIT_CELL[0];
}

/** The record type of a two-terminal element (one read through `readers`, not a device kind's). */
function twoTerminalType(kind: Element['kind']): TwoTerminalRecord['type'] {
  return kind === 'R' ? 'resistor' : kind === 'V' ? 'voltage-source' : kind === 'I' ? 'current-source' : kind === 'L' ? 'inductor' : kind === 'C' ? 'capacitor' : 'controlled-source';
}

/**
 * Per list of a circuit's elements, how many of them `hasUniqueNames` looked at and whether their names were all
 * different. An element keeps its name once listed, and a list only grows (a host taking a result in appends), so the
 * answer holds while the count does. A write of a large result asked twice (the power table and the device table),
 * each time a set of every name: about 50 ms of a 100,000-element run.
 */
const namesChecked = new WeakMap<readonly Element[], { count: number; unique: boolean }>();

/** Whether every element of the circuit has its own name (as the name-keyed tables need), worked out once per list of elements. */
export function hasUniqueNames(circuit: Circuit): boolean {
  const elements = circuit.elements;
  const known = namesChecked.get(elements);
  if (known !== undefined && known.count === elements.length) return known.unique;
  const seen = new Set<string>();
  for (let e = 0; e < elements.length; e++) seen.add(elements[e].name);
  const unique = seen.size === elements.length;
  namesChecked.set(elements, { count: elements.length, unique });
  return unique;
}

/** What a solver keeps for every point it makes: the quantity positions per table and the record types, filled on first ask. */
export interface RecordShapes {
  /** Per table, quantity name -> column (see `quantityPositions` in dc.ts). */
  quantityColumns: readonly Record<string, number>[];
  /** Element index -> the type of its record, null for none (undefined until `typesFilled`). */
  recordTypes: (DeviceRecord['type'] | null | undefined)[];
  /** Per device table, the type of its kind's records, undefined until asked. */
  tableRecordTypes: (DeviceRecord['type'] | undefined)[];
  /** Whether `recordTypes` holds every element's type (filled by the first point the solver makes). */
  typesFilled: boolean;
}

/**
 * The vectors one solve filled: node voltages, two-terminal voltages and currents (reader k at k), and every
 * table's columns. A class, not an object literal: V8 builds a literal's template at its second run and forgets then what
 * type each field holds, which gave up the readers compiled after the nominal solve at the first corner.
 */
export class SolvedValues {
  constructor(
    readonly volts: Float64Array,
    readonly tv: Float64Array,
    readonly ti: Float64Array,
    readonly columns: DeviceColumns[],
  ) {}
}

/**
 * A solved point's `PointVectors`. Its readers are methods of one class, the same functions for every
 * point: closures made per point allocated a dozen functions a solve (sizing makes thousands of small
 * solves), and a reader compiled for one point's closure gave up its code when the next corner's came.
 * It holds what it reads (the circuit, the tables, the vectors), not the solver, so a kept point does
 * not keep the solver's matrix and factors alive.
 */
export class SolvedVectors implements PointVectors {
  readonly volts: Float64Array;
  /** The point these vectors are read through, set once it is made: with a name written twice, its table is what is listed. */
  point: OperatingPoint | undefined;

  constructor(
    private readonly circuit: Circuit,
    private readonly tables: readonly DeviceTable[],
    private readonly deviceOrder: DeviceOrder,
    private readonly readers: readonly LinearReader[],
    /** Circuit element -> where its record comes from: reader k (k ≥ 0), device-order entry d (−2 − d), or none (−1). */
    private readonly slot: Int32Array,
    private readonly shapes: RecordShapes,
    private readonly values: SolvedValues,
    /** Whether a device record is looked over for values past ±RECORD_LIMIT (its columns are not all in range, or are overwritten later). */
    private readonly clampsRecords: boolean,
  ) {
    this.volts = values.volts;
    if (!shapes.typesFilled) this.fillRecordTypes();
  }

  /**
   * Every element's record type into `shapes.recordTypes`, once per solver (a pass over the elements at its first point): `type`
   * is then one read, where the look-up on first ask made it large enough that a measurement, which inlines the readers at
   * several places, ran out of the compiler's inlining budget and called a reader whose every number came back as a heap object.
   */
  private fillRecordTypes(): void {
    const { slot, shapes, tables, deviceOrder, readers, circuit } = this;
    const byTable = shapes.tableRecordTypes;
    for (let t = 0; t < tables.length; t++) {
      if (byTable[t] === undefined && tables[t].instances.count > 0) byTable[t] = tables[t].kind.record(this.values.columns[t], tables[t].instances, 0).type;
    }
    const types = shapes.recordTypes;
    for (let e = 0; e < slot.length; e++) {
      const k = slot[e];
      types[e] = k >= 0 ? twoTerminalType(circuit.elements[readers[k].element].kind) : k === -1 ? null : (byTable[deviceOrder.table[-k - 2]] ?? null);
    }
    shapes.typesFilled = true;
  }

  /** Reader k's record, with `clamp` applied to each number past ±RECORD_LIMIT. */
  twoTerminal(k: number, clamp: Clamp): DeviceRecord {
    const el = this.circuit.elements[this.readers[k].element];
    const type = twoTerminalType(el.kind);
    const voltage = this.values.tv[k];
    const current = this.values.ti[k];
    const power = voltage * current;
    return inRange(current) && inRange(voltage) && inRange(power)
      ? { type, current, voltage, power }
      : {
          type,
          current: clamp(current, () => `current of ${el.name}`),
          voltage: clamp(voltage, () => `voltage of ${el.name}`),
          power: clamp(power, () => `power of ${el.name}`),
        };
  }

  /** Device-order entry d's record, with `clamp` applied to each number past ±RECORD_LIMIT. */
  device(d: number, clamp: Clamp): DeviceRecord {
    const { deviceOrder } = this;
    const t = deviceOrder.table[d];
    const table = this.tables[t];
    const rec = table.kind.record(this.values.columns[t], table.instances, deviceOrder.instance[d]) as unknown as Record<string, unknown>;
    if (!this.clampsRecords) return rec as unknown as DeviceRecord;
    const name = this.circuit.elements[deviceOrder.element[d]].name;
    for (const k in rec) {
      const val = rec[k];
      if (typeof val === 'number' && !inRange(val)) rec[k] = clamp(val, () => `${k} of ${name}`);
    }
    return rec as unknown as DeviceRecord;
  }

  /** Where element e's record comes from (see `slot`), −1 for an index outside the circuit. */
  private slotOf(e: number): number {
    return e >= 0 && e < this.slot.length ? this.slot[e] : -1;
  }

  record(e: number): DeviceRecord | undefined {
    const k = this.slotOf(e);
    return k >= 0 ? this.twoTerminal(k, quietClamp) : k <= -2 ? this.device(-k - 2, quietClamp) : undefined;
  }

  value(e: number, quantity: string): number | undefined {
    const k = this.slotOf(e);
    if (k >= 0) {
      const { tv, ti } = this.values;
      const val = quantity === 'current' ? ti[k] : quantity === 'voltage' ? tv[k] : quantity === 'power' ? tv[k] * ti[k] : undefined;
      return val === undefined ? undefined : quietClamp(val);
    }
    if (k === -1) return undefined;
    const d = -k - 2;
    const t = this.deviceOrder.table[d];
    // An inherited name (`constructor`) reads as a function, not a number.
    const q: unknown = this.shapes.quantityColumns[t][quantity];
    return typeof q === 'number' ? quietClamp(this.values.columns[t].values[q][this.deviceOrder.instance[d]]) : undefined;
  }

  quantity(e: number, q: number): number | undefined {
    const k = this.slotOf(e);
    if (k > -2) return undefined;
    const d = -k - 2;
    const column = this.values.columns[this.deviceOrder.table[d]].values[q];
    return column === undefined ? undefined : quietClamp(column[this.deviceOrder.instance[d]]);
  }

  /** `quantity(e, q)` as a finite number, 0 where it is undefined (NaN clamps to 0, beyond ±RECORD_LIMIT to it). */
  quantityOrZero(e: number, q: number): number {
    const k = this.slotOf(e);
    if (k > -2) return 0;
    const d = -k - 2;
    const column = this.values.columns[this.deviceOrder.table[d]].values[q];
    if (column === undefined) return 0;
    const val = column[this.deviceOrder.instance[d]];
    // The clamp called only past the limit: a measurement inlines this reader at several places, and where the compiler's
    // budget left the clamp's call out, every number read came back from it as a heap object.
    return inRange(val) ? val : quietClamp(val);
  }

  /**
   * The device table of element e's record and its instance there (−1, −1 for an element without a device record): fixed
   * for every point of one solver, so a reader of many points (the corner phase's measurement) resolves them once and then
   * reads `tableColumns` straight.
   */
  deviceTableOf(e: number): number {
    const k = this.slotOf(e);
    return k > -2 ? -1 : this.deviceOrder.table[-k - 2];
  }

  deviceInstanceOf(e: number): number {
    const k = this.slotOf(e);
    return k > -2 ? -1 : this.deviceOrder.instance[-k - 2];
  }

  /** Table t's columns at this point (what `quantity` and `region` read). */
  tableColumns(t: number): DeviceColumns {
    return this.values.columns[t];
  }

  /** Table t's region names, by the codes of its columns' `region`. */
  tableRegions(t: number): readonly string[] {
    return this.tables[t].kind.regions;
  }

  /** The element's record type (filled for every element by the solver's first point: a kind's records all have one type, which one record per table tells). */
  type(e: number): DeviceRecord['type'] | undefined {
    if (!(e >= 0 && e < this.slot.length)) return undefined;
    return this.shapes.recordTypes[e] ?? undefined;
  }

  region(e: number): string | undefined {
    const k = this.slotOf(e);
    if (k > -2) return undefined;
    const d = -k - 2;
    const t = this.deviceOrder.table[d];
    return this.tables[t].kind.regions[this.values.columns[t].region[this.deviceOrder.instance[d]]];
  }

  nodeEntries(): Iterable<[string, number]> {
    return entriesOf(this.nodeTable());
  }

  deviceEntries(): Iterable<[string, DeviceRecord]> {
    return entriesOf(this.deviceTable());
  }

  nodeTable(): EntryTable<number> {
    const { circuit, volts } = this;
    return { count: circuit.nodes.length, name: (i) => circuit.nodes[i], value: (i) => volts[i] };
  }

  /** The two-terminal elements' records, then the devices'. With a name written twice the table keeps the first position and the last record: the point's table is read then. */
  deviceTable(): EntryTable<DeviceRecord> {
    const { circuit, readers, deviceOrder } = this;
    if (!hasUniqueNames(circuit) && this.point) {
      const entries = Object.entries(this.point.devices);
      return { count: entries.length, name: (k) => entries[k][0], value: (k) => entries[k][1] };
    }
    const r = readers.length;
    return {
      count: r + deviceOrder.element.length,
      name: (k) => circuit.elements[k < r ? readers[k].element : deviceOrder.element[k - r]].name,
      value: (k) => (k < r ? this.twoTerminal(k, quietClamp) : this.device(k - r, quietClamp)),
    };
  }

  /** The `nodes` and `devices` tables, each number past ±RECORD_LIMIT clamped, and told to `collected` when given. */
  buildTables(collected?: Clamped): { nodes: Record<string, number>; devices: Record<string, DeviceRecord> } {
    const { circuit, readers, deviceOrder, volts } = this;
    const nodes: Record<string, number> = nameTable();
    circuit.nodes.forEach((name, i) => {
      nodes[name] = volts[i];
    });
    const overflowed = collected?.overflowed ?? [];
    // The label is built only on overflow.
    const clamp: Clamp = (val, where) => {
      if (inRange(val)) return val;
      if (collected) overflowed.push(where());
      return quietClamp(val);
    };
    const devices: Record<string, DeviceRecord> = nameTable();
    for (let k = 0; k < readers.length; k++) {
      const before = overflowed.length;
      devices[circuit.elements[readers[k].element].name] = this.twoTerminal(k, clamp);
      if (overflowed.length > before) collected?.elements.add(readers[k].element);
    }
    for (let d = 0; d < deviceOrder.element.length; d++) {
      const before = overflowed.length;
      devices[circuit.elements[deviceOrder.element[d]].name] = this.device(d, clamp);
      if (overflowed.length > before) collected?.elements.add(deviceOrder.element[d]);
    }
    return { nodes, devices };
  }
}
