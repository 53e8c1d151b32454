// Adjoint sensitivities of output currents and voltages to every resistor, source, the temperature and each device's own model parameters, from the factored Jacobian of a converged solution (docs/VARIATION.md).

import type { Element } from '../circuit';
import { MODEL_DEFAULTS } from '../devices/parameters';
import type { DeviceKind, DeviceTable, LoadTally } from '../devices/device';
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

export interface SensitivityResult {
  /** Each output's value at the solution. */
  value: number[];
  /** `derivative[o][p]`: d(output o)/d(parameter p). */
  derivative: Float64Array[];
  /** Transposed solves done (one per output). */
  adjointSolves: number;
}

/** Voltage step of the device-level central differences, volts (docs/VARIATION.md: truncation ≈ (h/VT)²/6 ≈ 3e-10). */
const VOLTAGE_STEP = 1e-6;
/** Temperature step of the device-level central differences, kelvin. */
const TEMPERATURE_STEP = 0.01;
/** Relative step for a model parameter (absolute 1e-7 for a parameter at 0, such as VTO = 0). */
const PARAMETER_STEP = 1e-6;

/** One device instance evaluated on its own: its distinct unknowns, a one-instance table on local slots, and its local solution. */
interface Probe {
  kind: DeviceKind;
  element: Element;
  elementIndex: number;
  /** Distinct MNA unknowns of the instance (ground left out); local index k stands for `globals[k]`. */
  globals: Int32Array;
  terminals: Int32Array;
  positions: Int32Array;
  x: Float64Array;
  table: DeviceTable;
}

/** Everything a set of sensitivities is computed from, built on one linearisation. */
class Context {
  private readonly probes = new Map<number, Probe>();
  private readonly deviceIndex = new Map<number, number>();
  private readonly readerOf = new Map<number, LinearReader>();
  private readonly sourceOf = new Map<number, number>();
  private readonly tally: LoadTally = { limited: false, nonFinite: [] };

  constructor(readonly lin: Linearisation) {
    const order = lin.layout.deviceOrder;
    for (let d = 0; d < order.element.length; d++) this.deviceIndex.set(order.element[d], d);
    for (const r of lin.layout.readers) this.readerOf.set(r.element, r);
    lin.layout.sources.forEach((s, k) => this.sourceOf.set(s.element, k));
  }

  v(u: number): number {
    return u >= 0 ? this.lin.x[u] : 0;
  }

  isDevice(element: number): boolean {
    return this.deviceIndex.has(element);
  }

  deviceElements(): number[] {
    return [...this.deviceIndex.keys()];
  }

  probe(element: number): Probe | undefined {
    const cached = this.probes.get(element);
    if (cached) return cached;
    const d = this.deviceIndex.get(element);
    if (d === undefined) return undefined;
    const { layout } = this.lin;
    const table = layout.tables[layout.deviceOrder.table[d]];
    const row = layout.deviceOrder.instance[d];
    const kind = table.kind;
    const T = kind.terminalCount;
    const globals: number[] = [];
    const terminals = new Int32Array(T);
    for (let t = 0; t < T; t++) {
      const g = table.instances.terminals[row * T + t];
      if (g < 0) {
        terminals[t] = -1;
        continue;
      }
      let k = globals.indexOf(g);
      if (k < 0) {
        k = globals.length;
        globals.push(g);
      }
      terminals[t] = k;
    }
    const L = globals.length;
    const positions = new Int32Array(T * T);
    for (let r = 0; r < T; r++) for (let c = 0; c < T; c++) positions[r * T + c] = terminals[r] < 0 || terminals[c] < 0 ? -1 : terminals[r] * L + terminals[c];
    const x = new Float64Array(L);
    for (let k = 0; k < L; k++) x[k] = this.lin.x[globals[k]];
    const el = table.instances.elements[row];
    const p: Probe = { kind, element: el, elementIndex: element, globals: Int32Array.from(globals), terminals, positions, x, table: undefined as unknown as DeviceTable };
    p.table = this.tableFor(p, el);
    this.probes.set(element, p);
    return p;
  }

  /** A one-instance table of `el` on the probe's local slots, prepared for the linearisation's conditions. */
  tableFor(p: Probe, el: Element): DeviceTable {
    const table = p.kind.createTable({ count: 1, elements: [el], elementIndex: Int32Array.of(p.elementIndex), terminals: p.terminals, positions: p.positions }, []);
    table.prepare(this.lin.conditions);
    return table;
  }

  /** The currents the instance draws from each of its distinct unknowns (its part of the KCL rows) at the solution. */
  residual(p: Probe, table: DeviceTable, out: Float64Array): Float64Array {
    const L = p.globals.length;
    const values = new Float64Array(L * L);
    const rhs = new Float64Array(L);
    table.resetState(p.x);
    this.tally.limited = false;
    this.tally.nonFinite.length = 0;
    table.load(p.x, values, rhs, false, this.tally);
    for (let r = 0; r < L; r++) {
      let s = -rhs[r];
      for (let c = 0; c < L; c++) s += values[r * L + c] * p.x[c];
      out[r] = s;
    }
    return out;
  }

  terminalCurrent(p: Probe, table: DeviceTable, terminal: number): number {
    return p.kind.terminalCurrent(table.evaluate(p.x), 0, terminal);
  }

  /** The probe table of the device with model parameter `param` moved by `delta`. */
  variedTable(p: Probe, param: string, delta: number): DeviceTable {
    const el = p.element;
    if (!('model' in el)) return p.table;
    const base = modelValue(el, param);
    return this.tableFor(p, { ...el, model: { ...el.model, params: { ...el.model.params, [param]: base + delta } } } as Element);
  }

  reader(element: number): LinearReader | undefined {
    return this.readerOf.get(element);
  }

  sourceHook(element: number): number | undefined {
    return this.sourceOf.get(element);
  }
}

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

/** The sparse column ∂F/∂p of every parameter (rows are MNA unknowns), built once per call. */
interface Columns {
  start: Int32Array;
  row: Int32Array;
  value: Float64Array;
}

function buildColumns(ctx: Context, params: readonly VariedParameter[]): Columns {
  const start: number[] = [0];
  const row: number[] = [];
  const value: number[] = [];
  const { layout, conditions } = ctx.lin;
  const els = layout.circuit.elements;
  const put = (u: number, v: number): void => {
    if (u < 0 || v === 0) return;
    row.push(u);
    value.push(v);
  };
  for (const p of params) {
    switch (p.kind) {
      case 'resistance': {
        const stamp = layout.resistorStamps.get(p.element);
        if (stamp?.kind === 'conductance' && stamp.g !== 0) {
          const el = els[p.element];
          const a = el.nodes[0] - 1;
          const b = el.nodes[1] - 1;
          // F_a gains g·(Va − Vb); dg/dR = −g².
          const d = -stamp.g * stamp.g * (ctx.v(a) - ctx.v(b));
          put(a, d);
          put(b, -d);
        }
        break;
      }
      case 'source': {
        const k = ctx.sourceHook(p.element);
        if (k !== undefined) {
          const hook = layout.sources[k];
          if (hook.kind === 'V') put(hook.rows[0], -1);
          else {
            put(hook.rows[0], 1);
            put(hook.rows[1], -1);
          }
        }
        break;
      }
      case 'temperature': {
        const dense = new Float64Array(layout.size);
        const h = TEMPERATURE_STEP;
        const at = (t: number) => ({ ...conditions, temperatureC: t, vt: thermalVoltage(t) });
        for (const e of ctx.deviceElements()) {
          const probe = ctx.probe(e)!;
          const L = probe.globals.length;
          const up = new Float64Array(L);
          const down = new Float64Array(L);
          probe.table.prepare(at(conditions.temperatureC + h));
          ctx.residual(probe, probe.table, up);
          probe.table.prepare(at(conditions.temperatureC - h));
          ctx.residual(probe, probe.table, down);
          probe.table.prepare(conditions);
          for (let k = 0; k < L; k++) dense[probe.globals[k]] += (up[k] - down[k]) / (2 * h);
        }
        for (let u = 0; u < dense.length; u++) put(u, dense[u]);
        break;
      }
      case 'model': {
        const probe = ctx.probe(p.element);
        if (probe) {
          const h = parameterStep(probe.element, p.param);
          const L = probe.globals.length;
          const up = ctx.residual(probe, ctx.variedTable(probe, p.param, h), new Float64Array(L));
          const down = ctx.residual(probe, ctx.variedTable(probe, p.param, -h), new Float64Array(L));
          for (let k = 0; k < L; k++) put(probe.globals[k], (up[k] - down[k]) / (2 * h));
        }
        break;
      }
    }
    start.push(row.length);
  }
  return { start: Int32Array.from(start), row: Int32Array.from(row), value: Float64Array.from(value) };
}

/** Value, ∂g/∂x (into `c`) and the explicit ∂g/∂p of one output. */
function linearOutput(ctx: Context, out: OutputFunctional, params: readonly VariedParameter[], c: Float64Array, explicit: Float64Array): number {
  const { layout, conditions } = ctx.lin;
  const els = layout.circuit.elements;
  c.fill(0);
  explicit.fill(0);
  let value = 0;
  for (const term of out.terms) {
    const w = term.weight;
    if (term.kind === 'node') {
      value += w * ctx.v(term.node - 1);
      if (term.node > 0) c[term.node - 1] += w;
      continue;
    }
    if (term.kind === 'element') {
      const r = ctx.reader(term.element);
      if (!r) continue;
      const va = ctx.v(r.a) - ctx.v(r.b);
      switch (r.kind) {
        case 'conductance': {
          value += w * r.g * va;
          if (r.a >= 0) c[r.a] += w * r.g;
          if (r.b >= 0) c[r.b] -= w * r.g;
          params.forEach((p, j) => {
            if (p.kind === 'resistance' && p.element === term.element) explicit[j] += -w * r.g * r.g * va;
          });
          break;
        }
        case 'branch':
          value += w * ctx.lin.x[r.branch];
          c[r.branch] += w;
          break;
        case 'source-current': {
          value += w * ctx.lin.sourceValues[r.hook];
          params.forEach((p, j) => {
            if (p.kind === 'source' && p.element === term.element) explicit[j] += w;
          });
          break;
        }
        case 'vccs':
          value += w * r.gain * (ctx.v(r.cp) - ctx.v(r.cn));
          if (r.cp >= 0) c[r.cp] += w * r.gain;
          if (r.cn >= 0) c[r.cn] -= w * r.gain;
          break;
        case 'cccs':
          value += w * r.gain * ctx.lin.x[r.branch];
          c[r.branch] += w * r.gain;
          break;
        case 'open':
          break;
      }
      continue;
    }
    const probe = ctx.probe(term.element);
    if (!probe) continue;
    value += w * ctx.terminalCurrent(probe, probe.table, term.terminal);
    for (let k = 0; k < probe.globals.length; k++) {
      const x0 = probe.x[k];
      const h = VOLTAGE_STEP;
      probe.x[k] = x0 + h;
      const up = ctx.terminalCurrent(probe, probe.table, term.terminal);
      probe.x[k] = x0 - h;
      const down = ctx.terminalCurrent(probe, probe.table, term.terminal);
      probe.x[k] = x0;
      c[probe.globals[k]] += (w * (up - down)) / (2 * h);
    }
    params.forEach((p, j) => {
      if (p.kind === 'temperature') {
        const at = (t: number) => ({ ...conditions, temperatureC: t, vt: thermalVoltage(t) });
        probe.table.prepare(at(conditions.temperatureC + TEMPERATURE_STEP));
        const up = ctx.terminalCurrent(probe, probe.table, term.terminal);
        probe.table.prepare(at(conditions.temperatureC - TEMPERATURE_STEP));
        const down = ctx.terminalCurrent(probe, probe.table, term.terminal);
        probe.table.prepare(conditions);
        explicit[j] += (w * (up - down)) / (2 * TEMPERATURE_STEP);
      } else if (p.kind === 'model' && p.element === term.element) {
        const h = parameterStep(probe.element, p.param);
        const up = ctx.terminalCurrent(probe, ctx.variedTable(probe, p.param, h), term.terminal);
        const down = ctx.terminalCurrent(probe, ctx.variedTable(probe, p.param, -h), term.terminal);
        explicit[j] += (w * (up - down)) / (2 * h);
      }
    });
  }
  void els;
  return value;
}

/**
 * d(output)/d(parameter) for every output and parameter at the linearised solution: one
 * transposed solve per output (Jᵀ·λ = ∂g/∂x), then dy/dp = ∂g/∂p − λ·∂F/∂p over the sparse
 * columns ∂F/∂p (docs/VARIATION.md). Device equations enter through the devices' own
 * tables, evaluated one instance at a time at the solution.
 */
export function sensitivities(lin: Linearisation, outputs: readonly OutputFunctional[], params: readonly VariedParameter[]): SensitivityResult {
  const ctx = new Context(lin);
  const cols = buildColumns(ctx, params);
  const n = lin.layout.size;
  const c = new Float64Array(n);
  const lambda = new Float64Array(n);
  const explicit = new Float64Array(params.length);
  const value: number[] = [];
  const derivative: Float64Array[] = [];
  for (const out of outputs) {
    const y = linearOutput(ctx, out, params, c, explicit);
    lin.solveTransposed(c, lambda);
    const sign = out.magnitude && y < 0 ? -1 : 1;
    const d = new Float64Array(params.length);
    for (let j = 0; j < params.length; j++) {
      let s = explicit[j];
      for (let q = cols.start[j]; q < cols.start[j + 1]; q++) s -= lambda[cols.row[q]] * cols.value[q];
      d[j] = sign * s;
    }
    value.push(sign * y);
    derivative.push(d);
  }
  return { value, derivative, adjointSolves: outputs.length };
}
