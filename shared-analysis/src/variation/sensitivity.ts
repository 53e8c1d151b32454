// Adjoint sensitivities of output currents and voltages to every resistor, source, the temperature and each device's own model parameters, from the factored Jacobian of a converged solution (docs/VARIATION.md).

import { float64Column, int32Column, uint8Column } from '../columns';
import type { Element } from '../circuit';
import { MODEL_DEFAULTS } from '../devices/parameters';
import type { DeviceConditions, DeviceKind, DeviceSensitivity, DeviceTable, LoadTally } from '../devices/device';
import { SolveConditions, TEMPERATURE_PARAMETER, allocateSensitivity } from '../devices/device';
import { thermalVoltage } from '../devices/physics';
import type { Linearisation } from '../solve/dc';
import type { SparseEntries } from '../solve/linear';
import { NODE_UNKNOWN } from '../solve/mna';

/**
 * A quantity the outputs may depend on. Derivatives are per unit of the parameter as the
 * netlist writes it: per ohm, per volt or ampere of a source's DC value, per kelvin, per unit
 * of a device's own model parameter (that device alone, as a mismatch draw changes it).
 */
export type VariedParameter =
  | { kind: 'resistance'; element: number }
  | { kind: 'source'; element: number }
  | { kind: 'temperature' }
  | { kind: 'model'; element: number; param: string };

/** One term of an output: a node voltage, a two-terminal element's current (the record's direction) or the current into a device's netlist terminal. */
export type OutputTerm =
  | { kind: 'node'; node: number; weight: number }
  | { kind: 'element'; element: number; weight: number }
  | { kind: 'terminal'; element: number; terminal: number; weight: number };

/** An output: the weighted sum of its terms, or its magnitude (the structures report currents as magnitudes). */
export interface OutputFunctional {
  terms: OutputTerm[];
  magnitude: boolean;
}

export interface SensitivityResult {
  /** Each output's value at the solution. */
  value: Float64Array;
  /**
   * The non-zero derivatives, output by output (compressed rows): output o depends on parameters
   * `index[rowStart[o] … rowStart[o + 1] − 1]` (ascending) with d(output)/d(parameter) in `derivative`
   * at the same places; every other derivative is exactly zero.
   */
  rowStart: Int32Array;
  index: Int32Array;
  derivative: Float64Array;
  /** Transposed solves done (one per output). */
  adjointSolves: number;
  /** Device instances whose partial derivatives were computed (every instance of a table a parameter or output needs, or those in scope). */
  devicesDerived: number;
}

/** d(output o)/d(parameter j) from a result (0 where the output does not depend on it). */
export function derivativeOf(r: SensitivityResult, o: number, j: number): number {
  let lo = r.rowStart[o];
  let hi = r.rowStart[o + 1] - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (r.index[mid] === j) return r.derivative[mid];
    if (r.index[mid] < j) lo = mid + 1;
    else hi = mid - 1;
  }
  return 0;
}

/** Voltage step of the device-level central differences, volts (docs/VARIATION.md: truncation ≈ (h/VT)²/6 ≈ 3e-10). */
const VOLTAGE_STEP = 1e-6;
/** Temperature step of the device-level central differences, kelvin. */
const TEMPERATURE_STEP = 0.01;
/** Relative step for a model parameter, of its value or of its default, whichever is larger. */
const PARAMETER_STEP = 1e-6;
/** Absolute step for a parameter whose value and default are both zero or too small for a relative step (VTO = 0 or 1e-320). */
const ABSOLUTE_PARAMETER_STEP = 1e-7;
/** The smallest positive normal double: below it a product loses its precision and soon underflows to 0. */
const SMALLEST_NORMAL = 2.2250738585072014e-308;

/** A model parameter's value as the device uses it (the card's, else the default). */
export function modelValue(el: Element, param: string): number {
  if (!('model' in el)) return 0;
  const given = el.model.params[param];
  if (given !== undefined && Number.isFinite(given)) return given;
  const kind = el.model.kind === 'r' ? 'd' : el.model.kind;
  return MODEL_DEFAULTS[kind][param] ?? 0;
}

/**
 * The central-difference step of a model parameter. A relative step alone fails for a subnormal
 * value: VTO = 1e-320 times 10⁻⁶ underflows to 0, both copies are the nominal device, and the
 * difference quotient 0/0 made every σ of the circuit NaN. The step is therefore relative to the
 * larger of the value and the model's default, and absolute when that is still not a normal number.
 */
export function parameterStep(el: Element, param: string): number {
  const kind = 'model' in el ? (el.model.kind === 'r' ? 'd' : el.model.kind) : undefined;
  const usual = kind ? Math.abs(MODEL_DEFAULTS[kind][param] ?? 0) : 0;
  const h = Math.max(Math.abs(modelValue(el, param)), usual) * PARAMETER_STEP;
  return h >= SMALLEST_NORMAL && Number.isFinite(h) ? h : ABSOLUTE_PARAMETER_STEP;
}

/** One device copy evaluated in a batch: the instance (maybe with changed parameters) and the solution it sees (maybe with one unknown moved). */
interface Variant {
  element: Element;
  /** Global MNA unknown of each terminal (−1: ground). */
  globals: ArrayLike<number>;
  /** Moves global unknown `shift` by `delta` in this copy's view of the solution (−1: none). */
  shift: number;
  delta: number;
}

/**
 * Copies of devices of one kind, each on its own local slots, in one table: a single load or
 * evaluate computes every copy (so the cost of a sensitivity run is a few passes over the
 * devices, not one table per device and perturbation).
 */
class Batch {
  readonly table: DeviceTable;
  readonly x: Float64Array;
  private readonly T: number;
  private readonly values: Float64Array;
  private readonly rhs: Float64Array;
  private readonly tally: LoadTally = { limited: false, nonFinite: [] };

  constructor(
    readonly kind: DeviceKind,
    readonly variants: Variant[],
    solution: Float64Array,
    conditions: DeviceConditions,
  ) {
    const T = (this.T = kind.terminalCount);
    const V = variants.length;
    const terminals = int32Column(V * T);
    const positions = int32Column(V * T * T);
    this.x = float64Column(V * T);
    variants.forEach((v, i) => {
      for (let t = 0; t < T; t++) {
        const g = v.globals[t];
        terminals[i * T + t] = g < 0 ? -1 : i * T + t;
        this.x[i * T + t] = g < 0 ? 0 : solution[g] + (g === v.shift ? v.delta : 0);
      }
      for (let r = 0; r < T; r++) for (let c = 0; c < T; c++) positions[i * T * T + r * T + c] = v.globals[r] < 0 || v.globals[c] < 0 ? -1 : i * T * T + r * T + c;
    });
    this.table = kind.createTable({ count: V, elements: variants.map((v) => v.element), elementIndex: int32Column(V), terminals, positions }, []);
    this.table.prepare(conditions);
    this.table.resetState(this.x);
    this.values = float64Column(V * T * T);
    this.rhs = float64Column(V * T);
  }

  /** The currents each copy draws at each of its terminals (its part of the KCL rows), at the copies' solutions. */
  residuals(): Float64Array {
    const { T, values, rhs, x } = this;
    values.fill(0);
    rhs.fill(0);
    this.tally.limited = false;
    this.tally.nonFinite.length = 0;
    this.table.resetState(x);
    this.table.load(x, values, rhs, false, this.tally);
    const out = float64Column(rhs.length);
    const V = this.variants.length;
    for (let i = 0; i < V; i++) {
      for (let r = 0; r < T; r++) {
        let s = -rhs[i * T + r];
        for (let c = 0; c < T; c++) s += values[i * T * T + r * T + c] * x[i * T + c];
        out[i * T + r] = s;
      }
    }
    return out;
  }

  /** Current into each of the netlist terminals `terminals` of every copy, from one evaluation. */
  currents(terminals: Iterable<number>): Map<number, Float64Array> {
    const cols = this.table.evaluate(this.x);
    const out = new Map<number, Float64Array>();
    for (const t of terminals) {
      const col = float64Column(this.variants.length);
      for (let i = 0; i < col.length; i++) col[i] = this.kind.terminalCurrent(cols, i, t);
      out.set(t, col);
    }
    return out;
  }
}

/**
 * The device derivatives of one table: from its kind's closed forms (`DeviceTable.sensitivity`)
 * or, for a kind without them, from central differences of batched copies; `names` lists the
 * parameters in the order of the result's columns.
 */
interface TableDerivatives {
  T: number;
  N: number;
  names: string[];
  result: DeviceSensitivity;
  /** The terminals of the table the result was computed on (`instances.terminals`: the layout's, or a table of the instances in scope). */
  terminals: Int32Array;
  /** Per instance of the layout's table, its row in the result (−1: out of scope); undefined when the rows are the layout's. */
  rowOf: Int32Array | undefined;
}

/** Instance i's row in a table's derivatives (−1: not computed). */
function rowIn(td: TableDerivatives, i: number): number {
  return td.rowOf === undefined ? i : td.rowOf[i];
}

/**
 * d(output)/d(parameter) for every output and parameter at the linearised solution: one
 * transposed solve per output (Jᵀ·λ = ∂g/∂x, sparse, so an output costs what its part of the
 * circuit costs), then dy/dp = ∂g/∂p − λ·∂F/∂p over the sparse columns ∂F/∂p
 * (docs/VARIATION.md). Device equations enter through each kind's exact partial derivatives
 * (`DeviceTable.sensitivity`), one pass over each table; a kind without them is differenced
 * numerically in batches of copies.
 */
export function sensitivities(lin: Linearisation, outputs: readonly OutputFunctional[], params: readonly VariedParameter[], scope?: Uint8Array): SensitivityResult {
  // Each stage is a function of its own with one loop: run once on a large circuit, a function with
  // several long loops is compiled again for each loop it enters, and the code after a loop is then
  // met without type feedback (measured: most of a cold spread analysis was compiling).
  const maps = elementMapsOf(lin, params);
  return (scope && derivativesWithin(lin, maps, outputs, params, scope)) || derivativesWithin(lin, maps, outputs, params, undefined)!;
}

/**
 * The derivatives with the device derivatives and the columns ∂F/∂p made only for the elements of `scope` (1 per
 * element; all of them without it). An output's adjoint λ is exact when every row it reaches is one whose every stamp
 * comes from an element in scope (`coveredRows`): −λ·∂F/∂p then sums the same terms as over the whole circuit.
 * Undefined when an output's λ reaches another row, as it does when the output reads a device out of scope (the caller
 * derives over the whole circuit): a scope that misses part of an output's reach costs that, never a wrong figure.
 */
function derivativesWithin(lin: Linearisation, maps: ElementMaps, outputs: readonly OutputFunctional[], params: readonly VariedParameter[], scope: Uint8Array | undefined): SensitivityResult | undefined {
  const derivatives = deviceDerivatives(lin, maps, outputs, params, scope);
  const columns = rowMajor(parameterColumns(lin, maps, derivatives, params, scope), lin.layout.size);
  const rows = new DerivativeRows(params.length, outputs.length);
  const value = float64Column(outputs.length);
  const covered = scope ? coveredRows(lin, scope) : undefined;
  if (!adjointRows(lin, maps, derivatives, columns, outputs, params, rows, value, covered)) return undefined;
  return { value, rowStart: rows.start, index: rows.index.subarray(0, rows.length), derivative: rows.value.subarray(0, rows.length), adjointSolves: outputs.length, devicesDerived: derivedInstances(derivatives) };
}

/** Per unknown, 1 when every element that stamps into its row is in `scope`: its terminals' KCL rows and the unknowns it owns (internal nodes, branch currents). */
function coveredRows(lin: Linearisation, scope: Uint8Array): Uint8Array {
  const { size, unknownKind, unknownOwner } = lin.layout;
  const covered = uint8Column(size).fill(1);
  const { start, row } = elementRows(lin.layout);
  for (let e = 0; e < scope.length; e++) if (!scope[e]) for (let q = start[e]; q < start[e + 1]; q++) covered[row[q]] = 0;
  for (let u = 0; u < size; u++) if (unknownKind[u] !== NODE_UNKNOWN && !scope[unknownOwner[u]]) covered[u] = 0;
  return covered;
}

/** Each element's KCL rows (its terminals' node unknowns, ground left out): element e's are `row[start[e] … start[e + 1] − 1]`. */
interface ElementRows {
  start: Int32Array;
  row: Int32Array;
}

/** Element rows by layout: made once per layout (a value edit keeps the layout, its elements and their nodes), read at every edit. */
const elementRowsOf = new WeakMap<Linearisation['layout'], ElementRows>();

function elementRows(layout: Linearisation['layout']): ElementRows {
  let rows = elementRowsOf.get(layout);
  if (rows) return rows;
  const elements = layout.circuit.elements;
  const size = layout.size;
  const start = int32Column(elements.length + 1);
  for (let e = 0; e < elements.length; e++) start[e + 1] = start[e] + elements[e].nodes.length;
  const row = int32Column(start[elements.length]);
  let count = 0;
  for (let e = 0; e < elements.length; e++) {
    for (const node of elements[e].nodes) if (node > 0 && node <= size) row[count++] = node - 1;
    start[e + 1] = count;
  }
  rows = { start, row: row.subarray(0, count) };
  elementRowsOf.set(layout, rows);
  return rows;
}

/** Device instances whose derivatives were computed. */
function derivedInstances(derivatives: readonly (TableDerivatives | undefined)[]): number {
  let count = 0;
  for (const td of derivatives) if (td) count += td.result.current.length / td.N;
  return count;
}

/** Parameter kinds as codes, so the loops over every parameter read a typed array instead of objects of several shapes. */
const TEMPERATURE = 0;
const RESISTANCE = 1;
const SOURCE = 2;
const MODEL = 3;

/** Where each element sits in the layout, and the parameters of each element. */
interface ElementMaps {
  /** Per element: its device table and instance (−1: not a device). */
  tableOf: Int32Array;
  instanceOf: Int32Array;
  /** Per element: its reader in the layout and its source hook (−1: none). */
  readerOf: Int32Array;
  sourceOf: Int32Array;
  /** Per parameter: its kind code and element (−1: the temperature). */
  kind: Uint8Array;
  element: Int32Array;
  /** The temperature's parameter index (−1: not asked for). */
  temperatureParam: number;
  /** The parameters of element e: `elementParams[elementParamStart[e] … elementParamStart[e + 1] − 1]`. */
  elementParamStart: Int32Array;
  elementParams: Int32Array;
  /**
   * The parameters of each kind, in parameter order. The loops over one kind's parameters walk these: a loop over every
   * parameter that skipped the others was compiled by V8 while it skipped (the list holds one kind after another), and
   * given up at its first parameter of the kind.
   */
  resistanceParams: Int32Array;
  sourceParams: Int32Array;
  modelParams: Int32Array;
}

/**
 * The element maps of a layout and a parameter list, made once per pair: after a value edit the spread analysis follows
 * the last one's parameter list (the same list) on the same layout, whose elements, readers and sources it keeps.
 */
const mapsOf = new WeakMap<Linearisation['layout'], WeakMap<readonly VariedParameter[], ElementMaps>>();

function elementMapsOf(lin: Linearisation, params: readonly VariedParameter[]): ElementMaps {
  let byParams = mapsOf.get(lin.layout);
  if (!byParams) mapsOf.set(lin.layout, (byParams = new WeakMap()));
  let maps = byParams.get(params);
  if (!maps) byParams.set(params, (maps = elementMaps(lin, params)));
  return maps;
}

function elementMaps(lin: Linearisation, params: readonly VariedParameter[]): ElementMaps {
  const layout = lin.layout;
  const count = layout.circuit.elements.length;
  const order = layout.deviceOrder;
  const tableOf = int32Column(count).fill(-1);
  const instanceOf = int32Column(count);
  for (let d = 0; d < order.element.length; d++) {
    tableOf[order.element[d]] = order.table[d];
    instanceOf[order.element[d]] = order.instance[d];
  }
  const readerOf = int32Column(count).fill(-1);
  layout.readers.forEach((r, k) => (readerOf[r.element] = k));
  const sourceOf = int32Column(count).fill(-1);
  layout.sources.forEach((s, k) => (sourceOf[s.element] = k));
  const kind = uint8Column(params.length);
  const element = int32Column(params.length);
  const temperatureParam = parameterKinds(params, kind, element);
  const elementParamStart = int32Column(count + 1);
  const elementParams = parametersByElement(kind, element, elementParamStart);
  const resistanceParams = parametersOfKind(kind, RESISTANCE);
  const sourceParams = parametersOfKind(kind, SOURCE);
  const modelParams = parametersOfKind(kind, MODEL);
  return { tableOf, instanceOf, readerOf, sourceOf, kind, element, temperatureParam, elementParamStart, elementParams, resistanceParams, sourceParams, modelParams };
}

/** The indices of the parameters of kind `code`, ascending. */
function parametersOfKind(kind: Uint8Array, code: number): Int32Array {
  const list = int32Column(countOfKind(kind, code));
  for (let j = 0, k = 0; j < kind.length; j++) if (kind[j] === code) list[k++] = j;
  return list;
}

/** The number of parameters of kind `code` (a loop of its own, so that no code follows it to be given up). */
function countOfKind(kind: Uint8Array, code: number): number {
  let count = 0;
  for (let j = 0; j < kind.length; j++) if (kind[j] === code) count++;
  return count;
}

/** Fills each parameter's kind code and element; returns the temperature's index (−1: none). */
function parameterKinds(params: readonly VariedParameter[], kind: Uint8Array, element: Int32Array): number {
  let temperature = -1;
  for (let j = 0; j < params.length; j++) {
    const p = params[j];
    if (p.kind === 'temperature') {
      kind[j] = TEMPERATURE;
      element[j] = -1;
      if (temperature < 0) temperature = j;
    } else {
      kind[j] = p.kind === 'resistance' ? RESISTANCE : p.kind === 'source' ? SOURCE : MODEL;
      element[j] = p.element;
    }
  }
  return temperature;
}

/** The parameters of each element in compressed rows (`start` filled, the list returned), parameter order kept. */
function parametersByElement(kind: Uint8Array, element: Int32Array, start: Int32Array): Int32Array {
  const count = start.length - 1;
  for (let j = 0; j < kind.length; j++) if (kind[j] !== TEMPERATURE) start[element[j] + 1]++;
  for (let e = 0; e < count; e++) start[e + 1] += start[e];
  const list = int32Column(start[count]);
  const fill = start.slice(0, count);
  for (let j = 0; j < kind.length; j++) if (kind[j] !== TEMPERATURE) list[fill[element[j]]++] = j;
  return list;
}

/** The device derivatives of every table an output or a parameter needs (the temperature, its instances' model parameters, a read terminal current), for its instances in `scope` (all without it). */
function deviceDerivatives(lin: Linearisation, maps: ElementMaps, outputs: readonly OutputFunctional[], params: readonly VariedParameter[], scope: Uint8Array | undefined): (TableDerivatives | undefined)[] {
  const tables = lin.layout.tables;
  const namesOf: Set<string>[] = tables.map(() => new Set<string>());
  if (maps.temperatureParam >= 0) for (const set of namesOf) set.add(TEMPERATURE_PARAMETER);
  const { kind, element, tableOf } = maps;
  for (let j = 0; j < kind.length; j++) if (kind[j] === MODEL && tableOf[element[j]] >= 0 && (!scope || scope[element[j]])) namesOf[tableOf[element[j]]].add((params[j] as { param: string }).param);
  // Tables an output reads a terminal current of need their current rows even without parameters.
  const readsTable = uint8Column(tables.length);
  for (let o = 0; o < outputs.length; o++) markReadTables(outputs[o].terms, tableOf, readsTable);
  return tables.map((layoutTable, k) => {
    const names = [...namesOf[k]];
    if (names.length === 0 && !readsTable[k]) return undefined;
    const rowOf = scope ? rowsInScope(layoutTable, scope) : undefined;
    const table = rowOf ? tableOfRows(layoutTable, rowOf, lin.conditions) : layoutTable;
    if (table.instances.count === 0) return undefined;
    const result = table.sensitivity?.(lin.x, lin.conditions, names) ?? numericalSensitivity(table, lin.x, lin.conditions, names);
    return { T: table.kind.terminalCount, N: table.kind.nodeCount, names, result, terminals: table.instances.terminals, rowOf };
  });
}

/**
 * Marks the tables whose terminal currents `terms` read. Indexed loops here and over every output's terms: a for-of
 * step makes an iterator result object until its function is optimised, about 100,000 of them in one cold analysis.
 */
function markReadTables(terms: readonly OutputTerm[], tableOf: Int32Array, readsTable: Uint8Array): void {
  for (let k = 0; k < terms.length; k++) {
    const term = terms[k];
    if (term.kind === 'terminal' && tableOf[term.element] >= 0) readsTable[tableOf[term.element]] = 1;
  }
}

/** Per instance of `table`, its row among the instances whose element is in `scope` (−1: out of scope); undefined when all are. */
function rowsInScope(table: DeviceTable, scope: Uint8Array): Int32Array | undefined {
  const elementIndex = table.instances.elementIndex;
  const rowOf = int32Column(elementIndex.length);
  let count = 0;
  for (let i = 0; i < elementIndex.length; i++) rowOf[i] = scope[elementIndex[i]] ? count++ : -1;
  return count === elementIndex.length ? undefined : rowOf;
}

/**
 * A table of the instances of `table` that `rowOf` keeps, in its rows, on the same terminals and matrix slots, prepared
 * for `conditions`: its derivatives are those instances' rows of the whole table's (each instance is computed alone
 * from its own parameters and terminal voltages).
 */
function tableOfRows(table: DeviceTable, rowOf: Int32Array, conditions: DeviceConditions): DeviceTable {
  const inst = table.instances;
  const T = table.kind.terminalCount;
  let count = 0;
  for (let i = 0; i < rowOf.length; i++) if (rowOf[i] >= 0) count++;
  const elements: Element[] = new Array(count);
  const elementIndex = int32Column(count);
  const terminals = int32Column(count * T);
  const positions = int32Column(count * T * T);
  for (let i = 0; i < rowOf.length; i++) {
    const r = rowOf[i];
    if (r < 0) continue;
    elements[r] = inst.elements[i];
    elementIndex[r] = inst.elementIndex[i];
    terminals.set(inst.terminals.subarray(i * T, i * T + T), r * T);
    positions.set(inst.positions.subarray(i * T * T, (i + 1) * T * T), r * T * T);
  }
  const sub = table.kind.createTable({ count, elements, elementIndex, terminals, positions }, []);
  sub.prepare(conditions);
  return sub;
}

/** The value at unknown u of the solution (0 at ground). */
function voltageAt(x: Float64Array, u: number): number {
  return u >= 0 ? x[u] : 0;
}

/** Adds (row u, parameter j, value) to the columns ∂F/∂p, unless it is ground, zero or not finite. */
function put(cols: Triples, j: number, u: number, val: number): void {
  if (u < 0 || val === 0 || !Number.isFinite(val)) return;
  cols.push(u, j, val);
}

/** The columns ∂F/∂p of every parameter, as (row, parameter, value) triples. */
function parameterColumns(lin: Linearisation, maps: ElementMaps, derivatives: readonly (TableDerivatives | undefined)[], params: readonly VariedParameter[], scope: Uint8Array | undefined): Triples {
  const cols = new Triples();
  if (maps.temperatureParam >= 0) deviceTemperatureColumns(maps.temperatureParam, derivatives, cols);
  elementColumns(lin, maps, derivatives, params, scope, cols);
  if (maps.temperatureParam >= 0) resistorTemperatureColumns(lin, maps.temperatureParam, scope, cols);
  return cols;
}

/** Temperature: every derived device instance's residual rows. */
function deviceTemperatureColumns(temperatureParam: number, derivatives: readonly (TableDerivatives | undefined)[], cols: Triples): void {
  derivatives.forEach((td) => {
    if (!td) return;
    const col = td.result.residualByParam[td.names.indexOf(TEMPERATURE_PARAMETER)];
    const terminals = td.terminals;
    for (let q = 0; q < col.length; q++) if (col[q] !== 0) put(cols, temperatureParam, terminals[q], col[q]);
  });
}

/**
 * Each resistor's, source's and device parameter's own rows (of the elements in `scope`, all without it), one loop per
 * kind: one loop over every parameter was compiled by V8 while it ran (on stack replacement) having met only the first
 * kind's branch, and given up and compiled again at each other kind (3 compilations at 20k elements). The triples of a
 * row now come kind by kind rather than in parameter order; a parameter's own triples keep their order, and each
 * parameter's derivative is summed apart from the others' (`DerivativeRows`), so no number changes.
 */
function elementColumns(lin: Linearisation, maps: ElementMaps, derivatives: readonly (TableDerivatives | undefined)[], params: readonly VariedParameter[], scope: Uint8Array | undefined, cols: Triples): void {
  resistanceColumns(lin, maps, scope, cols);
  sourceColumns(lin, maps, scope, cols);
  modelColumns(maps, derivatives, params, scope, cols);
}

/** Each resistance parameter's two KCL rows. */
function resistanceColumns(lin: Linearisation, maps: ElementMaps, scope: Uint8Array | undefined, cols: Triples): void {
  const { resistanceParams, element } = maps;
  const els = lin.layout.circuit.elements;
  const x = lin.x;
  for (let k = 0; k < resistanceParams.length; k++) {
    const j = resistanceParams[k];
    const e = element[j];
    if (scope && !scope[e]) continue;
    const g = lin.conductanceOf(e);
    const el = els[e];
    if (g !== undefined && g !== 0 && el.kind === 'R' && el.resistance > 0) {
      const a = el.nodes[0] - 1;
      const b = el.nodes[1] - 1;
      // F_a gains g·(Va − Vb); g = 1/(R·f) (f: the temperature coefficients' factor), so dg/dR = −g/R.
      const d = (-g / el.resistance) * (voltageAt(x, a) - voltageAt(x, b));
      put(cols, j, a, d);
      put(cols, j, b, -d);
    }
  }
}

/** Each source value's rows. */
function sourceColumns(lin: Linearisation, maps: ElementMaps, scope: Uint8Array | undefined, cols: Triples): void {
  const { sourceParams, element, sourceOf } = maps;
  for (let q = 0; q < sourceParams.length; q++) {
    const j = sourceParams[q];
    const e = element[j];
    if (scope && !scope[e]) continue;
    const k = sourceOf[e];
    if (k < 0) continue;
    const hook = lin.layout.sources[k];
    if (hook.kind === 'V') put(cols, j, hook.rows[0], -1);
    else {
      put(cols, j, hook.rows[0], 1);
      put(cols, j, hook.rows[1], -1);
    }
  }
}

/** Each device model parameter's rows: its instance's column of residual derivatives. */
function modelColumns(maps: ElementMaps, derivatives: readonly (TableDerivatives | undefined)[], params: readonly VariedParameter[], scope: Uint8Array | undefined, cols: Triples): void {
  const { modelParams, element, tableOf, instanceOf } = maps;
  for (let k = 0; k < modelParams.length; k++) {
    const j = modelParams[k];
    const e = element[j];
    if (scope && !scope[e]) continue;
    const t = tableOf[e];
    const td = t >= 0 ? derivatives[t] : undefined;
    if (!td) continue;
    const row = rowIn(td, instanceOf[e]);
    if (row < 0) continue;
    const col = td.result.residualByParam[td.names.indexOf((params[j] as { param: string }).param)];
    const first = row * td.T;
    for (let r = first; r < first + td.T; r++) put(cols, j, td.terminals[r], col[r]);
  }
}

/** Resistors with temperature coefficients (in `scope`, all without it): dg/dT = g·(d ln g/dT) on their KCL rows. */
function resistorTemperatureColumns(lin: Linearisation, temperatureParam: number, scope: Uint8Array | undefined, cols: Triples): void {
  const els = lin.layout.circuit.elements;
  const readers = lin.layout.readers;
  for (let k = 0; k < readers.length; k++) {
    const r = readers[k];
    if (r.kind !== 'conductance' || (scope && !scope[r.element])) continue;
    const el = els[r.element];
    // The slope is zero without a coefficient (`conductanceSlopeOf` says so too, after its look-ups).
    if (el.kind !== 'R' || !(el.tc1 || el.tc2)) continue;
    const slope = lin.conductanceSlopeOf(r.element);
    if (slope === 0) continue;
    const d = (lin.conductanceOf(r.element) ?? r.g) * slope * (voltageAt(lin.x, r.a) - voltageAt(lin.x, r.b));
    put(cols, temperatureParam, r.a, d);
    put(cols, temperatureParam, r.b, -d);
  }
}

/** The columns ∂F/∂p by row: row u's parameters `param[start[u] … start[u + 1] − 1]`, with their values. */
interface ColumnsByRow {
  start: Int32Array;
  param: Int32Array;
  value: Float64Array;
}

function rowMajor(cols: Triples, n: number): ColumnsByRow {
  const start = int32Column(n + 1);
  const count = cols.length;
  countRows(cols, start);
  for (let u = 0; u < n; u++) start[u + 1] += start[u];
  const param = int32Column(count);
  const value = float64Column(count);
  const fill = start.slice(0, n);
  for (let c = 0; c < cols.rows.length; c++) {
    const row = cols.rows[c];
    const colParam = cols.params[c];
    const colValue = cols.values[c];
    const size = cols.used(c);
    for (let q = 0; q < size; q++) {
      const at = fill[row[q]]++;
      param[at] = colParam[q];
      value[at] = colValue[q];
    }
  }
  return { start, param, value };
}

/** Entries per row into `start[u + 1]`. */
function countRows(cols: Triples, start: Int32Array): void {
  for (let c = 0; c < cols.rows.length; c++) {
    const row = cols.rows[c];
    const size = cols.used(c);
    for (let q = 0; q < size; q++) start[row[q] + 1]++;
  }
}

/**
 * ∂g/∂x of one output: dense, with the list of its non-zero unknowns (reused from output to output). The lists keep
 * their room from output to output: emptied by `length = 0`, V8 gave each a new backing store at its next push (two
 * per output, 50,000 outputs at 100k); here `clear` only resets the count and `close` sets the lengths to it.
 */
class OutputGradient {
  readonly dense: Float64Array;
  private readonly mark: Uint8Array;
  readonly index: number[] = [];
  readonly value: number[] = [];
  private count = 0;

  constructor(n: number) {
    this.dense = float64Column(n);
    this.mark = uint8Column(n);
  }

  add(u: number, val: number): void {
    if (u < 0) return;
    if (!this.mark[u]) {
      this.mark[u] = 1;
      if (this.count < this.index.length) this.index[this.count] = u;
      else this.index.push(u);
      this.count++;
    }
    this.dense[u] += val;
  }

  /** Moves the dense entries into `value` (aligned with `index`, both of the output's length) and clears them. */
  close(): void {
    const { index, value, dense, mark, count } = this;
    if (index.length > count) index.length = count;
    for (let k = 0; k < count; k++) {
      const u = index[k];
      if (k < value.length) value[k] = dense[u];
      else value.push(dense[u]);
      dense[u] = 0;
      mark[u] = 0;
    }
    if (value.length > count) value.length = count;
  }

  clear(): void {
    this.count = 0;
  }
}

/**
 * One sparse transposed solve per output: its row of derivatives into `rows`, its value into `value`. With `covered`
 * (derivatives made for a scope), false as soon as an output's λ reaches a row that is not covered.
 */
function adjointRows(
  lin: Linearisation,
  maps: ElementMaps,
  derivatives: readonly (TableDerivatives | undefined)[],
  columns: ColumnsByRow,
  outputs: readonly OutputFunctional[],
  params: readonly VariedParameter[],
  rows: DerivativeRows,
  value: Float64Array,
  covered: Uint8Array | undefined,
): boolean {
  const temperatureColumn: (Float64Array | undefined)[] = derivatives.map((td) => (td && maps.temperatureParam >= 0 ? td.result.currentByParam[td.names.indexOf(TEMPERATURE_PARAMETER)] : undefined));
  const currentColumn = currentColumns(maps, derivatives, params);
  const terms = new OutputTerms(lin, maps, derivatives, temperatureColumn, currentColumn, rows);
  const lambda: SparseEntries = { index: [], value: [], count: 0 };
  for (let o = 0; o < outputs.length; o++) {
    const out = outputs[o];
    const y = terms.read(out);
    const sign = out.magnitude && y < 0 ? -1 : 1;
    const c = terms.gradient;
    c.close();
    lin.solveTransposedSparse(c.index, c.value, lambda);
    if (covered && !within(lambda, covered)) return false;
    addAdjointTerms(lambda, columns, rows);
    rows.close(sign);
    value[o] = sign * y;
  }
  return true;
}

/**
 * Per parameter j of a device: its column of ∂(netlist terminal current)/∂p in its table's result. A function of its
 * own: as a loop inside `adjointRows` it was compiled by V8 while it ran (on stack replacement) before the code after
 * it had run, and that code was given up at its first statement (`adjointRows` compiled 3 times at 20k elements).
 */
function currentColumns(maps: ElementMaps, derivatives: readonly (TableDerivatives | undefined)[], params: readonly VariedParameter[]): (Float64Array | undefined)[] {
  const currentColumn: (Float64Array | undefined)[] = new Array(params.length).fill(undefined);
  const modelParams = maps.modelParams;
  for (let k = 0; k < modelParams.length; k++) {
    const j = modelParams[k];
    const t = maps.tableOf[maps.element[j]];
    const td = t >= 0 ? derivatives[t] : undefined;
    if (td && rowIn(td, maps.instanceOf[maps.element[j]]) >= 0) currentColumn[j] = td.result.currentByParam[td.names.indexOf((params[j] as { param: string }).param)];
  }
  return currentColumn;
}

/** Whether every non-zero entry of λ lies in a covered row. */
function within(lambda: SparseEntries, covered: Uint8Array): boolean {
  for (let k = 0; k < lambda.count; k++) if (lambda.value[k] !== 0 && !covered[lambda.index[k]]) return false;
  return true;
}

/** −λ·∂F/∂p into the current row, over the rows of ∂F/∂p that λ reaches. */
function addAdjointTerms(lambda: SparseEntries, columns: ColumnsByRow, rows: DerivativeRows): void {
  const { start, param, value } = columns;
  for (let k = 0; k < lambda.count; k++) {
    const u = lambda.index[k];
    const l = lambda.value[k];
    if (l === 0) continue;
    for (let q = start[u]; q < start[u + 1]; q++) rows.add(param[q], -l * value[q]);
  }
}

/**
 * Reads an output's terms at the solution: its value, its ∂g/∂x (into `gradient`) and its explicit
 * ∂g/∂p (into the current row of `rows`).
 */
class OutputTerms {
  readonly gradient: OutputGradient;

  constructor(
    private readonly lin: Linearisation,
    private readonly maps: ElementMaps,
    private readonly derivatives: readonly (TableDerivatives | undefined)[],
    private readonly temperatureColumn: readonly (Float64Array | undefined)[],
    private readonly currentColumn: readonly (Float64Array | undefined)[],
    private readonly rows: DerivativeRows,
  ) {
    this.gradient = new OutputGradient(lin.layout.size);
  }

  /** The output's value (before its magnitude is taken). */
  read(out: OutputFunctional): number {
    this.gradient.clear();
    let y = 0;
    const terms = out.terms;
    for (let k = 0; k < terms.length; k++) {
      const term = terms[k];
      if (term.kind === 'node') {
        y += term.weight * voltageAt(this.lin.x, term.node - 1);
        this.gradient.add(term.node - 1, term.weight);
      } else if (term.kind === 'element') y += this.element(term.element, term.weight);
      else y += this.terminal(term.element, term.terminal, term.weight);
    }
    return y;
  }

  /** A two-terminal element's current, by its reader. */
  private element(e: number, w: number): number {
    const { lin, maps, gradient: c, rows } = this;
    if (maps.readerOf[e] < 0) return 0;
    const r = lin.layout.readers[maps.readerOf[e]];
    const x = lin.x;
    switch (r.kind) {
      case 'conductance': {
        const drop = voltageAt(x, r.a) - voltageAt(x, r.b);
        const g = lin.conductanceOf(e) ?? r.g;
        const el = lin.layout.circuit.elements[e];
        c.add(r.a, w * g);
        c.add(r.b, -w * g);
        if (el.kind === 'R' && el.resistance > 0) this.ownParameters(e, RESISTANCE, (-w * g * drop) / el.resistance);
        const slope = lin.conductanceSlopeOf(e);
        if (slope !== 0 && maps.temperatureParam >= 0) rows.add(maps.temperatureParam, w * g * slope * drop);
        return w * g * drop;
      }
      case 'branch':
        c.add(r.branch, w);
        return w * x[r.branch];
      case 'source-current':
        this.ownParameters(e, SOURCE, w);
        return w * lin.sourceValues[r.hook];
      case 'vccs':
        c.add(r.cp, w * r.gain);
        c.add(r.cn, -w * r.gain);
        return w * r.gain * (voltageAt(x, r.cp) - voltageAt(x, r.cn));
      case 'cccs':
        c.add(r.branch, w * r.gain);
        return w * r.gain * x[r.branch];
      case 'open':
        return 0;
    }
  }

  /** Adds `val` to the derivative of each parameter of kind `kind` of element e. */
  private ownParameters(e: number, kind: number, val: number): void {
    const { elementParamStart, elementParams } = this.maps;
    for (let q = elementParamStart[e]; q < elementParamStart[e + 1]; q++) if (this.maps.kind[elementParams[q]] === kind) this.rows.add(elementParams[q], val);
  }

  /** The current into a device's netlist terminal, with its partials from the device's linearisation. */
  private terminal(e: number, terminal: number, w: number): number {
    const { maps, rows } = this;
    const t = maps.tableOf[e];
    const td = t >= 0 ? this.derivatives[t] : undefined;
    // A device out of scope is read as nothing: its current's adjoint sits on its terminals' rows, which it stamps into,
    // so `within` finds them uncovered (a device on ground alone carries no current and no derivative).
    const i = td ? rowIn(td, maps.instanceOf[e]) : -1;
    if (!td || i < 0 || terminal >= td.N) return 0;
    const q = i * td.N + terminal;
    const terminals = td.terminals;
    const byV = td.result.currentByVoltage;
    for (let c = 0; c < td.T; c++) {
      const d = byV[q * td.T + c];
      if (d !== 0) this.gradient.add(terminals[i * td.T + c], w * d);
    }
    const tc = this.temperatureColumn[t];
    if (tc) rows.add(maps.temperatureParam, w * tc[q]);
    for (let k = maps.elementParamStart[e]; k < maps.elementParamStart[e + 1]; k++) {
      const col = this.currentColumn[maps.elementParams[k]];
      if (col) rows.add(maps.elementParams[k], w * col[q]);
    }
    return w * td.result.current[q];
  }
}

/**
 * The derivatives of the outputs, one output at a time: a dense accumulator over the parameters
 * with the list of those touched, closed into compressed rows (parameters ascending) in growable
 * typed arrays, so no object is made per output.
 */
class DerivativeRows {
  readonly start: Int32Array;
  index: Int32Array = new Int32Array(1024);
  value: Float64Array = new Float64Array(1024);
  length = 0;
  private rowsClosed = 0;
  private readonly acc: Float64Array;
  private readonly mark: Uint8Array;
  private touched: Int32Array = new Int32Array(64);
  private touchedCount = 0;

  constructor(params: number, outputs: number) {
    this.acc = float64Column(params);
    this.mark = uint8Column(params);
    this.start = int32Column(outputs + 1);
  }

  add(j: number, val: number): void {
    if (this.mark[j] === 0) {
      this.mark[j] = 1;
      if (this.touchedCount === this.touched.length) this.touched = grown(this.touched, this.touched.length * 2);
      this.touched[this.touchedCount++] = j;
    }
    this.acc[j] += val;
  }

  /** Ends the current output's row, every derivative multiplied by `sign`. */
  close(sign: number): void {
    const count = this.touchedCount;
    const need = this.length + count;
    if (need > this.index.length) {
      const size = this.grownSize(need);
      this.index = grown(this.index, size);
      this.value = grownFloat(this.value, size);
    }
    sortAscending(this.touched, count);
    for (let k = 0; k < count; k++) {
      const j = this.touched[k];
      this.index[this.length] = j;
      this.value[this.length++] = sign * this.acc[j];
      this.acc[j] = 0;
      this.mark[j] = 0;
    }
    this.touchedCount = 0;
    this.start[++this.rowsClosed] = this.length;
  }

  /** The size to grow to when `need` entries do not fit (`rowsSize`). */
  private grownSize(need: number): number {
    return rowsSize(need, this.index.length, this.rowsClosed, this.start.length - 1);
  }
}

/**
 * Entries of `DerivativeRows` for all outputs, when `need` no longer fits: the rows so far extrapolated to every output
 * (and a tenth more), at least a quarter more than now. Rows of a large circuit are alike, so the arrays are reallocated
 * once or twice: doubled from 1,024 they were reallocated about ten times at 100k elements (13 MB of typed arrays for
 * 5 MB of rows, and typed arrays allocated fast start collections of the whole heap).
 */
function rowsSize(need: number, capacity: number, closed: number, outputs: number): number {
  const expected = closed > 0 ? Math.ceil(((need / (closed + 1)) * outputs) * 1.1) : 0;
  return Math.max(need, capacity + (capacity >> 2), expected);
}

/** Sorts the first `count` entries of `a` ascending, in place: by insertion for the few parameters of most outputs, else by the typed array's own numeric sort. */
function sortAscending(a: Int32Array, count: number): void {
  if (count > 32) {
    a.subarray(0, count).sort();
    return;
  }
  for (let i = 1; i < count; i++) {
    const v = a[i];
    let k = i;
    for (; k > 0 && a[k - 1] > v; k--) a[k] = a[k - 1];
    a[k] = v;
  }
}

/** A copy of an Int32Array at a larger size. */
export function grown(a: Int32Array, size: number): Int32Array {
  const b = int32Column(size);
  b.set(a);
  return b;
}

/** A copy of a Float64Array at a larger size. */
export function grownFloat(a: Float64Array, size: number): Float64Array {
  const b = float64Column(size);
  b.set(a);
  return b;
}

/** Entries per chunk of `Triples`, the first chunk apart. */
const TRIPLE_CHUNK = 1 << 15;

/**
 * Entries of the first chunk of `Triples`. Small, so that the second chunk is added while the list is still short:
 * V8 gives a function its table of type feedback only after its first calls, so the chunk added at the first push was
 * never recorded, and the code compiled for the loops that push (on stack replacement, `push` inlined) was given up at
 * the next chunk, 32,768 entries later (`elementColumns` at 20k elements). A chunk added at the 64th push is recorded.
 */
const FIRST_TRIPLE_CHUNK = 64;

/**
 * A list of (row, parameter, value) triples in typed arrays of `TRIPLE_CHUNK` entries each (the first of
 * `FIRST_TRIPLE_CHUNK`), a chunk added when the last is full: nothing is copied or allocated twice. Grown by doubling
 * from 1,024 the arrays were reallocated about ten times at 100k elements (17 MB of typed arrays for 6 MB of entries),
 * and typed arrays allocated fast start collections of the whole heap.
 */
class Triples {
  readonly rows: Int32Array[] = [];
  readonly params: Int32Array[] = [];
  readonly values: Float64Array[] = [];
  length = 0;
  /** Entries used in the last chunk, and its size. */
  private at = 0;
  private room = 0;

  push(row: number, param: number, value: number): void {
    if (this.at === this.room) this.addChunk();
    const c = this.rows.length - 1;
    const at = this.at++;
    this.rows[c][at] = row;
    this.params[c][at] = param;
    this.values[c][at] = value;
    this.length++;
  }

  /** Entries used in chunk c (one expression, no branch: a branch taken at the last chunk only was given up there). */
  used(c: number): number {
    return Math.min(this.rows[c].length, this.length - Math.max(0, FIRST_TRIPLE_CHUNK + (c - 1) * TRIPLE_CHUNK));
  }

  private addChunk(): void {
    const size = this.rows.length === 0 ? FIRST_TRIPLE_CHUNK : TRIPLE_CHUNK;
    this.rows.push(int32Column(size));
    this.params.push(int32Column(size));
    this.values.push(float64Column(size));
    this.at = 0;
    this.room = size;
  }
}

/**
 * A kind without closed-form partials: its table's parameters moved one at a time, and every
 * terminal voltage by ±1 µV, in batched copies of its instances (central differences; steps in
 * VOLTAGE_STEP, TEMPERATURE_STEP and `parameterStep`).
 */
function numericalSensitivity(table: DeviceTable, x: Float64Array, conditions: DeviceConditions, names: readonly string[]): DeviceSensitivity {
  const kind = table.kind;
  const T = kind.terminalCount;
  const N = kind.nodeCount;
  const inst = table.instances;
  const count = inst.count;
  const out = allocateSensitivity(count, T, N, names.length);
  const globalsOf = (i: number): Int32Array => inst.terminals.subarray(i * T, i * T + T);
  const at = (t: number): DeviceConditions => new SolveConditions(t, conditions.tnomC, thermalVoltage(t), conditions.betaScale, conditions.junctionGmin);
  const all = Array.from({ length: N }, (_, t) => t);
  const nominal = new Batch(kind, inst.elements.map((el, i) => ({ element: el, globals: globalsOf(i), shift: -1, delta: 0 })), x, conditions);
  const base = nominal.currents(all);
  for (let t = 0; t < N; t++) for (let i = 0; i < count; i++) out.current[i * N + t] = base.get(t)![i];
  names.forEach((name, k) => {
    let up: Float64Array;
    let down: Float64Array;
    let upI: Map<number, Float64Array>;
    let downI: Map<number, Float64Array>;
    let h: Float64Array;
    if (name === TEMPERATURE_PARAMETER) {
      nominal.table.prepare(at(conditions.temperatureC + TEMPERATURE_STEP));
      up = nominal.residuals();
      upI = nominal.currents(all);
      nominal.table.prepare(at(conditions.temperatureC - TEMPERATURE_STEP));
      down = nominal.residuals();
      downI = nominal.currents(all);
      nominal.table.prepare(conditions);
      h = float64Column(count).fill(TEMPERATURE_STEP);
    } else {
      h = float64Column(count);
      const copies: Variant[] = [];
      for (let i = 0; i < count; i++) {
        const el = inst.elements[i];
        h[i] = parameterStep(el, name);
        const value = modelValue(el, name);
        for (const delta of [h[i], -h[i]]) copies.push({ element: withModelValue(el, name, value + delta), globals: globalsOf(i), shift: -1, delta: 0 });
      }
      const batch = new Batch(kind, copies, x, conditions);
      const res = batch.residuals();
      const cur = batch.currents(all);
      up = float64Column(count * T);
      down = float64Column(count * T);
      upI = new Map();
      downI = new Map();
      for (let i = 0; i < count; i++)
        for (let t = 0; t < T; t++) {
          up[i * T + t] = res[2 * i * T + t];
          down[i * T + t] = res[(2 * i + 1) * T + t];
        }
      for (let t = 0; t < N; t++) {
        const c = cur.get(t)!;
        upI.set(t, Float64Array.from({ length: count }, (_, i) => c[2 * i]));
        downI.set(t, Float64Array.from({ length: count }, (_, i) => c[2 * i + 1]));
      }
    }
    for (let i = 0; i < count; i++) {
      for (let r = 0; r < T; r++) out.residualByParam[k][i * T + r] = (up[i * T + r] - down[i * T + r]) / (2 * h[i]);
      for (let t = 0; t < N; t++) out.currentByParam[k][i * N + t] = (upI.get(t)![i] - downI.get(t)![i]) / (2 * h[i]);
    }
  });
  // ∂(terminal current)/∂(terminal voltage): a +1 µV and a −1 µV copy per terminal with its own unknown.
  const copies: Variant[] = [];
  const meta: { i: number; c: number }[] = [];
  for (let i = 0; i < count; i++) {
    const g = globalsOf(i);
    for (let c = 0; c < T; c++) {
      const u = g[c];
      if (u < 0 || g.indexOf(u) !== c) continue;
      copies.push({ element: inst.elements[i], globals: g, shift: u, delta: VOLTAGE_STEP }, { element: inst.elements[i], globals: g, shift: u, delta: -VOLTAGE_STEP });
      meta.push({ i, c });
    }
  }
  if (copies.length > 0) {
    const cur = new Batch(kind, copies, x, conditions).currents(all);
    for (let t = 0; t < N; t++) {
      const col = cur.get(t)!;
      meta.forEach((m, q) => (out.currentByVoltage[(m.i * N + t) * T + m.c] = (col[2 * q] - col[2 * q + 1]) / (2 * VOLTAGE_STEP)));
    }
  }
  return out;
}

/** The element with one model parameter replaced (its own copy of the model). */
function withModelValue(el: Element, param: string, value: number): Element {
  if (!('model' in el)) return el;
  return { ...el, model: { ...el.model, params: { ...el.model.params, [param]: value } } } as Element;
}
