// Adjoint sensitivities of output currents and voltages to every resistor, source, the temperature and each device's own model parameters, from the factored Jacobian of a converged solution (docs/VARIATION.md).

import type { Element } from '../circuit';
import { MODEL_DEFAULTS } from '../devices/parameters';
import type { DeviceConditions, DeviceKind, DeviceTable, LoadTally } from '../devices/device';
import { thermalVoltage } from '../devices/physics';
import type { Linearisation } from '../solve/dc';
import type { LinearReader } from '../solve/mna';

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

/** The non-zero derivatives of one output: parameter indices (ascending) and d(output)/d(parameter). */
export interface SparseRow {
  index: Int32Array;
  value: Float64Array;
}

export interface SensitivityResult {
  /** Each output's value at the solution. */
  value: number[];
  /** Per output, the parameters it depends on and its derivatives (every other derivative is exactly zero). */
  derivative: SparseRow[];
  /** Transposed solves done (one per output). */
  adjointSolves: number;
}

/** d(output o)/d(parameter j) from a result (0 where the output does not depend on it). */
export function derivativeOf(r: SensitivityResult, o: number, j: number): number {
  const row = r.derivative[o];
  let lo = 0;
  let hi = row.index.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (row.index[mid] === j) return row.value[mid];
    if (row.index[mid] < j) lo = mid + 1;
    else hi = mid - 1;
  }
  return 0;
}

/** Voltage step of the device-level central differences, volts (docs/VARIATION.md: truncation ≈ (h/VT)²/6 ≈ 3e-10). */
const VOLTAGE_STEP = 1e-6;
/** Temperature step of the device-level central differences, kelvin. */
const TEMPERATURE_STEP = 0.01;
/** Relative step for a model parameter (absolute 1e-7 for a parameter at 0, such as VTO = 0). */
const PARAMETER_STEP = 1e-6;

/** A model parameter's value as the device uses it (the card's, else the default). */
export function modelValue(el: Element, param: string): number {
  if (!('model' in el)) return 0;
  const given = el.model.params[param];
  if (given !== undefined && Number.isFinite(given)) return given;
  const kind = el.model.kind === 'r' ? 'd' : el.model.kind;
  return MODEL_DEFAULTS[kind][param] ?? 0;
}

function parameterStep(el: Element, param: string): number {
  const base = Math.abs(modelValue(el, param));
  return base > 0 ? base * PARAMETER_STEP : 1e-7;
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
 * d(output)/d(parameter) for every output and parameter at the linearised solution: one
 * transposed solve per output (Jᵀ·λ = ∂g/∂x, sparse, so an output costs what its part of the
 * circuit costs), then dy/dp = ∂g/∂p − λ·∂F/∂p over the sparse columns ∂F/∂p
 * (docs/VARIATION.md). Device equations enter through the devices' own tables, evaluated in
 * batches of copies at the solution.
 */
export function sensitivities(lin: Linearisation, outputs: readonly OutputFunctional[], params: readonly VariedParameter[]): SensitivityResult {
  const { layout, conditions, x } = lin;
  const els = layout.circuit.elements;
  const n = layout.size;
  const order = layout.deviceOrder;
  const v = (u: number): number => (u >= 0 ? x[u] : 0);
  const deviceOf = new Map<number, number>();
  for (let d = 0; d < order.element.length; d++) deviceOf.set(order.element[d], d);
  const globalsOf = (d: number): Int32Array => {
    const table = layout.tables[order.table[d]];
    const T = table.kind.terminalCount;
    return table.instances.terminals.subarray(order.instance[d] * T, order.instance[d] * T + T);
  };
  const elementOf = (d: number): Element => layout.tables[order.table[d]].instances.elements[order.instance[d]];
  const readerOf = new Map<number, LinearReader>();
  for (const r of layout.readers) readerOf.set(r.element, r);
  const sourceOf = new Map<number, number>();
  layout.sources.forEach((s, k) => sourceOf.set(s.element, k));
  const at = (t: number): DeviceConditions => ({ ...conditions, temperatureC: t, vt: thermalVoltage(t) });
  const temperatureParam = params.findIndex((p) => p.kind === 'temperature');

  // Which parameters belong to which element (for the explicit ∂g/∂p of an output's own elements).
  const paramsOfElement = new Map<number, number[]>();
  params.forEach((p, j) => {
    if (p.kind === 'temperature') return;
    const list = paramsOfElement.get(p.element);
    if (list) list.push(j);
    else paramsOfElement.set(p.element, [j]);
  });

  // ---- the columns ∂F/∂p, gathered by row: rowParams[u] lists (parameter, value) ----
  const colRow: number[] = [];
  const colParam: number[] = [];
  const colValue: number[] = [];
  const put = (j: number, u: number, val: number): void => {
    if (u < 0 || val === 0 || !Number.isFinite(val)) return;
    colRow.push(u);
    colParam.push(j);
    colValue.push(val);
  };

  // Devices by kind: the nominal copies (temperature) and the parameter copies (model parameters).
  const devicesByKind = new Map<DeviceKind, number[]>();
  for (let d = 0; d < order.element.length; d++) {
    const kind = layout.tables[order.table[d]].kind;
    const list = devicesByKind.get(kind);
    if (list) list.push(d);
    else devicesByKind.set(kind, [d]);
  }
  // Explicit partials of device currents, filled below: (device, terminal, parameter) -> d current / d parameter.
  // Keys are device·16 + terminal (no kind has 16 terminals) and, for a parameter, that times the parameter count plus j.
  const explicitDevice = new Map<number, number>();
  const slot = (d: number, t: number): number => d * 16 + t;
  const key = (d: number, t: number, j: number): number => slot(d, t) * params.length + j;
  const wantedTerminals = new Map<number, Set<number>>();
  for (const out of outputs)
    for (const term of out.terms)
      if (term.kind === 'terminal') {
        const d = deviceOf.get(term.element);
        if (d === undefined) continue;
        let set = wantedTerminals.get(d);
        if (!set) wantedTerminals.set(d, (set = new Set()));
        set.add(term.terminal);
      }

  const allWanted = new Set<number>();
  for (const set of wantedTerminals.values()) for (const t of set) allWanted.add(t);
  // A model with one parameter moved by ±h is the same for every device that shares the model: build each once.
  const modelCache = new Map<unknown, Map<string, unknown>>();
  const movedModel = (model: { params: Record<string, number> }, param: string, value: number): unknown => {
    let byKey = modelCache.get(model);
    if (!byKey) modelCache.set(model, (byKey = new Map()));
    const k = `${param}\u0000${value}`;
    let m = byKey.get(k);
    if (!m) byKey.set(k, (m = { ...model, params: { ...model.params, [param]: value } }));
    return m;
  };

  for (const [kind, devices] of devicesByKind) {
    const T = kind.terminalCount;
    // Temperature: every device's residual at T ± h, and the wanted terminal currents.
    if (temperatureParam >= 0) {
      const batch = new Batch(kind, devices.map((d) => ({ element: elementOf(d), globals: globalsOf(d), shift: -1, delta: 0 })), x, conditions);
      const h = TEMPERATURE_STEP;
      batch.table.prepare(at(conditions.temperatureC + h));
      const up = batch.residuals();
      const upI = batch.currents(allWanted);
      batch.table.prepare(at(conditions.temperatureC - h));
      const down = batch.residuals();
      const downI = batch.currents(allWanted);
      devices.forEach((d, i) => {
        const g = globalsOf(d);
        for (let t = 0; t < T; t++) put(temperatureParam, g[t], (up[i * T + t] - down[i * T + t]) / (2 * h));
      });
      for (const [t, ups] of upI) {
        const downs = downI.get(t)!;
        devices.forEach((d, i) => {
          if (wantedTerminals.get(d)?.has(t)) explicitDevice.set(key(d, t, temperatureParam), (ups[i] - downs[i]) / (2 * h));
        });
      }
    }
    // Model parameters: a +h and a −h copy of the device for each.
    const copies: Variant[] = [];
    const meta: { d: number; j: number; h: number }[] = [];
    for (const d of devices) {
      const e = order.element[d];
      for (const j of paramsOfElement.get(e) ?? []) {
        const p = params[j];
        if (p.kind !== 'model') continue;
        const el = elementOf(d);
        if (!('model' in el)) continue;
        const h = parameterStep(el, p.param);
        const base = modelValue(el, p.param);
        for (const delta of [h, -h]) copies.push({ element: { ...el, model: movedModel(el.model, p.param, base + delta) } as Element, globals: globalsOf(d), shift: -1, delta: 0 });
        meta.push({ d, j, h });
      }
    }
    if (copies.length > 0) {
      const batch = new Batch(kind, copies, x, conditions);
      const res = batch.residuals();
      meta.forEach((m, k) => {
        const g = globalsOf(m.d);
        for (let t = 0; t < T; t++) put(m.j, g[t], (res[2 * k * T + t] - res[(2 * k + 1) * T + t]) / (2 * m.h));
      });
      const currents = batch.currents(allWanted);
      for (const t of allWanted) {
        const cur = currents.get(t)!;
        meta.forEach((m, k) => {
          if (wantedTerminals.get(m.d)?.has(t)) explicitDevice.set(key(m.d, t, m.j), (cur[2 * k] - cur[2 * k + 1]) / (2 * m.h));
        });
      }
    }
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
      const k = sourceOf.get(p.element);
      if (k !== undefined) {
        const hook = layout.sources[k];
        if (hook.kind === 'V') put(j, hook.rows[0], -1);
        else {
          put(j, hook.rows[0], 1);
          put(j, hook.rows[1], -1);
        }
      }
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
  for (const u of colRow) rowStart[u + 1]++;
  for (let u = 0; u < n; u++) rowStart[u + 1] += rowStart[u];
  const fill = rowStart.slice(0, n);
  const rowParam = new Int32Array(colRow.length);
  const rowValue = new Float64Array(colRow.length);
  for (let q = 0; q < colRow.length; q++) {
    const at = fill[colRow[q]]++;
    rowParam[at] = colParam[q];
    rowValue[at] = colValue[q];
  }

  // ---- ∂g/∂x of device terminal currents: copies with one unknown moved by ±h ----
  const deviceRows = new Map<number, { u: number[]; d: number[] }>();
  const deviceValue = new Map<number, number>();
  for (const [kind, devices] of devicesByKind) {
    const wanted = devices.filter((d) => wantedTerminals.has(d));
    if (wanted.length === 0) continue;
    const copies: Variant[] = [];
    const meta: { d: number; u: number }[] = [];
    const nominalCopies: Variant[] = [];
    for (const d of wanted) {
      const g = globalsOf(d);
      nominalCopies.push({ element: elementOf(d), globals: g, shift: -1, delta: 0 });
      const seen = new Set<number>();
      for (let t = 0; t < g.length; t++) {
        const u = g[t];
        if (u < 0 || seen.has(u)) continue;
        seen.add(u);
        copies.push({ element: elementOf(d), globals: g, shift: u, delta: VOLTAGE_STEP }, { element: elementOf(d), globals: g, shift: u, delta: -VOLTAGE_STEP });
        meta.push({ d, u });
      }
    }
    const nominalBatch = new Batch(kind, nominalCopies, x, conditions);
    const batch = new Batch(kind, copies, x, conditions);
    const terminals = new Set([...wanted].flatMap((d) => [...wantedTerminals.get(d)!]));
    const nominalAll = nominalBatch.currents(terminals);
    const shiftedAll = batch.currents(terminals);
    for (const t of terminals) {
      const nominalI = nominalAll.get(t)!;
      wanted.forEach((d, i) => {
        if (wantedTerminals.get(d)!.has(t)) deviceValue.set(slot(d, t), nominalI[i]);
      });
      const cur = shiftedAll.get(t)!;
      meta.forEach((m, k) => {
        if (!wantedTerminals.get(m.d)!.has(t)) return;
        const id = slot(m.d, t);
        let row = deviceRows.get(id);
        if (!row) deviceRows.set(id, (row = { u: [], d: [] }));
        row.u.push(m.u);
        row.d.push((cur[2 * k] - cur[2 * k + 1]) / (2 * VOLTAGE_STEP));
      });
    }
  }

  // ---- one sparse transposed solve per output ----
  const value: number[] = [];
  const derivative: SparseRow[] = [];
  const acc = new Float64Array(params.length);
  const touched: number[] = [];
  const mark = new Uint8Array(params.length);
  const lambda = { index: [] as number[], value: [] as number[] };
  const cMap = new Map<number, number>();
  const add = (j: number, val: number): void => {
    if (!mark[j]) {
      mark[j] = 1;
      touched.push(j);
    }
    acc[j] += val;
  };
  for (const out of outputs) {
    cMap.clear();
    const addC = (u: number, val: number): void => {
      if (u < 0) return;
      cMap.set(u, (cMap.get(u) ?? 0) + val);
    };
    let y = 0;
    touched.length = 0;
    const explicitTerms: [number, number][] = [];
    for (const term of out.terms) {
      const w = term.weight;
      if (term.kind === 'node') {
        y += w * v(term.node - 1);
        addC(term.node - 1, w);
        continue;
      }
      if (term.kind === 'element') {
        const r = readerOf.get(term.element);
        if (!r) continue;
        const drop = v(r.a) - v(r.b);
        switch (r.kind) {
          case 'conductance': {
            const g = lin.conductanceOf(term.element) ?? r.g;
            const el = els[term.element];
            y += w * g * drop;
            addC(r.a, w * g);
            addC(r.b, -w * g);
            if (el.kind === 'R' && el.resistance > 0) for (const j of paramsOfElement.get(term.element) ?? []) if (params[j].kind === 'resistance') explicitTerms.push([j, (-w * g * drop) / el.resistance]);
            const slope = lin.conductanceSlopeOf(term.element);
            if (slope !== 0 && temperatureParam >= 0) explicitTerms.push([temperatureParam, w * g * slope * drop]);
            break;
          }
          case 'branch':
            y += w * x[r.branch];
            addC(r.branch, w);
            break;
          case 'source-current':
            y += w * lin.sourceValues[r.hook];
            for (const j of paramsOfElement.get(term.element) ?? []) if (params[j].kind === 'source') explicitTerms.push([j, w]);
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
      const d = deviceOf.get(term.element);
      if (d === undefined) continue;
      const id = slot(d, term.terminal);
      y += w * (deviceValue.get(id) ?? 0);
      const row = deviceRows.get(id);
      if (row) for (let k = 0; k < row.u.length; k++) addC(row.u[k], w * row.d[k]);
      if (temperatureParam >= 0) explicitTerms.push([temperatureParam, w * (explicitDevice.get(key(d, term.terminal, temperatureParam)) ?? 0)]);
      for (const j of paramsOfElement.get(term.element) ?? []) {
        const e = explicitDevice.get(key(d, term.terminal, j));
        if (e !== undefined) explicitTerms.push([j, w * e]);
      }
    }
    const sign = out.magnitude && y < 0 ? -1 : 1;
    for (const [j, val] of explicitTerms) add(j, val);
    const cIndex = [...cMap.keys()];
    const cValue = cIndex.map((u) => cMap.get(u)!);
    lin.solveTransposedSparse(cIndex, cValue, lambda);
    for (let k = 0; k < lambda.index.length; k++) {
      const u = lambda.index[k];
      const l = lambda.value[k];
      for (let q = rowStart[u]; q < rowStart[u + 1]; q++) add(rowParam[q], -l * rowValue[q]);
    }
    touched.sort((a, b) => a - b);
    const index = new Int32Array(touched.length);
    const vals = new Float64Array(touched.length);
    touched.forEach((j, k) => {
      index[k] = j;
      vals[k] = sign * acc[j];
      acc[j] = 0;
      mark[j] = 0;
    });
    value.push(sign * y);
    derivative.push({ index, value: vals });
  }
  return { value, derivative, adjointSolves: outputs.length };
}
