// Adjoint sensitivities of output currents and voltages to every resistor, source, the temperature and each device's own model parameters, from the factored Jacobian of a converged solution (docs/VARIATION.md).

import type { Element } from '../circuit';
import { MODEL_DEFAULTS } from '../devices/parameters';
import type { DeviceConditions, DeviceKind, DeviceSensitivity, DeviceTable, LoadTally } from '../devices/device';
import { TEMPERATURE_PARAMETER, allocateSensitivity } from '../devices/device';
import { thermalVoltage } from '../devices/physics';
import type { Linearisation } from '../solve/dc';

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
    const terminals = new Int32Array(V * T);
    const positions = new Int32Array(V * T * T);
    this.x = new Float64Array(V * T);
    variants.forEach((v, i) => {
      for (let t = 0; t < T; t++) {
        const g = v.globals[t];
        terminals[i * T + t] = g < 0 ? -1 : i * T + t;
        this.x[i * T + t] = g < 0 ? 0 : solution[g] + (g === v.shift ? v.delta : 0);
      }
      for (let r = 0; r < T; r++) for (let c = 0; c < T; c++) positions[i * T * T + r * T + c] = v.globals[r] < 0 || v.globals[c] < 0 ? -1 : i * T * T + r * T + c;
    });
    this.table = kind.createTable({ count: V, elements: variants.map((v) => v.element), elementIndex: new Int32Array(V), terminals, positions }, []);
    this.table.prepare(conditions);
    this.table.resetState(this.x);
    this.values = new Float64Array(V * T * T);
    this.rhs = new Float64Array(V * T);
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
    const out = new Float64Array(rhs.length);
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
      const col = new Float64Array(this.variants.length);
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
}

/**
 * d(output)/d(parameter) for every output and parameter at the linearised solution: one
 * transposed solve per output (Jᵀ·λ = ∂g/∂x, sparse, so an output costs what its part of the
 * circuit costs), then dy/dp = ∂g/∂p − λ·∂F/∂p over the sparse columns ∂F/∂p
 * (docs/VARIATION.md). Device equations enter through each kind's exact partial derivatives
 * (`DeviceTable.sensitivity`), one pass over each table; a kind without them is differenced
 * numerically in batches of copies.
 */
export function sensitivities(lin: Linearisation, outputs: readonly OutputFunctional[], params: readonly VariedParameter[]): SensitivityResult {
  const { layout, conditions, x } = lin;
  const els = layout.circuit.elements;
  const n = layout.size;
  const order = layout.deviceOrder;
  const tables = layout.tables;
  const v = (u: number): number => (u >= 0 ? x[u] : 0);
  // Element index -> its device table and instance (−1: not a device).
  const tableOf = new Int32Array(els.length).fill(-1);
  const instanceOf = new Int32Array(els.length);
  for (let d = 0; d < order.element.length; d++) {
    tableOf[order.element[d]] = order.table[d];
    instanceOf[order.element[d]] = order.instance[d];
  }
  // Element index -> its reader in the layout and its source hook (−1: none).
  const readerOf = new Int32Array(els.length).fill(-1);
  layout.readers.forEach((r, k) => (readerOf[r.element] = k));
  const sourceOf = new Int32Array(els.length).fill(-1);
  layout.sources.forEach((s, k) => (sourceOf[s.element] = k));
  const temperatureParam = params.findIndex((p) => p.kind === 'temperature');

  // The parameters of each element, by element index (for the explicit ∂g/∂p of an output's own elements).
  const elementParamStart = new Int32Array(els.length + 1);
  for (const p of params) if (p.kind !== 'temperature') elementParamStart[p.element + 1]++;
  for (let e = 0; e < els.length; e++) elementParamStart[e + 1] += elementParamStart[e];
  const elementParams = new Int32Array(elementParamStart[els.length]);
  {
    const fill = elementParamStart.slice(0, els.length);
    params.forEach((p, j) => {
      if (p.kind !== 'temperature') elementParams[fill[p.element]++] = j;
    });
  }

  // ---- the columns ∂F/∂p, as (row, parameter, value) triples ----
  const cols = new Triples();
  const put = (j: number, u: number, val: number): void => {
    if (u < 0 || val === 0 || !Number.isFinite(val)) return;
    cols.push(u, j, val);
  };

  // Device parameters asked for, per table: the temperature and the model or instance parameters of its instances.
  const namesOf: Set<string>[] = tables.map(() => new Set<string>());
  if (temperatureParam >= 0) for (const set of namesOf) set.add(TEMPERATURE_PARAMETER);
  for (const p of params) if (p.kind === 'model' && tableOf[p.element] >= 0) namesOf[tableOf[p.element]].add(p.param);
  // Tables an output reads a terminal current of need their current rows even without parameters.
  const readsTable = new Uint8Array(tables.length);
  for (const out of outputs) for (const term of out.terms) if (term.kind === 'terminal' && tableOf[term.element] >= 0) readsTable[tableOf[term.element]] = 1;
  const derivatives: (TableDerivatives | undefined)[] = tables.map((table, k) => {
    const names = [...namesOf[k]];
    if (names.length === 0 && !readsTable[k]) return undefined;
    const result = table.sensitivity?.(x, conditions, names) ?? numericalSensitivity(table, x, conditions, names);
    return { T: table.kind.terminalCount, N: table.kind.nodeCount, names, result };
  });
  // Per parameter j of a device: its column of ∂(netlist terminal current)/∂p in its table's result.
  const currentColumn: (Float64Array | undefined)[] = new Array(params.length).fill(undefined);
  const temperatureColumn: (Float64Array | undefined)[] = derivatives.map((td) => (td && temperatureParam >= 0 ? td.result.currentByParam[td.names.indexOf(TEMPERATURE_PARAMETER)] : undefined));

  // Temperature: every instance's residual rows.
  if (temperatureParam >= 0) {
    derivatives.forEach((td, k) => {
      if (!td) return;
      const col = td.result.residualByParam[td.names.indexOf(TEMPERATURE_PARAMETER)];
      const terminals = tables[k].instances.terminals;
      for (let q = 0; q < col.length; q++) if (col[q] !== 0) put(temperatureParam, terminals[q], col[q]);
    });
  }

  params.forEach((p, j) => {
    if (p.kind === 'resistance') {
      const g = lin.conductanceOf(p.element);
      const el = els[p.element];
      if (g !== undefined && g !== 0 && el.kind === 'R' && el.resistance > 0) {
        const a = el.nodes[0] - 1;
        const b = el.nodes[1] - 1;
        // F_a gains g·(Va − Vb); g = 1/(R·f) (f: the temperature coefficients' factor), so dg/dR = −g/R.
        const d = (-g / el.resistance) * (v(a) - v(b));
        put(j, a, d);
        put(j, b, -d);
      }
    } else if (p.kind === 'source') {
      const k = sourceOf[p.element];
      if (k >= 0) {
        const hook = layout.sources[k];
        if (hook.kind === 'V') put(j, hook.rows[0], -1);
        else {
          put(j, hook.rows[0], 1);
          put(j, hook.rows[1], -1);
        }
      }
    } else if (p.kind === 'model') {
      const t = tableOf[p.element];
      const td = t >= 0 ? derivatives[t] : undefined;
      if (!td) return;
      const k = td.names.indexOf(p.param);
      currentColumn[j] = td.result.currentByParam[k];
      const col = td.result.residualByParam[k];
      const terminals = tables[t].instances.terminals;
      const first = instanceOf[p.element] * td.T;
      for (let r = first; r < first + td.T; r++) put(j, terminals[r], col[r]);
    }
  });

  // Resistors with temperature coefficients: dg/dT = g·(d ln g/dT) on their KCL rows.
  if (temperatureParam >= 0) {
    for (const r of layout.readers) {
      if (r.kind !== 'conductance') continue;
      const slope = lin.conductanceSlopeOf(r.element);
      if (slope === 0) continue;
      const d = (lin.conductanceOf(r.element) ?? r.g) * slope * (v(r.a) - v(r.b));
      put(temperatureParam, r.a, d);
      put(temperatureParam, r.b, -d);
    }
  }

  // Row-major index of the columns.
  const rowStart = new Int32Array(n + 1);
  const colCount = cols.length;
  for (let q = 0; q < colCount; q++) rowStart[cols.row[q] + 1]++;
  for (let u = 0; u < n; u++) rowStart[u + 1] += rowStart[u];
  const rowParam = new Int32Array(colCount);
  const rowValue = new Float64Array(colCount);
  {
    const fill = rowStart.slice(0, n);
    for (let q = 0; q < colCount; q++) {
      const at = fill[cols.row[q]]++;
      rowParam[at] = cols.param[q];
      rowValue[at] = cols.value[q];
    }
  }

  // ---- one sparse transposed solve per output ----
  const value = new Float64Array(outputs.length);
  const rows = new DerivativeRows(params.length, outputs.length);
  const lambda = { index: [] as number[], value: [] as number[] };
  // ∂g/∂x, dense with the list of its non-zero unknowns.
  const cDense = new Float64Array(n);
  const cMark = new Uint8Array(n);
  const cIndex: number[] = [];
  const cValue: number[] = [];
  const add = (j: number, val: number): void => rows.add(j, val);
  const addC = (u: number, val: number): void => {
    if (u < 0) return;
    if (!cMark[u]) {
      cMark[u] = 1;
      cIndex.push(u);
    }
    cDense[u] += val;
  };
  for (let o = 0; o < outputs.length; o++) {
    const out = outputs[o];
    cIndex.length = 0;
    let y = 0;
    for (const term of out.terms) {
      const w = term.weight;
      if (term.kind === 'node') {
        y += w * v(term.node - 1);
        addC(term.node - 1, w);
        continue;
      }
      const e = term.element;
      if (term.kind === 'element') {
        if (readerOf[e] < 0) continue;
        const r = layout.readers[readerOf[e]];
        const drop = v(r.a) - v(r.b);
        switch (r.kind) {
          case 'conductance': {
            const g = lin.conductanceOf(e) ?? r.g;
            const el = els[e];
            y += w * g * drop;
            addC(r.a, w * g);
            addC(r.b, -w * g);
            if (el.kind === 'R' && el.resistance > 0)
              for (let q = elementParamStart[e]; q < elementParamStart[e + 1]; q++) if (params[elementParams[q]].kind === 'resistance') add(elementParams[q], (-w * g * drop) / el.resistance);
            const slope = lin.conductanceSlopeOf(e);
            if (slope !== 0 && temperatureParam >= 0) add(temperatureParam, w * g * slope * drop);
            break;
          }
          case 'branch':
            y += w * x[r.branch];
            addC(r.branch, w);
            break;
          case 'source-current':
            y += w * lin.sourceValues[r.hook];
            for (let q = elementParamStart[e]; q < elementParamStart[e + 1]; q++) if (params[elementParams[q]].kind === 'source') add(elementParams[q], w);
            break;
          case 'vccs':
            y += w * r.gain * (v(r.cp) - v(r.cn));
            addC(r.cp, w * r.gain);
            addC(r.cn, -w * r.gain);
            break;
          case 'cccs':
            y += w * r.gain * x[r.branch];
            addC(r.branch, w * r.gain);
            break;
          case 'open':
            break;
        }
        continue;
      }
      const t = tableOf[e];
      const td = t >= 0 ? derivatives[t] : undefined;
      if (!td || term.terminal >= td.N) continue;
      const i = instanceOf[e];
      const q = i * td.N + term.terminal;
      y += w * td.result.current[q];
      const terminals = tables[t].instances.terminals;
      const byV = td.result.currentByVoltage;
      for (let c = 0; c < td.T; c++) {
        const d = byV[q * td.T + c];
        if (d !== 0) addC(terminals[i * td.T + c], w * d);
      }
      const tc = temperatureColumn[t];
      if (tc) add(temperatureParam, w * tc[q]);
      for (let k = elementParamStart[e]; k < elementParamStart[e + 1]; k++) {
        const col = currentColumn[elementParams[k]];
        if (col) add(elementParams[k], w * col[q]);
      }
    }
    const sign = out.magnitude && y < 0 ? -1 : 1;
    cValue.length = cIndex.length;
    for (let k = 0; k < cIndex.length; k++) {
      cValue[k] = cDense[cIndex[k]];
      cDense[cIndex[k]] = 0;
      cMark[cIndex[k]] = 0;
    }
    lin.solveTransposedSparse(cIndex, cValue, lambda);
    for (let k = 0; k < lambda.index.length; k++) {
      const u = lambda.index[k];
      const l = lambda.value[k];
      if (l === 0) continue;
      for (let q = rowStart[u]; q < rowStart[u + 1]; q++) rows.add(rowParam[q], -l * rowValue[q]);
    }
    rows.close(sign);
    value[o] = sign * y;
  }
  return { value, rowStart: rows.start, index: rows.index.subarray(0, rows.length), derivative: rows.value.subarray(0, rows.length), adjointSolves: outputs.length };
}

/**
 * The derivatives of the outputs, one output at a time: a dense accumulator over the parameters
 * with the list of those touched, closed into compressed rows (parameters ascending) in growable
 * typed arrays, so no object is made per output.
 */
class DerivativeRows {
  readonly start: Int32Array;
  index = new Int32Array(1024);
  value = new Float64Array(1024);
  length = 0;
  private rowsClosed = 0;
  private readonly acc: Float64Array;
  private readonly mark: Uint8Array;
  private touched = new Int32Array(64);
  private touchedCount = 0;

  constructor(params: number, outputs: number) {
    this.acc = new Float64Array(params);
    this.mark = new Uint8Array(params);
    this.start = new Int32Array(outputs + 1);
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
      const size = Math.max(need, this.index.length * 2);
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
function grown(a: Int32Array, size: number): Int32Array<ArrayBuffer> {
  const b = new Int32Array(size);
  b.set(a);
  return b;
}

/** A copy of a Float64Array at a larger size. */
function grownFloat(a: Float64Array, size: number): Float64Array<ArrayBuffer> {
  const b = new Float64Array(size);
  b.set(a);
  return b;
}

/** A growable list of (row, parameter, value) triples in typed arrays. */
class Triples {
  row = new Int32Array(1024);
  param = new Int32Array(1024);
  value = new Float64Array(1024);
  length = 0;
  push(row: number, param: number, value: number): void {
    if (this.length === this.row.length) {
      const size = this.row.length * 2;
      this.row = grown(this.row, size);
      this.param = grown(this.param, size);
      this.value = grownFloat(this.value, size);
    }
    this.row[this.length] = row;
    this.param[this.length] = param;
    this.value[this.length++] = value;
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
  const at = (t: number): DeviceConditions => ({ ...conditions, temperatureC: t, vt: thermalVoltage(t) });
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
      h = new Float64Array(count).fill(TEMPERATURE_STEP);
    } else {
      h = new Float64Array(count);
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
      up = new Float64Array(count * T);
      down = new Float64Array(count * T);
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
