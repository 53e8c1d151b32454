// A structure's corner results stored column-wise: one typed array per quantity, one entry per corner (and per output).

import { nameTable } from '../names';
import { registerLazyTable } from '../output-guard';
import type { CornerResult, Structure } from './types';

/**
 * The corner list one analysis solved, shared by every structure of it: labels and conditions,
 * one entry per corner in solve order.
 */
export interface CornerAxis {
  labels: string[];
  supplyScale: Float64Array;
  temperatureC: Float64Array;
  betaScale: Float64Array;
  /** The MOS process corner of each corner ('slow', 'fast'), undefined where the process is typical. */
  process: ('slow' | 'fast' | undefined)[];
  /** 1 where the corner's operating point converged. */
  converged: Uint8Array;
}

/**
 * One structure's results at every corner of an axis. Output o at corner k sits at `o·C + k`
 * (C = number of corners); outputs in the order of `outputs` (the structure's own order).
 * Values of a corner that did not converge are 0.
 */
export interface CornerColumns {
  axis: CornerAxis;
  outputs: string[];
  iref: Float64Array;
  iout: Float64Array;
  headroom: Float64Array;
  /** 1 where the output is out of its active region. */
  outOfRegion: Uint8Array;
  /** Names of the structure's derived voltages; voltage v at corner k sits at `v·C + k`, NaN where it could not be read. */
  voltageNames: string[];
  voltages: Float64Array;
}

/** The circuit-wide corner buffers one corner phase writes, which every structure's `CornerColumnViews` are views of. */
export interface CornerStore {
  /** Structure i at corner k at i·C + k. */
  iref: Float64Array;
  /** Output o (counted over every structure in order) at corner k at o·C + k. */
  iout: Float64Array;
  headroom: Float64Array;
  outOfRegion: Uint8Array;
  /** Voltage v (counted over every structure in order) at corner k at v·C + k. */
  volts: Float64Array;
}

/**
 * One structure's `CornerColumns` as the corner phase makes them: each column a view of the phase's buffers made when
 * it is read, and the outputs' names listed when read, where five views and a list made for every structure were six
 * objects (about 550 bytes) kept for the whole run, 150,000 at 100,000 elements. Its columns are getters of the class:
 * `plainColumns` gives the object a worker sends to another thread (a structured clone copies own data only).
 */
export class CornerColumnViews implements CornerColumns {
  readonly #store: CornerStore;
  /** The structure's position among the phase's structures, its first output's and first voltage's among theirs. */
  readonly #structure: number;
  readonly #output: number;
  readonly #voltage: number;
  readonly #outs: readonly { device: string }[];

  constructor(
    readonly axis: CornerAxis,
    store: CornerStore,
    structure: number,
    output: number,
    outs: readonly { device: string }[],
    voltage: number,
    readonly voltageNames: string[],
  ) {
    this.#store = store;
    this.#structure = structure;
    this.#output = output;
    this.#outs = outs;
    this.#voltage = voltage;
  }

  get outputs(): string[] {
    const out = new Array<string>(this.#outs.length);
    for (let o = 0; o < out.length; o++) out[o] = this.#outs[o].device;
    return out;
  }

  get iref(): Float64Array {
    const C = this.axis.labels.length;
    return this.#store.iref.subarray(this.#structure * C, (this.#structure + 1) * C);
  }

  get iout(): Float64Array {
    return this.#store.iout.subarray(this.#output * this.axis.labels.length, (this.#output + this.#outs.length) * this.axis.labels.length);
  }

  get headroom(): Float64Array {
    return this.#store.headroom.subarray(this.#output * this.axis.labels.length, (this.#output + this.#outs.length) * this.axis.labels.length);
  }

  get outOfRegion(): Uint8Array {
    return this.#store.outOfRegion.subarray(this.#output * this.axis.labels.length, (this.#output + this.#outs.length) * this.axis.labels.length);
  }

  get voltages(): Float64Array {
    const C = this.axis.labels.length;
    return this.#store.volts.subarray(this.#voltage * C, (this.#voltage + this.voltageNames.length) * C);
  }
}

/** `cols` with every column an own data member (views of the same buffers), as a worker sends them to another thread. */
export function plainColumns(cols: CornerColumns): CornerColumns {
  if (!(cols instanceof CornerColumnViews)) return cols;
  return { axis: cols.axis, outputs: cols.outputs, iref: cols.iref, iout: cols.iout, headroom: cols.headroom, outOfRegion: cols.outOfRegion, voltageNames: cols.voltageNames, voltages: cols.voltages };
}

const columnsOf = new WeakMap<Structure, CornerColumns>();

/** The column-wise corner results of a structure, when its corners were solved in this process (or handed over as columns). */
export function cornerColumns(s: Structure): CornerColumns | undefined {
  return columnsOf.get(s);
}

/** Per structure: its corner records, built from its columns at the first read, or the list assigned to it. */
const listOf = new WeakMap<Structure, CornerResult[]>();

/**
 * `Structure.corners` as one accessor for every structure: recognition defines it (`defineCorners`), so it is
 * never a data property made an accessor later, which turned every structure into a slow dictionary of its
 * properties (a few hundred bytes more each, and every read of a structure a look-up), as a getter made per
 * structure would. An enumerable own property, so JSON, spreading and structured cloning copy the records.
 */
const CORNERS: PropertyDescriptor = {
  enumerable: true,
  configurable: true,
  get(this: Structure): CornerResult[] {
    let list = listOf.get(this);
    if (list === undefined) {
      const cols = columnsOf.get(this);
      listOf.set(this, (list = cols ? cornerRecords(cols) : []));
    }
    return list;
  },
  set(this: Structure, value: CornerResult[]): void {
    columnsOf.delete(this);
    listOf.set(this, value);
  },
};
// The records are built from the columns, which are clamped where they are written: the finiteness walk leaves them
// unread while the structure has columns. A list assigned through the setter (the columns dropped) is walked.
registerLazyTable('corners', CORNERS, (s) => columnsOf.has(s as Structure));

/** Defines `s.corners` (no corner yet) as every structure holds it; `s` has no `corners` property yet. */
export function defineCorners(s: Omit<Structure, 'corners'>): void {
  Object.defineProperty(s, 'corners', CORNERS);
}

/**
 * A structure object of its own for an analysis to fill: its fields in their order (but `omit`), nested records shared
 * but for the lists an analysis writes into: the derived voltages copied (the corner phase fills their ranges) and
 * `corners` the accessor with no corner yet. Not a spread, which reads `corners` (building every corner's records) into
 * a data property that `setCornerColumns` later makes an accessor: each copy was then a slow dictionary of its properties,
 * and that redefinition alone about 100 ms of the worker's corner phase per value edit of the 20k array at load 6.
 */
export function copyStructure(s: Structure, omit?: keyof Structure): Structure {
  const copy: Record<string, unknown> = {};
  for (const key of Object.keys(s)) {
    if (key === omit) continue;
    if (key === 'corners') Object.defineProperty(copy, 'corners', CORNERS);
    else if (key === 'voltages' && s.voltages) copy[key] = copyEach(s.voltages);
    else copy[key] = (s as unknown as Record<string, unknown>)[key];
  }
  return copy as unknown as Structure;
}

/** A list of records, each copied (a plain loop: `map` with a spread per item took longer, for every structure of every edit). */
function copyEach<T extends object>(list: readonly T[]): T[] {
  const out = new Array<T>(list.length);
  for (let i = 0; i < list.length; i++) out[i] = { ...list[i]! };
  return out;
}

/**
 * Stores a structure's corner results as columns. `s.corners` then builds the per-corner records
 * from them the first time it is read (hover, a full JSON report), and keeps them; until then no
 * per-corner object exists. The columns are not an enumerable property, so copying the structure
 * (JSON, structured cloning) copies `corners` as plain records. A structure made elsewhere (a copy, one
 * cloned from another thread) gets the accessor here.
 */
export function setCornerColumns(s: Structure, cols: CornerColumns): void {
  columnsOf.set(s, cols);
  listOf.delete(s);
  if (Object.getOwnPropertyDescriptor(s, 'corners')?.get !== CORNERS.get) Object.defineProperty(s, 'corners', CORNERS);
}

/** The per-corner records of a structure's columns, as `Structure.corners` lists them. */
export function cornerRecords(cols: CornerColumns): CornerResult[] {
  // Each column read once (a column of `CornerColumnViews` is a view made at each read).
  const { axis, outputs, iref: irefs, iout: iouts, headroom: headrooms, outOfRegion: outs, voltages: volts } = cols;
  const C = axis.labels.length;
  const out: CornerResult[] = [];
  for (let k = 0; k < C; k++) {
    const iout: Record<string, number> = nameTable();
    const headroom: Record<string, number> = nameTable();
    const outOfRegion: string[] = [];
    outputs.forEach((name, o) => {
      iout[name] = iouts[o * C + k];
      headroom[name] = headrooms[o * C + k];
      if (outs[o * C + k]) outOfRegion.push(name);
    });
    const r: CornerResult = {
      label: axis.labels[k],
      supplyScale: axis.supplyScale[k],
      temperatureC: axis.temperatureC[k],
      betaScale: axis.betaScale[k],
      ...(axis.process[k] ? { process: axis.process[k] } : {}),
      converged: axis.converged[k] === 1,
      iref: irefs[k],
      iout,
      headroom,
      outOfRegion: axis.converged[k] === 1 ? outOfRegion : [],
    };
    if (axis.converged[k] === 1 && cols.voltageNames.length > 0) {
      const voltages: Record<string, number> = nameTable();
      cols.voltageNames.forEach((name, v) => {
        const x = volts[v * C + k];
        if (!Number.isNaN(x)) voltages[name] = x;
      });
      r.voltages = voltages;
    }
    out.push(r);
  }
  return out;
}

/**
 * Per output, the worst corners: lowest and highest current and lowest headroom, with where (converged corners only), as the
 * CLI's JSON writes it (members in its order, the extremes that were found only).
 */
export interface OutputCornerSummary {
  device: string;
  minCurrent?: { value: number; corner: string };
  maxCurrent?: { value: number; corner: string };
  minHeadroom?: { value: number; corner: string };
  /** The corners where the output leaves its active region, by their names. */
  outOfRegionAt: string[];
}

/**
 * The summary of every output of one structure's columns (first corner wins a tie, as the corner checks read them), each
 * corner named by `names` (one per corner of the axis: the CLI's ASCII keys). Made in the shape the JSON writes, so the
 * writer takes it as it is: a summary in another shape, copied into the JSON's with each label looked up, was four
 * objects more per output.
 */
export function summariseOutputs(cols: CornerColumns, names: readonly string[]): OutputCornerSummary[] {
  const { axis } = cols;
  const C = axis.labels.length;
  const { iout, headroom, outOfRegion } = cols;
  return cols.outputs.map((device, o) => {
    const outOfRegionAt: string[] = [];
    // Where each extreme is (the first corner that reaches it), as positions in the columns; its record is made once, at the end.
    let minCurrent = -1;
    let maxCurrent = -1;
    let minHeadroom = -1;
    for (let k = o * C; k < (o + 1) * C; k++) {
      if (axis.converged[k - o * C] !== 1) continue;
      if (minCurrent < 0 || iout[k] < iout[minCurrent]) minCurrent = k;
      if (maxCurrent < 0 || iout[k] > iout[maxCurrent]) maxCurrent = k;
      if (minHeadroom < 0 || headroom[k] < headroom[minHeadroom]) minHeadroom = k;
      if (outOfRegion[k]) outOfRegionAt.push(names[k - o * C]);
    }
    const s: Omit<OutputCornerSummary, 'outOfRegionAt'> & { outOfRegionAt?: string[] } = { device };
    if (minCurrent >= 0) s.minCurrent = { value: iout[minCurrent], corner: names[minCurrent - o * C] };
    if (maxCurrent >= 0) s.maxCurrent = { value: iout[maxCurrent], corner: names[maxCurrent - o * C] };
    if (minHeadroom >= 0) s.minHeadroom = { value: headroom[minHeadroom], corner: names[minHeadroom - o * C] };
    s.outOfRegionAt = outOfRegionAt;
    return s as OutputCornerSummary;
  });
}
