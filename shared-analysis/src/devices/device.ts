// The contract between the solver and the nonlinear device kinds: one descriptor per kind, one table per kind holding every instance in typed arrays.

import { float64Column, uint8Column } from '../columns';
import type { Element } from '../circuit';
import type { DeviceRecord } from '../solve/types';
import type { ParamIssue } from './params';

/** Per-solve conditions every device reads when it prepares its temperature-scaled parameters. */
export interface DeviceConditions {
  /** Analysis temperature, °C. */
  temperatureC: number;
  /** Nominal (model) temperature, °C. */
  tnomC: number;
  /** Thermal voltage kT/q at the analysis temperature, volts. */
  vt: number;
  /** Multiplies BF and BR of every BJT. */
  betaScale: number;
  /** Conductance placed across every junction for robustness, siemens. */
  junctionGmin: number;
}

/**
 * The conditions of one solve. A class whose fields start as fractions, so V8 holds each as a double from the
 * first solve: a field that first held an integer (a beta scale of 1, 27 °C) and later a fraction (a beta
 * corner's 0.5) changed the layout of every such object, and the compiled device code that read one (`prepare`,
 * `resetState`) was given up and compiled again.
 */
export class SolveConditions implements DeviceConditions {
  temperatureC = NaN;
  tnomC = NaN;
  vt = NaN;
  betaScale = NaN;
  junctionGmin = NaN;

  constructor(temperatureC: number, tnomC: number, vt: number, betaScale: number, junctionGmin: number) {
    this.temperatureC = temperatureC;
    this.tnomC = tnomC;
    this.vt = vt;
    this.betaScale = betaScale;
    this.junctionGmin = junctionGmin;
  }
}

/**
 * How the first linearisation of a Newton run is chosen.
 * - `cold`: no usable guess; junctions start at a forward bias taken from the model (BJT
 *   base-emitter and diode at the junction's critical voltage, reverse junctions at 0 V) and MOS
 *   gates at threshold plus a small overdrive.
 * - `temperature`: the guess was solved at another temperature (thermal voltage `vt`,
 *   `temperatureC`); forward junctions start at the voltage that carries the same current at
 *   the new temperature, v₁ = n·VT₁·(v₀/(n·VT₀) + ln(IS(T₀)/IS(T₁))) — the diode law solved
 *   for v at constant current.
 */
export type StartHint = { kind: 'cold' } | { kind: 'temperature'; vt: number; temperatureC: number };

/** A junction forward-biased beyond the range where its exponential law is evaluated. */
export interface OverdrivenJunction {
  /** 'junction', 'base-emitter junction' or 'base-collector junction'. */
  junction: string;
  /** Forward voltage across it, volts (device's own polarity). */
  volts: number;
}

/** No overdriven junction: one shared empty list, since every solve asks every device (no list made per device per solve). */
export const NOT_OVERDRIVEN: readonly OverdrivenJunction[] = Object.freeze([]);

/** What one assembly pass over every table reports back to the Newton loop. Tables only ever set `limited` and append to `nonFinite`. */
export interface LoadTally {
  /** Some junction or terminal voltage was limited (the point is not a true Newton point). */
  limited: boolean;
  /** Element indices of the instances whose stamps were not all finite. */
  nonFinite: number[];
}

/**
 * The instances of one kind as the MNA layout wired them, in ascending element order. With
 * T = `kind.terminalCount`, instance i owns `terminals[i·T … i·T + T − 1]` (MNA unknown indices,
 * −1 for ground) and `positions[i·T² + r·T + c]`, the pattern slot of the matrix entry
 * (row of terminal r, column of terminal c), −1 when either side is ground. The positions are
 * registered once, when the layout is built; a table's `load` only adds to `values[slot]`.
 */
export interface DeviceInstances<E extends Element = Element> {
  count: number;
  elements: E[];
  elementIndex: Int32Array;
  terminals: Int32Array;
  positions: Int32Array;
}

/**
 * A kind's solved quantities at one solution vector, column-wise: `values[q][i]` is quantity
 * `kind.quantities[q]` of instance i, `region[i]` indexes `kind.regions`, and `flags[i]` holds
 * kind-defined bits (a BJT's "no Early effect"). Numbers are in the netlist's polarity, exactly
 * as the record shows them.
 */
export interface DeviceColumns {
  readonly values: Float64Array[];
  readonly region: Uint8Array;
  readonly flags: Uint8Array;
}

/**
 * Every instance of one nonlinear kind: parameters, limiting state and stamp slots in typed
 * arrays, evaluated in one loop. Methods that take `i` address one instance (0 ≤ i < count).
 */
export interface DeviceTable {
  readonly kind: DeviceKind;
  readonly instances: DeviceInstances;
  /** Recomputes temperature- and beta-dependent parameters of every instance. Called once per solve. */
  prepare(conditions: DeviceConditions): void;
  /**
   * Sets the limiting history from a solution vector (start of a solve or of a continuation
   * step). With a `start` hint the first `load` afterwards linearises at a predicted point
   * instead of at `x` (and reports itself limited, so that iteration cannot end the run).
   */
  resetState(x: Float64Array, start?: StartHint): void;
  /** Linearises every instance at `x` (limited against its history when `limit`) and adds the companion stamps to `values` and `rhs`. */
  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean, tally: LoadTally): void;
  /**
   * Every instance's solved quantities at `x` (no limiting), one tight loop; written into `into`
   * (columns an earlier `evaluate` of this table returned) when given, through `columnsFor` (or `columnsOverwritten`
   * for a loop that writes every value, region and flag of every instance).
   */
  evaluate(x: Float64Array, into?: DeviceColumns): DeviceColumns;
  /** Junctions of instance i whose exponential runs beyond the evaluated range at `x` (`NOT_OVERDRIVEN` when none). */
  overdriven(x: Float64Array, i: number): readonly OverdrivenJunction[];
  /**
   * Exact partial derivatives of every instance at `x` (no limiting; the table prepared for
   * `conditions`) with respect to the parameters `params`, for adjoint sensitivities
   * (docs/VARIATION.md): `TEMPERATURE_PARAMETER` or a model or instance parameter name as the
   * netlist writes it (`IS`, `BF`, `VTO`, `KP`, `W`, `L`). Undefined when the kind does not
   * have all of them in closed form (the caller then differences the device numerically).
   */
  sensitivity?(x: Float64Array, conditions: DeviceConditions, params: readonly string[]): DeviceSensitivity | undefined;
}

/** The parameter name `DeviceTable.sensitivity` takes for the analysis temperature (per kelvin). */
export const TEMPERATURE_PARAMETER = 'temperature';

/**
 * What `DeviceTable.sensitivity` gives for every instance, with T = `kind.terminalCount` and
 * N = `kind.nodeCount`; parameter k is `params[k]`, and a derivative with respect to a model
 * parameter is for this instance's value alone (a mismatch draw), per unit as written.
 */
export interface DeviceSensitivity {
  /** ∂(current into table terminal r)/∂(parameter k) at fixed terminal voltages: `residualByParam[k][i·T + r]` (the instance's part of the KCL residual). */
  residualByParam: Float64Array[];
  /** Current into netlist terminal t of instance i, as `kind.terminalCurrent` gives it: `current[i·N + t]`. */
  current: Float64Array;
  /** ∂(that current)/∂(voltage of table terminal c): `currentByVoltage[(i·N + t)·T + c]`. */
  currentByVoltage: Float64Array;
  /** ∂(that current)/∂(parameter k) at fixed terminal voltages: `currentByParam[k][i·N + t]`. */
  currentByParam: Float64Array[];
}

/** Zeroed arrays of a `DeviceSensitivity` for `count` instances of a kind with `terminals` table terminals and `nodes` netlist terminals. */
export function allocateSensitivity(count: number, terminals: number, nodes: number, params: number): DeviceSensitivity {
  const residualByParam: Float64Array[] = [];
  const currentByParam: Float64Array[] = [];
  for (let k = 0; k < params; k++) {
    residualByParam.push(float64Column(count * terminals));
    currentByParam.push(float64Column(count * nodes));
  }
  return { residualByParam, current: float64Column(count * nodes), currentByVoltage: float64Column(count * nodes * terminals), currentByParam };
}

/** Takes the node pairs `DeviceKind.dcPaths` gives, one call per pair (the floating-node check's union-find). */
export interface NodeJoiner {
  union(a: number, b: number): unknown;
}

/**
 * Takes a junction the solver checks for being shorted by a wire-like element (a 0 V source, an inductor, a 0 Ω
 * resistor): `junction` as the message names it ('junction', 'base-emitter junction'), `a` and `b` the netlist node
 * indices of its two ends.
 */
export type JunctionVisitor = (junction: string, a: number, b: number) => void;

/** Takes a number an instance brings into the equations, with the scale it is ordinarily near (for the out-of-range check). */
export type InstanceValueVisitor = (name: string, value: number, typical: number) => void;

/**
 * One nonlinear device kind: what the layout, the structural checks and the records need to
 * know about it. Registered in `devices/registry.ts`; everything kind-specific lives in the
 * kind's own module.
 */
export interface DeviceKind<E extends Element = Element> {
  /** The element letter (`Element['kind']`) this kind solves. */
  readonly letter: E['kind'];
  /** Netlist nodes an instance must have (more may be written; they are ignored at DC). */
  readonly nodeCount: number;
  /** Terminals of every instance in the table: the netlist nodes used, then internal nodes. */
  readonly terminalCount: number;
  /** Names of the solved quantities, in the record's key order (each is a number in the record). */
  readonly quantities: readonly string[];
  /** Region names; `DeviceColumns.region` holds indices into this list. */
  readonly regions: readonly string[];
  /** Internal nodes this instance needs (labels such as 'internal anode'); each becomes an MNA unknown. */
  internalNodes(element: E): string[];
  /**
   * The instance's `terminalCount` MNA unknowns: `node(k)` maps a netlist node index to its
   * unknown (−1 for ground); `internal` holds the unknowns of the labels `internalNodes` gave;
   * `branch(name)` is the branch-current unknown of the element of that name (a V source, an
   * inductor, an E or H), −1 when it has none — for kinds controlled by a current (W).
   */
  terminals(element: E, node: (netlistNode: number) => number, internal: readonly number[], branch?: (elementName: string) => number): number[];
  /**
   * Gives `to` the netlist node pairs the instance connects at DC (a junction's robustness conductance counts), for the
   * floating-node check. Handed over one by one, not as a list: the check asks every device, and lists made for it
   * were megabytes of garbage at 100k elements.
   */
  dcPaths(element: E, to: NodeJoiner): void;
  /** Gives `visit` each junction that a short across it would keep from ever conducting (one by one, as `dcPaths`). */
  checkedJunctions(element: E, visit: JunctionVisitor): void;
  /** Gives `visit` the instance's own numbers for the out-of-range check (area or geometry, multiplier); its model's parameters are checked anyway. */
  instanceValues(element: E, visit: InstanceValueVisitor): void;
  /** Why the instance does not give its nodes a DC path, for the floating-node message (e.g. 'its gate and bulk draw no DC current'). */
  readonly floatingNote?: string;
  /** Builds the table of every instance; unusable parameters are replaced and reported in `issues`. */
  createTable(instances: DeviceInstances<E>, issues: ParamIssue[]): DeviceTable;
  /**
   * The record of instance i at a solution (the edge form: JSON, hover, messages). Every number in it is one of the
   * instance's column values, or a constant: the solver clamps a record only when a column is out of range.
   */
  record(columns: DeviceColumns, instances: DeviceInstances<E>, i: number): DeviceRecord;
  /** Current into netlist terminal t of instance i (the record's sign convention), 0 for a terminal that carries none. */
  terminalCurrent(columns: DeviceColumns, i: number, t: number): number;
}

/** Widens a kind descriptor for the registry (each kind is typed with its own element). */
export function deviceKind<E extends Element>(kind: DeviceKind<E>): DeviceKind {
  return kind as unknown as DeviceKind;
}

/**
 * The columns an `evaluate` writes: `into` cleared to zeros when it has this shape (so a kind that
 * writes only some regions or flags sees what a fresh allocation gives), else new ones.
 */
export function columnsFor(into: DeviceColumns | undefined, quantities: number, count: number): DeviceColumns {
  const out = columnsOverwritten(into, quantities, count);
  if (out !== into) return out;
  for (const v of out.values) v.fill(0);
  out.region.fill(0);
  out.flags.fill(0);
  return out;
}

/**
 * `columnsFor` for a kind whose `evaluate` writes every value, region and flag of every instance itself: `into`, not
 * cleared, when it has this shape, else new ones. Clearing what the loop then overwrites was a pass over every column
 * (eleven of 50,000 numbers a BJT point at 100,000 elements) at every corner.
 */
export function columnsOverwritten(into: DeviceColumns | undefined, quantities: number, count: number): DeviceColumns {
  if (!into || into.values.length !== quantities || into.region.length !== count) return allocateColumns(quantities, count);
  return into;
}

/**
 * Allocates the columns of `count` instances for `quantities` numbers each. A class, not an object literal: V8
 * builds a literal's template at its second run and forgets then what type each field holds, which gave up the
 * code compiled after the nominal solve that read the columns (records, regions) at the first corner.
 */
export function allocateColumns(quantities: number, count: number): DeviceColumns {
  return new AllocatedColumns(quantities, count);
}

class AllocatedColumns implements DeviceColumns {
  readonly values: Float64Array[] = [];
  readonly region: Uint8Array;
  readonly flags: Uint8Array;

  constructor(quantities: number, count: number) {
    for (let q = 0; q < quantities; q++) this.values.push(float64Column(count));
    this.region = uint8Column(count);
    this.flags = uint8Column(count);
  }
}
