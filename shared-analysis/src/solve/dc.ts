// The DC operating-point solver: prepares the MNA system once per circuit and solves it per call, with fallbacks and located findings.

import { float64Column, int32Column, uint8Column } from '../columns';
import { BehaviouralTable } from '../devices/behavioural';
import type { Circuit, Element } from '../circuit';
import type { DeviceColumns, DeviceConditions, DeviceKind, DeviceTable, StartHint } from '../devices/device';
import { SolveConditions } from '../devices/device';
import type { ParamIssue } from '../devices/params';
import { thermalVoltage, UNBOUNDED } from '../devices/physics';
import { deviceKindOf } from '../devices/registry';
import type { Finding, RelatedLocation, Severity, Span } from '../types';
import { formatEng, listNames } from './format';
import type { LinearSolver, SparseEntries } from './linear';
import { createLinearSolver } from './linear';
import { MnaLayout, type LinearReader, type UnknownInfo } from './mna';
import type { NewtonOutcome } from './newton';
import { JUNCTION_GMIN, NewtonEngine, TOLERANCES } from './newton';
import { DIAGNOSE_MAX_UNKNOWNS, undeterminedByShift, undeterminedUnknowns } from './diagnose';
import type { FloatingGroup, ResistanceOf, VoltageLoop } from './topology';
import { findFloatingGroups, findVoltageLoops } from './topology';
import type { Fallback, OperatingPoint, SolveOptions } from './types';
import { pushAll } from '../arrays';
import { lazyPoint, pointVectors } from './point';
import { RECORD_LIMIT, SolvedValues, SolvedVectors, type Clamped, type RecordShapes } from './solved-point';
import { nameTable } from '../names';

export { bjtRegion, evaluateBjt } from '../devices/bjt';
export { evaluateMos } from '../devices/mosfet';
export { diodeJunction } from '../devices/diode';
export { thermalVoltage, saturationCurrentAt } from '../devices/physics';
export { TOLERANCES, JUNCTION_GMIN } from './newton';

/**
 * The exact Jacobian of a converged nominal solution, factored: what adjoint sensitivities
 * need (docs/VARIATION.md). `solveTransposed(c, out)` solves Jᵀ·λ = c on these factors; it is
 * valid until the solver's next `solve` or `linearise`.
 */
export interface Linearisation {
  layout: MnaLayout;
  conditions: DeviceConditions;
  /** The solution the Jacobian was assembled at. */
  x: Float64Array;
  /** DC values of the independent sources, aligned with `layout.sources`. */
  sourceValues: Float64Array;
  /** A conductance-stamped resistor's conductance at this solution (its temperature coefficients applied), siemens. */
  conductanceOf(element: number): number | undefined;
  /** d ln(conductance)/dT of a resistor with temperature coefficients at this solution, per kelvin (0 for the others). */
  conductanceSlopeOf(element: number): number;
  solveTransposed(c: Float64Array, out: Float64Array): Float64Array;
  /** The same for a sparse c: the non-zero entries of λ go to `out`. */
  solveTransposedSparse(cIndex: ArrayLike<number>, cValue: ArrayLike<number>, out: SparseEntries): void;
}

/** One solve's answer: the operating point, what went wrong (located), effort spent, and the raw solution for warm starts. */
export interface DcSolveResult {
  op: OperatingPoint;
  findings: Finding[];
  stats: { iterations: number; factorizations: number; ms: number };
  /** raw solution vector for warm starts */
  x: Float64Array;
}

/** Default Newton iteration cap per attempt. */
const DEFAULT_MAX_ITERATIONS = 150;
/** Newton iterations allowed per continuation step (gmin or source stepping). */
const STEP_ITERATIONS = 60;
/** All fallbacks together may spend at most this many times the per-attempt cap, so a hopeless circuit returns promptly. */
const FALLBACK_BUDGET_FACTOR = 8;
/** Node voltages beyond this are reported as implausible (a current forced into an open or leakage-only node). */
const IMPLAUSIBLE_VOLTS = 1e6;
/** Netlist-check codes (elaborator and connectivity checks) that report the same problem as a solver code. */
const LAYOUT_NETLIST_CODES: Record<string, string[]> = nameTable({
  'dc-zero-resistance': ['resistor-zero-value'],
  'dc-negative-resistance': ['resistor-negative-value'],
  'dc-unknown-control': ['controlled-source-control-missing'],
  'dc-bad-node': ['element-node-count'],
  'dc-value-unusable': ['element-value-invalid', 'element-value-missing'],
});

/**
 * Conductance from each node of a group with no DC path to ground to ground (1 pS, i.e. 1 TΩ),
 * so the rest of the circuit still solves. It equals the robustness conductance every junction
 * already carries (JUNCTION_GMIN), so it is no larger than the leakage the device models assume;
 * 1 TΩ is far above any resistor a designer places, and a tied node draws at most 1 pA per volt
 * from the circuit. With the solver's power-of-two equilibration a 1e-12 diagonal next to
 * millisiemens entries is well inside double precision (ratio 1e9 against 1/ε ≈ 4.5e15).
 */
export const TIE_CONDUCTANCE = 1e-12;

/** The circuit's structure for one set of resistor values: floating groups (tied) and voltage-defining loops (unsolvable). */
interface Structure {
  floating: FloatingGroup[];
  loops: VoltageLoop[];
  findings: Finding[];
  /** Node indices tied to ground, ascending. */
  tied: number[];
}

/** Per-solve resistor values after checking the overrides. */
interface ResistancePlan {
  /** Element -> new conductance for conductance-stamped resistors. */
  conductance: Map<number, number>;
  /** Element -> ohms for resistors written as 0 Ω (solved as branches). */
  branchOhms: Map<number, number>;
  /** True when a resistor changes between open, short and finite, so the structural checks must be redone. */
  changesStructure: boolean;
}

/** Parameters more than this many decades from 1 (IS and KP relative to their defaults) are reported as out of range. */
const OUT_OF_RANGE_DECADES = 150;
/**
 * Quantity name -> position in a kind's columns, as an ordinary object with the kind's quantities as
 * its own properties in their order: a measurement reads it with a name fixed in its code, which the
 * compiler turns into a field load where a `Map` is a hash look-up at every read. The names are the
 * kind's own (never a netlist's), and a name it lacks reads as something other than a number.
 */
function quantityPositions(kind: DeviceKind): Record<string, number> {
  const positions: Record<string, number> = {};
  kind.quantities.forEach((q, i) => {
    positions[q] = i;
  });
  return positions;
}

/** Whether every entry of `v` is a finite number (a loop: `every` with a callback cost a call per unknown at every corner). */
/**
 * Whether a linear element's one judged value (resistance, DC value, gain) is beyond OUT_OF_RANGE_DECADES
 * of 1, as `valuesOf` judges it; undefined for an element that is not of those kinds.
 */
function linearValueFar(el: Element): boolean | undefined {
  const value = el.kind === 'R' ? el.resistance : el.kind === 'V' || el.kind === 'I' ? el.dc : el.kind === 'E' || el.kind === 'G' || el.kind === 'F' || el.kind === 'H' ? el.gain : undefined;
  if (value === undefined) return el.kind === 'C' || el.kind === 'L' ? false : undefined;
  return value !== 0 && Number.isFinite(value) && Math.abs(Math.log10(Math.abs(value))) > OUT_OF_RANGE_DECADES;
}

function allFinite(v: Float64Array): boolean {
  for (let k = 0; k < v.length; k++) if (!Number.isFinite(v[k])) return false;
  return true;
}

/** The vectors a `reuseResult` solve writes its result into, made at the first such solve. */
interface ReusedVectors {
  x?: Float64Array;
  volts?: Float64Array;
  tv?: Float64Array;
  ti?: Float64Array;
  columns?: DeviceColumns[];
}

/** The temperature each returned solution vector was solved at, so a warm start from it can predict junction voltages. */
const solvedAt = new WeakMap<Float64Array, number>();

const now: () => number = (() => {
  const perf = (globalThis as { performance?: { now(): number } }).performance;
  return perf ? () => perf.now() : () => Date.now();
})();

/**
 * A circuit prepared for repeated DC solves. The constructor builds the unknown
 * numbering, the sparsity pattern, the linear stamps, the structural checks and the
 * linear solver's symbolic analysis; each `solve` only re-stamps values and factors.
 */
export class DcSolver {
  private readonly layout: MnaLayout;
  private readonly solver: LinearSolver | undefined;
  private readonly engine: NewtonEngine;
  /** Findings that do not depend on the solve options (element and parameter problems, structure). */
  private readonly staticFindings: Finding[] = [];
  private structure: Structure;
  /** How many junction-short and out-of-range findings the static checks made (`staticChecks` after a value edit looks again only where one could appear). */
  private staticCounts = { shorted: 0, outOfRange: 0 };
  private readonly sourceIndexByName = new Map<string, number>();
  /** Element index by lower-case name (the first element of a name written twice), built at the first override. */
  private elementsByName: Map<string, number> | undefined;
  /** Conductance overrides of the solve in progress (element -> siemens), read when records are built. */
  private conductanceOverride = new Map<number, number>();
  /** Resistors with a temperature coefficient, scaled at every solve. */
  private readonly tcResistors: number[] = [];
  /** Circuit element -> where its record comes from: reader k (k ≥ 0), device-order entry d (−2 − d), or none (−1). */
  private readonly elementSlot: Int32Array;
  /** The device tables as the netlist gives them; a solve with `deviceParameters` swaps rebuilt ones in for its duration. */
  private readonly nominalTables: DeviceTable[];
  private tablesVaried = false;
  /** Element index -> position in `layout.deviceOrder` (built on first use). */
  private deviceIndex: Map<number, number> | undefined;
  /**
   * What every point of this solver reads its records by: per table, quantity name -> column (what a measurement's
   * `value` reads at every corner, resolved without a look-up per kind), and the record types of elements and tables,
   * filled on first ask since they depend on the layout only (a measurement asks the type of every device at every
   * corner, and building a record, or reading the element, for it cost more than the rest of the reading at 100,000 elements).
   */
  private readonly shapes: RecordShapes;
  /** The Newton iterate of every solve (copied into the result). */
  private readonly iterate: Float64Array;
  /** The vectors of the last result solved with `reuseResult`, overwritten by the next such solve. */
  private reused: ReusedVectors | undefined;

  constructor(private circuit: Circuit) {
    this.layout = new MnaLayout(circuit);
    this.nominalTables = [...this.layout.tables];
    this.shapes = {
      quantityColumns: this.layout.tables.map((t) => quantityPositions(t.kind)),
      recordTypes: new Array<undefined>(circuit.elements.length).fill(undefined),
      tableRecordTypes: [],
      typesFilled: false,
    };
    this.iterate = float64Column(this.layout.size);
    this.solver = this.layout.size > 0 ? createLinearSolver(this.layout.pattern) : undefined;
    this.engine = new NewtonEngine(this.layout, this.solver ?? { factor: () => ({ ok: true }), solve: (b) => b, solveTranspose: (b) => b });
    this.layout.sources.forEach((s, i) => this.sourceIndexByName.set(circuit.elements[s.element].name.toLowerCase(), i));
    circuit.elements.forEach((el, i) => {
      if (el.kind === 'R' && (el.tc1 || el.tc2)) this.tcResistors.push(i);
    });
    this.elementSlot = int32Column(circuit.elements.length).fill(-1);
    this.layout.readers.forEach((r, k) => (this.elementSlot[r.element] = k));
    for (let d = 0; d < this.layout.deviceOrder.element.length; d++) this.elementSlot[this.layout.deviceOrder.element[d]] = -2 - d;
    this.structure = this.staticChecks();
  }

  /**
   * The findings that do not depend on the solve options, into `staticFindings`, and the structural checks under the netlist values.
   * After a value edit (`adoptValues`: resistors finite and positive before and after, everything else the same) the floating
   * groups and voltage loops are `kept`'s (every resistor still conducts and none fixes a voltage), and so are the shorts across
   * junctions (a short needs a 0 Ω resistor); their findings are made again, since they locate elements whose text may have moved.
   * Values out of range are looked for among the `changed` elements only when no other element had one.
   */
  private staticChecks(kept?: { structure: Structure; changed: readonly number[] }): Structure {
    this.staticFindings.length = 0;
    for (const issue of this.layout.layoutIssues) {
      const sev: Severity = issue.code === 'dc-zero-resistance' ? 'info' : issue.code === 'dc-negative-resistance' ? 'warning' : 'error';
      const f = this.elementFinding(issue.code, sev, issue.message, issue.element);
      const same = LAYOUT_NETLIST_CODES[issue.code];
      if (same) f.data = { ...(f.data ?? {}), netlistCodes: same };
      this.staticFindings.push(f);
    }
    for (const issue of this.layout.paramIssues) this.staticFindings.push(this.paramFinding(issue));
    const structure = kept ? this.structureFindings(kept.structure.floating, kept.structure.loops) : this.analyseStructure(undefined);
    const shorted = kept && this.staticCounts.shorted === 0 ? [] : this.shortedJunctionFindings();
    const outOfRange = kept && this.staticCounts.outOfRange === 0 ? this.outOfRangeFindings(kept.changed) : this.outOfRangeFindings();
    this.staticCounts = { shorted: shorted.length, outOfRange: outOfRange.length };
    pushAll(this.staticFindings, shorted);
    pushAll(this.staticFindings, outOfRange);
    return structure;
  }

  /**
   * Prepares this solver for `circuit`, an edited copy of its circuit that differs only in the values of the
   * resistors `changed` (same nodes, elements, kinds, models and unknowns; each resistor finite and positive
   * before and after): the stamps of those resistors move, the matrix pattern, the device tables and the
   * linear solver's symbolic analysis stay, and the findings that locate elements are made again from
   * `circuit` (whose text offsets an edit may have moved). False, with nothing changed, when the edit is
   * not of that form; the caller then builds a new solver.
   */
  adoptValues(circuit: Circuit, changed: readonly number[]): boolean {
    if (circuit.elements.length !== this.circuit.elements.length || circuit.nodes.length !== this.circuit.nodes.length) return false;
    if (!this.layout.adoptResistances(circuit, changed)) return false;
    this.circuit = circuit;
    this.structure = this.staticChecks({ structure: this.structure, changed });
    return true;
  }

  /** The index of the element called `name`, in any case. */
  private elementNamed(name: string): number | undefined {
    if (!this.elementsByName) {
      const table = (this.elementsByName = new Map<string, number>());
      this.circuit.elements.forEach((el, i) => {
        const key = el.name.toLowerCase();
        if (!table.has(key)) table.set(key, i);
      });
    }
    return this.elementsByName.get(name.toLowerCase());
  }

  /** Floating groups and voltage loops under the given resistor values, with their findings. */
  private analyseStructure(resistanceOf: ResistanceOf | undefined): Structure {
    return this.structureFindings(findFloatingGroups(this.circuit, this.layout.skipped, resistanceOf), findVoltageLoops(this.circuit, this.layout.skipped, resistanceOf));
  }

  /** The findings of given floating groups and voltage loops. */
  private structureFindings(floating: FloatingGroup[], loops: VoltageLoop[]): Structure {
    const findings: Finding[] = [];
    // With a source loop nothing is solved, so no node is tied and the floating findings keep saying so.
    const solvable = loops.length === 0;
    for (const g of floating) findings.push(this.floatingFinding(g.nodes, g.elements, solvable));
    for (const l of loops) findings.push(this.loopFinding(l.elements));
    const tied = solvable ? floating.flatMap((g) => g.nodes).sort((a, b) => a - b) : [];
    return { floating, loops, findings, tied };
  }

  /** What each MNA unknown stands for (a node, a device's internal node, a branch current), in the order of `DcSolveResult.x`. */
  get unknowns(): readonly UnknownInfo[] {
    return this.layout.unknowns;
  }

  /** Number of MNA unknowns (length of `DcSolveResult.x`). */
  get unknownCount(): number {
    return this.layout.size;
  }

  /**
   * Solves the DC operating point under `options`; never returns a non-finite number, and throws
   * only `SolveStopped`, when `options.shouldStop` asks it to before a Newton iteration.
   */
  solve(options: SolveOptions = {}): DcSolveResult {
    this.engine.shouldStop = options.shouldStop;
    try {
      return this.solveChecked(options);
    } finally {
      this.engine.shouldStop = undefined;
    }
  }

  private solveChecked(options: SolveOptions): DcSolveResult {
    const t0 = now();
    const findings: Finding[] = options.pointOnly === true ? [] : [...this.staticFindings];
    const n = this.layout.size;
    const temperatureC = this.pickTemperature(options, findings);
    const plan = this.resolveResistances(options.resistances, findings);
    this.applyTemperatureCoefficients(plan, temperatureC, findings);
    const structure = plan.changesStructure ? this.analyseStructure(this.resistanceLookup(plan)) : this.structure;
    if (options.pointOnly !== true) pushAll(findings, structure.findings);
    this.loadLinearValues(structure, plan);
    const betaScale = this.pickBetaScale(options, findings);
    const conditions = this.conditionsAt(temperatureC, betaScale);
    this.applyDeviceParameters(options.deviceParameters);
    this.engine.prepare(conditions);
    this.applySourceValues(options.sourceValues, findings);
    const cap = options.maxIterations;
    const maxIterations = cap !== undefined && Number.isFinite(cap) ? Math.max(1, Math.min(100000, Math.floor(cap))) : DEFAULT_MAX_ITERATIONS;
    const factorizationsBefore = this.engine.factorizations;

    // The Newton iterate lives in the solver's own vector: the result gets a copy.
    const x = this.iterate;
    const guess = options.initialGuess;
    let startHint: StartHint | undefined = { kind: 'cold' };
    // Where the fallbacks start again from: the guess when it is usable, else zeros.
    let start: Float64Array | undefined;
    if (guess && guess.length === n && allFinite(guess)) {
      start = guess;
      const from = options.initialGuessTemperatureC ?? solvedAt.get(guess);
      startHint =
        from !== undefined && Number.isFinite(from) && from > -273.15 && from !== temperatureC
          ? { kind: 'temperature', temperatureC: from, vt: thermalVoltage(from) }
          : undefined;
    }
    const restart = (): void => {
      if (start) x.set(start);
      else x.fill(0);
    };
    restart();
    this.engine.lastFinite.set(x);

    const fallbacks: Fallback[] = [];
    let firstPoint: Float64Array | undefined;
    let iterations = 0;
    let converged = false;
    let last: NewtonOutcome | undefined;

    if (structure.loops.length === 0 && n > 0) {
      last = this.engine.run(x, { sourceScale: 1, nodeShunt: 0, maxIterations, start: startHint });
      iterations += last.iterations;
      converged = last.status === 'converged';
      // Where the sources are at full value: a behavioural function that fails there is named at this point.
      if (!converged) firstPoint = Float64Array.from(x);
      if (!converged && options.fallbacks !== false) {
        // A singular linearisation may be numerical (one bad iterate); node shunts can step past it.
        // If the circuit itself is singular, the last step without shunts fails the same way.
        const singularFirst = last.status === 'singular';
        fallbacks.push('gmin-stepping');
        restart();
        const budget = { remaining: FALLBACK_BUDGET_FACTOR * maxIterations };
        const g = this.gminStepping(x, maxIterations, budget);
        iterations += g.iterations;
        converged = g.ok;
        last = g.last ?? last;
        if (!converged && !singularFirst && last.status !== 'singular') {
          fallbacks.push('source-stepping');
          x.fill(0);
          const s = this.sourceStepping(x, maxIterations, budget);
          iterations += s.iterations;
          converged = s.ok;
          last = s.last ?? last;
        }
      }
      if (!converged) x.set(this.engine.lastFinite);
    } else if (n === 0) {
      converged = true;
    }

    if (options.pointOnly !== true) {
      if (last && !converged) pushAll(findings, this.failureFindings(last, fallbacks, iterations));
      pushAll(findings, this.behaviourFindings(converged || !firstPoint ? x : firstPoint));
    }
    const reuse = options.reuseResult === true ? (this.reused ??= {}) : undefined;
    const op = this.buildOperatingPoint(x, { converged, temperatureC, iterations, fallbacks }, findings, reuse, options.pointOnly === true);
    if (converged && structure.tied.length > 0) op.tiedNodes = structure.tied.map((k) => this.circuit.nodes[k]);
    if (converged && options.pointOnly !== true) pushAll(findings, this.postSolveFindings(x, op, structure));
    const out = reuse ? (reuse.x ??= float64Column(n)) : float64Column(n);
    // A function of its own: compiled while this loop ran, the code after it had never run and gave up the compiled code at every corner solve.
    copyFinite(out, x, n);
    if (converged) solvedAt.set(out, temperatureC);
    return {
      op,
      findings,
      stats: { iterations, factorizations: this.engine.factorizations - factorizationsBefore, ms: now() - t0 },
      x: out,
    };
  }

  /**
   * Assembles and factors the exact Jacobian at a converged solution of this solver, under the
   * nominal netlist values (no overrides) at the solution's temperature: the basis of adjoint
   * sensitivities. Undefined when the result did not converge or the Jacobian is singular.
   */
  linearise(result: DcSolveResult): Linearisation | undefined {
    const n = this.layout.size;
    if (!result.op.converged || result.x.length !== n || n === 0) return undefined;
    const scratch: Finding[] = [];
    const temperatureC = result.op.temperatureC;
    const plan = this.resolveResistances(undefined, scratch);
    this.applyTemperatureCoefficients(plan, temperatureC, scratch);
    this.loadLinearValues(this.structure, plan);
    this.applyDeviceParameters(undefined);
    const conditions = this.conditionsAt(temperatureC, 1);
    this.engine.prepare(conditions);
    this.applySourceValues(undefined, scratch);
    if (!this.engine.factorAt(result.x)) return undefined;
    const engine = this.engine;
    return {
      layout: this.layout,
      conditions,
      x: result.x,
      sourceValues: Float64Array.from(engine.sourceValues),
      conductanceOf: (i) => {
        const g = this.layout.resistorStamps.conductance(i);
        return g === undefined ? undefined : (plan.conductance.get(i) ?? g);
      },
      conductanceSlopeOf: (i) => {
        const el = this.circuit.elements[i];
        if (el?.kind !== 'R' || !plan.conductance.has(i) || !(el.tc1 || el.tc2)) return 0;
        // g = 1/(R·f) with f = 1 + TC1·ΔT + TC2·ΔT², so d ln g/dT = −(TC1 + 2·TC2·ΔT)/f.
        const dt = temperatureC - (Number.isFinite(this.circuit.tnomC) ? this.circuit.tnomC : 27);
        const f = resistorTemperatureFactor(el.tc1 ?? 0, el.tc2 ?? 0, dt);
        return f > 0 && Number.isFinite(f) ? -((el.tc1 ?? 0) + 2 * (el.tc2 ?? 0) * dt) / f : 0;
      },
      solveTransposed: (c, out) => engine.solveTransposed(c, out),
      solveTransposedSparse: (i, v, out) => engine.solveTransposedSparse(i, v, out),
    };
  }

  /** Rebuilds the tables of the kinds whose instances get model-parameter overrides (elements copied, models copied), or restores the nominal tables. */
  private applyDeviceParameters(overrides: Record<string, Record<string, number>> | undefined): void {
    const tables = this.layout.tables;
    const names = overrides ? Object.keys(overrides) : [];
    if (names.length === 0) {
      if (this.tablesVaried) this.nominalTables.forEach((t, k) => (tables[k] = t));
      this.tablesVaried = false;
      return;
    }
    const order = this.layout.deviceOrder;
    if (!this.deviceIndex) {
      this.deviceIndex = new Map();
      for (let d = 0; d < order.element.length; d++) this.deviceIndex.set(order.element[d], d);
    }
    const byTable = new Map<number, Map<number, Record<string, number>>>();
    for (const name of names) {
      const e = this.elementNamed(name);
      const d = e === undefined ? undefined : this.deviceIndex.get(e);
      if (d === undefined) continue;
      let rows = byTable.get(order.table[d]);
      if (!rows) byTable.set(order.table[d], (rows = new Map()));
      rows.set(order.instance[d], overrides![name]);
    }
    this.nominalTables.forEach((nominal, k) => {
      const rows = byTable.get(k);
      if (!rows) {
        tables[k] = nominal;
        return;
      }
      const inst = nominal.instances;
      const elements = inst.elements.map((el, r) => {
        const p = rows.get(r);
        return p && 'model' in el ? { ...el, model: { ...el.model, params: { ...el.model.params, ...p } } } : el;
      });
      tables[k] = nominal.kind.createTable({ ...inst, elements }, []);
    });
    this.tablesVaried = true;
  }

  // ---- continuation methods ----

  /** Shunts every node to ground with a conductance stepped down from 10 mS to zero, re-solving from the last success. */
  private gminStepping(x: Float64Array, maxIterations: number, budget: { remaining: number }): { ok: boolean; iterations: number; last?: NewtonOutcome } {
    const cap = Math.min(maxIterations, STEP_ITERATIONS);
    let iterations = 0;
    let shunt = 1e-2;
    let factor = 10;
    const good = float64Column(x.length);
    let haveGood = false;
    let goodShunt = 0;
    let last: NewtonOutcome | undefined;
    for (let step = 0; step < 120 && budget.remaining > 0; step++) {
      const r = this.engine.run(x, { sourceScale: 1, nodeShunt: shunt, maxIterations: Math.min(cap, budget.remaining) });
      iterations += r.iterations;
      budget.remaining -= r.iterations;
      last = r;
      if (r.status === 'singular') return { ok: false, iterations, last };
      if (r.status === 'converged') {
        if (shunt === 0) return { ok: true, iterations, last };
        good.set(x);
        haveGood = true;
        goodShunt = shunt;
        shunt = shunt / factor;
        if (shunt < JUNCTION_GMIN) shunt = 0;
        factor = Math.min(factor * 2, 10);
      } else {
        if (!haveGood) {
          // Even the heaviest shunt failed: start heavier.
          if (shunt >= 1) return { ok: false, iterations, last };
          shunt *= 10;
          x.fill(0);
          continue;
        }
        factor = Math.sqrt(factor);
        if (factor < 1.01) return { ok: false, iterations, last };
        x.set(good);
        shunt = goodShunt / factor;
      }
    }
    return { ok: false, iterations, last };
  }

  /** Ramps every independent source from zero to its full value, shortening the step when Newton fails. */
  private sourceStepping(x: Float64Array, maxIterations: number, budget: { remaining: number }): { ok: boolean; iterations: number; last?: NewtonOutcome } {
    const cap = Math.min(maxIterations, STEP_ITERATIONS);
    let iterations = 0;
    let scale = 0;
    let step = 0.1;
    const good = float64Column(x.length);
    let last: NewtonOutcome | undefined;
    for (let k = 0; k < 400 && budget.remaining > 0; k++) {
      const target = Math.min(1, scale + step);
      const r = this.engine.run(x, { sourceScale: target, nodeShunt: 0, maxIterations: Math.min(cap, budget.remaining) });
      iterations += r.iterations;
      budget.remaining -= r.iterations;
      last = r;
      if (r.status === 'singular') return { ok: false, iterations, last };
      if (r.status === 'converged') {
        if (target === 1) return { ok: true, iterations, last };
        scale = target;
        good.set(x);
        step = Math.min(step * 1.5, 0.5);
      } else {
        step /= 4;
        if (step < 1e-7) return { ok: false, iterations, last };
        x.set(good);
      }
    }
    return { ok: false, iterations, last };
  }

  // ---- options ----

  /** Checks the resistance overrides; refused ones get a located finding and keep the netlist value. */
  private resolveResistances(overrides: Record<string, number> | undefined, findings: Finding[]): ResistancePlan {
    const plan: ResistancePlan = { conductance: new Map(), branchOhms: new Map(), changesStructure: false };
    this.conductanceOverride = plan.conductance;
    if (!overrides) return plan;

    const c = this.circuit;
    for (const [name, ohms] of Object.entries(overrides)) {
      const i = this.elementNamed(name);
      const refuse = (why: string, at: number): void => {
        const f = this.elementFinding('dc-override-refused', 'warning', `The resistance override ${name} = ${String(ohms)} Ω was not applied: ${why}`, at);
        f.data = { element: name, requested: Number.isFinite(ohms) ? ohms : String(ohms) };
        findings.push(f);
      };
      if (i === undefined) {
        refuse(`the circuit has no element named ${name}.`, 0);
        continue;
      }
      const el = c.elements[i];
      // Read off the stamp columns: the stamp's record (`get`) is an object made per call, and sizing asks here for every trial.
      const stamps = this.layout.resistorStamps;
      const g = stamps.conductance(i);
      if (el.kind !== 'R') refuse(`${el.name} is not a resistor.`, i);
      else if (!stamps.has(i)) refuse(`the netlist value of ${el.name} is unusable, so the solver leaves it out as an open circuit.`, i);
      else if (typeof ohms !== 'number' || !Number.isFinite(ohms)) refuse(`the value is not a finite number; the netlist value ${formatEng(el.resistance, 'Ω')} was used.`, i);
      else if (g !== undefined && ohms === 0)
        refuse(
          `${el.name} is written as ${formatEng(el.resistance, 'Ω')}, and a 0 Ω short needs a current unknown the prepared equations lack; write 0 in the netlist, or use a small value such as 1 mΩ.`,
          i,
        );
      else if (g !== undefined) {
        if (g === 0) plan.changesStructure = true; // an open resistor now conducts
        plan.conductance.set(i, 1 / ohms);
      } else if (ohms !== 0) {
        plan.branchOhms.set(i, ohms);
        plan.changesStructure = true; // a short that no longer fixes a voltage
      }
    }
    return plan;
  }

  /**
   * Scales every resistor with TC1/TC2 to the solve's temperature (docs/DEVICE-MODELS.md):
   * R(T) = R·(1 + TC1·ΔT + TC2·ΔT²), on top of any override. A factor that is not positive keeps
   * the value at Tnom, with a finding.
   */
  private applyTemperatureCoefficients(plan: ResistancePlan, temperatureC: number, findings: Finding[]): void {
    if (this.tcResistors.length === 0) return;
    const tnom = Number.isFinite(this.circuit.tnomC) ? this.circuit.tnomC : 27;
    const dt = temperatureC - tnom;
    for (const i of this.tcResistors) {
      const el = this.circuit.elements[i];
      const stamp = this.layout.resistorStamps.get(i);
      if (el.kind !== 'R' || !stamp) continue;
      const f = resistorTemperatureFactor(el.tc1 ?? 0, el.tc2 ?? 0, dt);
      if (!(f > 0) || !Number.isFinite(f)) {
        findings.push(
          this.elementFinding(
            'dc-value-unusable',
            'warning',
            `At ${formatEng(temperatureC, '°C')} the temperature coefficients of ${el.name} (TC1 = ${String(el.tc1 ?? 0)}, TC2 = ${String(el.tc2 ?? 0)}) ${Number.isNaN(f) ? 'give no number for its resistance' : Number.isFinite(f) ? `multiply its resistance by ${String(Number(f.toPrecision(3)))}, which is not a resistance` : 'make its resistance too large for a number'}; its value at the nominal temperature was used.`,
            i,
          ),
        );
        continue;
      }
      if (f === 1) continue;
      if (stamp.kind === 'conductance') plan.conductance.set(i, (plan.conductance.get(i) ?? stamp.g) / f);
      else {
        const ohms = plan.branchOhms.get(i);
        if (ohms !== undefined) plan.branchOhms.set(i, ohms * f);
      }
    }
  }

  /** The resistor values a plan implies, for the structural checks. */
  private resistanceLookup(plan: ResistancePlan): ResistanceOf {
    return (i) => {
      const g = plan.conductance.get(i);
      if (g !== undefined) return 1 / g;
      return plan.branchOhms.get(i);
    };
  }

  /** Writes this solve's linear stamps: the prepared values, the ties of floating nodes and the resistance overrides. */
  private loadLinearValues(structure: Structure, plan: ResistancePlan): void {
    const values = this.engine.linearValues;
    values.set(this.layout.linearValues);
    for (const node of structure.tied) values[this.layout.nodeDiagonals[node - 1]] += TIE_CONDUCTANCE;
    const stamps = this.layout.resistorStamps;
    for (const [i, g] of plan.conductance) if (stamps.conductance(i) !== undefined) stamps.addDifference(i, g, values);
    // The branch row of a 0 Ω resistor reads V(a) − V(b) = 0; with R it reads V(a) − V(b) − R·I = 0.
    for (const [i, ohms] of plan.branchOhms) {
      const diagonal = stamps.shortDiagonal(i);
      if (diagonal >= 0) values[diagonal] -= ohms;
    }
  }

  private pickTemperature(options: SolveOptions, findings: Finding[]): number {
    const t = options.temperatureC ?? this.circuit.temperatureC;
    if (Number.isFinite(t) && t > -273.15) return t;
    const fallback = Number.isFinite(this.circuit.temperatureC) && this.circuit.temperatureC > -273.15 ? this.circuit.temperatureC : 27;
    const el = this.circuit.elements[0];
    findings.push({
      code: 'dc-temperature-unusable',
      severity: 'error',
      message: `The analysis temperature ${String(t)} °C is not above absolute zero; the operating point was solved at ${formatEng(fallback, '°C')} instead.`,
      uri: el?.origin.uri ?? '',
      span: el?.origin.span ?? { start: 0, end: 0 },
      data: { requested: String(t), used: fallback, netlistCodes: ['temperature-invalid'] },
    });
    return fallback;
  }

  /** The devices' conditions of a solve at `temperatureC` with BF and BR scaled by `betaScale`. */
  private conditionsAt(temperatureC: number, betaScale: number): DeviceConditions {
    const tnomC = Number.isFinite(this.circuit.tnomC) ? this.circuit.tnomC : 27;
    return new SolveConditions(temperatureC, tnomC, thermalVoltage(temperatureC), betaScale, JUNCTION_GMIN);
  }

  private pickBetaScale(options: SolveOptions, findings: Finding[]): number {
    const b = options.betaScale;
    if (b === undefined || (Number.isFinite(b) && b > 0)) return b ?? 1;
    const first = this.circuit.elements.findIndex((el) => el.kind === 'Q');
    if (first >= 0) {
      findings.push(
        this.elementFinding('dc-value-unusable', 'error', `The beta scale ${String(b)} asked for is not a positive number; BF and BR were used unscaled.`, first),
      );
    }
    return 1;
  }

  private applySourceValues(overrides: Record<string, number> | undefined, findings: Finding[]): void {
    const sv = this.engine.sourceValues;
    this.layout.sources.forEach((s, i) => (sv[i] = s.nominal));
    if (!overrides) return;
    for (const [name, value] of Object.entries(overrides)) {
      const i = this.sourceIndexByName.get(name.toLowerCase());
      if (i === undefined) continue;
      if (Number.isFinite(value)) sv[i] = value;
      else {
        const hook = this.layout.sources[i];
        findings.push(
          this.elementFinding(
            'dc-value-unusable',
            'error',
            `The value ${String(value)} requested for ${this.circuit.elements[hook.element].name} is not a finite number; its DC value ${formatEng(hook.nominal, hook.kind === 'V' ? 'V' : 'A')} was used.`,
            hook.element,
          ),
        );
      }
    }
  }

  // ---- records ----

  /**
   * Every two-terminal element's voltage and current at x into tv and ti (reader k at k); true when one
   * of them, or their product, is past ±1e300. A method of its own: compiled while its loop ran, code
   * after the loop had never run and gave up the compiled code at every point built.
   */
  private twoTerminalValues(x: Float64Array, tv: Float64Array, ti: Float64Array): boolean {
    const r = (this.readerColumns ??= new ReaderColumns(this.layout.readers));
    const override = this.conductanceOverride;
    const overridden = override.size > 0;
    const stamps = this.layout.resistorStamps;
    const sourceValues = this.engine.sourceValues;
    const { kind, element, a, b, first, second, gain } = r;
    let overflow = false;
    for (let k = 0; k < kind.length; k++) {
      // Module functions, not closures made per call: a closure is a new call target at every point built, which
      // gave up this loop's compiled code at the next corner.
      const voltage = unknownValue(x, a[k]) - unknownValue(x, b[k]);
      let current = 0;
      switch (kind[k]) {
        case READ_CONDUCTANCE: {
          const g = stamps.conductanceOrZero(element[k]);
          current = voltage * (overridden ? (override.get(element[k]) ?? g) : g);
          break;
        }
        case READ_BRANCH:
          current = x[first[k]];
          break;
        case READ_SOURCE:
          current = sourceValues[first[k]];
          break;
        case READ_VCCS:
          current = gain[k] * (unknownValue(x, first[k]) - unknownValue(x, second[k]));
          break;
        case READ_CCCS:
          current = gain[k] * x[first[k]];
          break;
      }
      tv[k] = voltage;
      ti[k] = current;
      if (!(withinRecordLimit(current) && withinRecordLimit(voltage) && withinRecordLimit(voltage * current))) overflow = true;
    }
    return overflow;
  }
  /** The layout's two-terminal readers as typed columns, made at the first point built. */
  private readerColumns: ReaderColumns | undefined;

  /**
   * The operating point at `x`: node voltages, two-terminal values and every device kind's columns
   * are computed now into typed arrays; the name-keyed `nodes` and `devices` tables are built only
   * when something reads them (see `lazyPoint`). Values beyond ±1e300 are found now, so the
   * overflow finding is raised by the solve; the tables are then built at once to name them. A solve for
   * the point alone (`pointOnly`) raises no such finding: its device columns are not looked over (every
   * record is, when it is made), which at 100,000 elements was eleven columns of 50,000 numbers a corner.
   */
  private buildOperatingPoint(
    x: Float64Array,
    head: { converged: boolean; temperatureC: number; iterations: number; fallbacks: Fallback[] },
    findings: Finding[],
    reuse: ReusedVectors | undefined,
    pointOnly: boolean,
  ): OperatingPoint {
    const c = this.circuit;
    const { tables, deviceOrder, readers } = this.layout;
    const volts = reuse ? (reuse.volts ??= float64Column(c.nodes.length)) : float64Column(c.nodes.length);
    // Two-terminal voltages and currents now: the source values and resistance overrides change with the next solve.
    const tv = reuse ? (reuse.tv ??= float64Column(readers.length)) : float64Column(readers.length);
    const ti = reuse ? (reuse.ti ??= float64Column(readers.length)) : float64Column(readers.length);
    // Both passes always run: each fills its vector.
    const nodesOverflow = nodeVolts(x, volts);
    const valuesOverflow = this.twoTerminalValues(x, tv, ti);
    let overflow = nodesOverflow || valuesOverflow;
    const columns: DeviceColumns[] = tables.map((t, k) => t.evaluate(x, reuse?.columns?.[k]));
    if (reuse) reuse.columns = columns;
    let columnsInRange = true;
    if (!pointOnly) for (const col of columns) for (const q of col.values) if (!allInRecordRange(q)) columnsInRange = false;
    if (!columnsInRange) overflow = true;
    if (pointOnly) overflow = false;
    // A record's numbers are its columns' (`DeviceKind.record`): with every column in range there is nothing to clamp.
    // A reused result's columns are overwritten by the next solve, and a point-only solve's were not looked over, so
    // their records are always looked over.
    const clampsRecords = reuse !== undefined || pointOnly || !columnsInRange;
    // The point's vectors outlive the solve: they hold what they read, not the solver (its matrix and factors, tens of
    // megabytes at 50,000 elements).
    const vectors = new SolvedVectors(c, tables, deviceOrder, readers, this.elementSlot, this.shapes, new SolvedValues(volts, tv, ti, columns), clampsRecords);
    // What the tables clamp is collected only where the solve names it (an overflow); a later first read clamps quietly.
    let collected: Clamped | undefined;
    const op = lazyPoint(head, vectors, () => vectors.buildTables(collected));
    vectors.point = op;
    if (overflow) {
      const overflowed: string[] = [];
      for (let i = 1; i < c.nodes.length; i++) if (!(Math.abs(x[i - 1]) <= RECORD_LIMIT)) overflowed.push(`node ${c.nodes[i]}`);
      const clamped = (collected = { overflowed, elements: new Set<number>() }).elements;
      void op.devices;
      if (overflowed.length > 0) {
        const idx = clamped.size > 0 ? [...clamped][0] : this.mostExtremeElement();
        findings.push(
          this.elementFinding(
            'dc-value-overflow',
            'error',
            `Some results are beyond ±1e300 and were clamped (${listNames(overflowed, 4)}); the circuit's values are too extreme for double-precision arithmetic. ${this.extremeValueHint()}`,
            idx,
          ),
        );
      }
    }
    return op;
  }

  // ---- findings ----

  private failureFindings(last: NewtonOutcome, fallbacks: Fallback[], iterations: number): Finding[] {
    const c = this.circuit;
    const tried = fallbacks.length === 0 ? 'no fallback could help' : `fallbacks tried: ${fallbacks.join(', then ')}`;
    if (last.status === 'singular') {
      return [this.singularFinding(last.singularIndex)];
    }
    if (last.status === 'non-finite') {
      const culprits = last.culprits.map((e) => c.elements[e]);
      const idx = culprits.length > 0 ? c.elements.indexOf(culprits[0]) : this.mostExtremeElement();
      const who = culprits.length > 0 ? `The equations of ${listNames(culprits.map((e) => e.name))} overflowed` : 'The node equations overflowed';
      return [
        this.elementFinding(
          'dc-value-overflow',
          'error',
          `${who} the double-precision range, so no operating point could be found (${tried}); the values shown are the last finite iterate. ${this.extremeValueHint()}`,
          idx,
        ),
      ];
    }
    // Iteration limit: name the unknowns that were still moving and the devices on them.
    const unsettled = last.status === 'iteration-limit' ? last.unsettled : [];
    const names = unsettled.map((k) => this.layout.describeUnknown(k).replace(/^node /, ''));
    const onNodes = new Set(unsettled);
    const devs = this.devicesOn(onNodes);
    const target = devs[0] ?? this.elementOnUnknown(unsettled[0]) ?? c.elements[0];
    const idx = target ? c.elements.indexOf(target) : 0;
    const f = this.elementFinding(
      'dc-no-convergence',
      'error',
      `The DC operating point did not converge after ${iterations} Newton iterations (${tried}). ` +
        (names.length > 0 ? `Still changing: ${listNames(names)}` : 'The last updates did not settle') +
        (devs.length > 0 ? `; devices involved: ${listNames(devs.map((d) => d.name))}.` : '.') +
        ' The values shown are the last finite iterate, not a solution.',
      idx,
    );
    f.data = { iterations, fallbacks: [...fallbacks], unsettled: names, devices: devs.map((d) => d.name) };
    f.related = [...(f.related ?? []), ...devs.slice(1, 8).map((d) => ({ uri: d.origin.uri, span: d.origin.span, message: `${d.name} was still changing.` }))];
    return [f];
  }

  private singularFinding(k: number): Finding {
    const c = this.circuit;
    const layout = this.layout;
    // Prefer the null vector's unknowns (what is actually undetermined) over the failed pivot's index.
    const found =
      layout.size <= DIAGNOSE_MAX_UNKNOWNS
        ? undeterminedUnknowns(layout.pattern, this.engine.lastScaledValues, this.engine.lastColumnScales)
        : undeterminedByShift(layout.pattern, this.engine.lastScaledValues, createLinearSolver, this.engine.lastColumnScales);
    // The strongest few components name the problem; the tail of a null vector only decays through neighbours.
    const unknowns = (found.length > 0 ? found : [k]).slice(0, 4);
    const nodeUnknowns = unknowns.filter((u) => layout.unknowns[u]?.kind === 'node');
    const shown = nodeUnknowns.length > 0 ? nodeUnknowns : unknowns;
    const elements = new Set<number>();
    for (const u of unknowns) {
      const info = layout.unknowns[u];
      if (!info) continue;
      if (info.kind === 'node') c.elements.forEach((el, i) => el.nodes.includes(info.node) && elements.add(i));
      else elements.add(info.element);
    }
    // A controlled source is the usual culprit, so it is named first and carries the finding.
    const controlled = (i: number): number => ('EFGH'.includes(c.elements[i].kind) ? 0 : 1);
    const list = [...elements].sort((p, q) => controlled(p) - controlled(q));
    const what = listNames(shown.map((u) => layout.describeUnknown(u)));
    const f = this.elementFinding(
      'dc-singular-matrix',
      'error',
      `The circuit equations are singular: ${what} ${shown.length > 1 ? 'are' : 'is'} not fixed by the circuit` +
        (list.length > 0 ? ` (elements involved: ${listNames(list.map((i) => c.elements[i].name))})` : '') +
        '. Typical causes are a controlled source that defines its own input, or sources and elements that cancel exactly. No operating point was computed. ' +
        this.extremeValueHint(),
      list[0] ?? 0,
    );
    f.message = f.message.trim();
    f.data = { kind: 'undetermined', unknowns: shown.map((u) => layout.describeUnknown(u)), elements: list.map((i) => c.elements[i].name) };
    f.related = [...(f.related ?? []), ...this.relatedFor(list.slice(1))];
    return f;
  }

  /** `tied`: the nodes were tied to ground so the rest of the circuit could be solved (otherwise nothing was solved). */
  private floatingFinding(nodes: number[], elements: number[], tied: boolean): Finding {
    const c = this.circuit;
    const names = nodes.map((n) => c.nodes[n]);
    const reasons = elements.map((i) => {
      const el = c.elements[i];
      switch (el.kind) {
        case 'C':
          return `${el.name} (a capacitor, open at DC)`;
        case 'I':
          return `${el.name} (a current source, which fixes no voltage)`;
        case 'G':
        case 'F':
          return `${el.name} (a controlled current source)`;
        case 'R':
          return Number.isFinite(el.resistance) ? el.name : `${el.name} (an open circuit)`;
        default: {
          const note = deviceKindOf(el.kind)?.floatingNote;
          return note ? `${el.name} (${note})` : el.name;
        }
      }
    });
    const plural = nodes.length > 1;
    const f = this.elementFinding(
      'dc-singular-matrix',
      'error',
      `${plural ? 'Nodes' : 'Node'} ${listNames(names)} ${plural ? 'have' : 'has'} no DC path to ground, so ${plural ? 'their voltages are' : 'its voltage is'} undefined and the circuit equations are singular. ` +
        (reasons.length > 0 ? `Connected: ${listNames(reasons)}. ` : '') +
        'Add a DC path (a resistor or source) to ground. ' +
        (tied
          ? `The solver tied ${plural ? 'each of these nodes' : 'it'} to ground through ${formatEng(1 / TIE_CONDUCTANCE, 'Ω')} so the rest of the circuit could be solved; the ${plural ? 'voltages' : 'voltage'} shown there ${plural ? 'are' : 'is'} arbitrary, and so is anything that depends on ${plural ? 'them' : 'it'}.`
          : 'No operating point was computed.'),
      elements[0] ?? 0,
    );
    f.data = {
      kind: 'floating-node',
      nodes: names,
      elements: elements.map((i) => c.elements[i].name),
      tied,
      netlistCodes: ['node-no-dc-path', 'current-source-cutset'],
    };
    if (tied) f.data.tieOhms = 1 / TIE_CONDUCTANCE;
    f.related = [...(f.related ?? []), ...this.relatedFor(elements.slice(1))];
    return f;
  }

  private loopFinding(elements: number[]): Finding {
    const c = this.circuit;
    const names = elements.map((i) => c.elements[i].name);
    const f = this.elementFinding(
      'dc-singular-matrix',
      'error',
      elements.length === 1
        ? `${names[0]} fixes the voltage between a node and itself, so its current is undefined and the circuit equations are singular. No operating point was computed.`
        : `${listNames(names)} form a loop of elements that each fix a voltage (sources, inductors, zero-ohm resistors), so the loop current is undefined and the circuit equations are singular. Add a resistance in the loop. No operating point was computed.`,
      elements[elements.length - 1],
    );
    f.data = { kind: 'voltage-loop', elements: names, netlistCodes: ['voltage-source-loop'] };
    f.related = [...(f.related ?? []), ...this.relatedFor(elements.slice(0, -1))];
    return f;
  }

  /** Diode and base-emitter junctions whose two ends are tied together by a short, inductor or 0 V source: they can never conduct. */
  private shortedJunctionFindings(): Finding[] {
    const c = this.circuit;
    const shorts = new Map<string, number>();
    c.elements.forEach((el, i) => {
      if (this.layout.skipped.has(i)) return;
      const isShort = el.kind === 'L' || (el.kind === 'R' && el.resistance === 0) || (el.kind === 'V' && el.dc === 0);
      if (!isShort) return;
      const [a, b] = el.nodes;
      shorts.set(a < b ? `${a},${b}` : `${b},${a}`, i);
    });
    const out: Finding[] = [];
    const check = (devIdx: number, junction: string, a: number, b: number): void => {
      const el = c.elements[devIdx];
      if (a === b) {
        out.push(this.elementFinding('dc-junction-shorted', 'warning', `Both ends of the ${junction} of ${el.name} are node ${c.nodes[a]}, so that junction can never be biased.`, devIdx));
        return;
      }
      // Without a short there is nothing to look up: a key made per junction (two a BJT) was most of this check's time.
      if (shorts.size === 0) return;
      const s = shorts.get(a < b ? `${a},${b}` : `${b},${a}`);
      if (s === undefined) return;
      const sh = c.elements[s];
      const how = sh.kind === 'V' ? 'a 0 V source' : sh.kind === 'L' ? 'an inductor (a short at DC)' : 'a zero-ohm resistor';
      const f = this.elementFinding(
        'dc-junction-shorted',
        'warning',
        `${sh.name} (${how}) sits directly across the ${junction} of ${el.name}, holding it at 0 V, so it carries no junction current.`,
        devIdx,
      );
      f.related = [...(f.related ?? []), ...this.relatedFor([s])];
      out.push(f);
    };
    // One visitor for every device (the element's index in `current`), where a list per device was garbage at 100k.
    let current = 0;
    const visit = (junction: string, a: number, b: number): void => check(current, junction, a, b);
    c.elements.forEach((el, i) => {
      if (this.layout.skipped.has(i)) return;
      current = i;
      deviceKindOf(el.kind)?.checkedJunctions(el, visit);
    });
    return out;
  }

  /** Values so extreme (beyond 10^±150, saturation currents and KP judged against their defaults) that products of them overflow. */
  private outOfRangeFindings(among?: readonly number[]): Finding[] {
    const out: Finding[] = [];
    // Devices share models: judge each model's parameters once, and look closer only where one is extreme.
    const modelExtreme = new Map<object, boolean>();
    const typical: Record<string, number> = { IS: 1e-16, KP: 2e-5 };
    const far = (value: number, t = 1): boolean =>
      value !== 0 && Number.isFinite(value) && Math.abs(Math.log10(Math.abs(value)) - Math.log10(t)) > OUT_OF_RANGE_DECADES;
    // The instance's own numbers, judged by one visitor made here, not a list of records per device.
    let own = false;
    const judgeOwn = (_name: string, value: number, typical: number): void => {
      if (far(value, typical)) own = true;
    };
    const elements = this.circuit.elements;
    const count = among ? among.length : elements.length;
    for (let n = 0; n < count; n++) {
      const i = among ? among[n] : n;
      const el = elements[i];
      if (this.layout.skipped.has(i)) continue;
      // A linear element has one value to judge: judged here, its record list is made only for a finding.
      if (!(linearValueFar(el) ?? true)) continue;
      const kind = deviceKindOf(el.kind);
      if (kind && 'model' in el) {
        let m = modelExtreme.get(el.model);
        if (m === undefined) {
          m = false;
          for (const name in el.model.params) if (far(el.model.params[name], typical[name])) m = true;
          modelExtreme.set(el.model, m);
        }
        own = false;
        kind.instanceValues(el, judgeOwn);
        if (!m && !own) continue;
      }
      for (const v of this.valuesOf(el)) {
        if (v.decades <= OUT_OF_RANGE_DECADES) continue;
        const shown = v.value;
        const f = this.elementFinding(
          'dc-value-out-of-range',
          'warning',
          `${v.name} = ${shown.toExponential(2)} on ${el.name} is too extreme for the solver's double-precision arithmetic (products of such values overflow or vanish); results involving ${el.name} may be meaningless.`,
          i,
        );
        f.data = { parameter: v.name, value: shown, netlistCodes: ['value-out-of-range'] };
        out.push(f);
        break;
      }
    }
    return out;
  }

  /** `dc-behaviour-not-evaluable` for each behavioural source whose function has no finite value (or slope) at x. */
  private behaviourFindings(x: Float64Array): Finding[] {
    const out: Finding[] = [];
    const c = this.circuit;
    for (const table of this.layout.tables) {
      if (!(table instanceof BehaviouralTable)) continue;
      const describe = (i: number, k: number): string => {
        const input = table.instances.elements[i].inputs[k];
        if (!input) return '?';
        if (input.kind === 'i') return `I(${input.source})`;
        return input.b === 0 ? `V(${c.nodes[input.a]})` : `V(${c.nodes[input.a]}, ${c.nodes[input.b]})`;
      };
      for (const p of table.problems(x, describe)) {
        const el = c.elements[p.element];
        const f = this.elementFinding(
          'dc-behaviour-not-evaluable',
          'error',
          `The function of ${el.name} cannot be evaluated at the operating point reached (${p.at || 'no controlling values'}): ${p.failure.message}. The solver kept its last usable value, so the point is not a solution.`,
          p.element,
        );
        f.span = p.failure.span;
        f.data = { element: el.name };
        out.push(f);
      }
    }
    return out;
  }

  private postSolveFindings(x: Float64Array, op: OperatingPoint, structure: Structure): Finding[] {
    const out: Finding[] = [];
    const c = this.circuit;
    const { tables, deviceOrder } = this.layout;
    const point = pointVectors(op)!;
    const volt = point.volts;
    for (let d = 0; d < deviceOrder.element.length; d++) {
      const over = tables[deviceOrder.table[d]].overdriven(x, deviceOrder.instance[d]);
      if (over.length === 0) continue;
      const element = c.elements[deviceOrder.element[d]];
      const rec = point.record(deviceOrder.element[d]);
      const current = rec && rec.type === 'bjt' ? rec.ic : rec && rec.type === 'diode' ? rec.id : 0;
      const j = over[0];
      const f = this.elementFinding(
        'dc-junction-overdriven',
        'warning',
        `The ${j.junction} of ${element.name} is forward-biased at ${formatEng(j.volts, 'V')}, far beyond where a silicon junction can sit; the computed current (${formatEng(current, 'A')}) is not physical. A series resistance or current limit is probably missing.`,
        deviceOrder.element[d],
      );
      f.data = { junction: j.junction, volts: j.volts, current };
      out.push(f);
    }
    // A tied group far from ground is one a net current is forced into (a current-source cut-set).
    for (const g of structure.tied.length > 0 ? structure.floating : []) {
      let net = 0;
      let worst = g.nodes[0];
      for (const k of g.nodes) {
        net += volt[k] * TIE_CONDUCTANCE;
        if (Math.abs(volt[k]) > Math.abs(volt[worst])) worst = k;
      }
      const volts = volt[worst];
      if (Math.abs(volts) <= IMPLAUSIBLE_VOLTS) continue;
      const sources = g.elements.filter((k) => 'IGF'.includes(c.elements[k].kind));
      const at = sources[0] ?? g.elements[0] ?? 0;
      const names = listNames(g.nodes.map((k) => c.nodes[k]));
      const f = this.elementFinding(
        'dc-implausible-voltage',
        'warning',
        `Node ${c.nodes[worst]} shows ${formatEng(volts, 'V')}, a number with no meaning: ${sources.length > 0 ? listNames(sources.map((k) => c.elements[k].name)) : 'the circuit'} ` +
          `${sources.length > 1 ? 'force' : 'forces'} a net ${formatEng(net, 'A')} into ${g.nodes.length > 1 ? 'nodes' : 'node'} ${names}, which ${g.nodes.length > 1 ? 'have' : 'has'} no DC path to ground, so it all flows through the solver's ${formatEng(1 / TIE_CONDUCTANCE, 'Ω')} tie. ` +
          'Give the current a path (a resistor or a device that sinks it) or make the sources agree.',
        at,
      );
      f.data = { node: c.nodes[worst], volts, netCurrent: net, tied: true };
      out.push(f);
    }
    const tiedSet = structure.tied.length > 0 ? new Set(structure.tied) : undefined;
    for (let i = 1; i < c.nodes.length; i++) {
      const volts = volt[i];
      if (Math.abs(volts) <= IMPLAUSIBLE_VOLTS || tiedSet?.has(i)) continue;
      const touching = c.elements.map((el, k) => (el.nodes.includes(i) ? k : -1)).filter((k) => k >= 0);
      const f = this.elementFinding(
        'dc-implausible-voltage',
        'warning',
        `Node ${c.nodes[i]} sits at ${formatEng(volts, 'V')}: a current is being forced into a node held only by junction leakage or a huge resistance (${listNames(touching.map((k) => c.elements[k].name))}).`,
        touching[0] ?? 0,
      );
      f.data = { node: c.nodes[i], volts };
      out.push(f);
    }
    return out;
  }

  private paramFinding(issue: ParamIssue): Finding {
    const el = issue.element;
    const idx = this.circuit.elements.indexOf(el);
    const where = issue.inModel && 'model' in el ? `model ${el.model.name} of ${el.name}` : el.name;
    const disabled = !issue.inModel && issue.used === 0;
    const message = `${issue.name} = ${String(issue.given)} on ${where} is not usable (${issue.rule}); ` + (disabled
        ? `the solver treats ${el.name} as carrying no current.`
        : Number.isFinite(issue.used)
          ? `the solver used ${issue.name} = ${issue.used} instead.`
          : `the solver leaves ${issue.name} unset (no effect) instead.`);
    const f = this.elementFinding('dc-parameter-unusable', 'error', message, idx);
    if (issue.inModel && 'model' in el) {
      f.related = [...(f.related ?? []), { uri: el.model.origin.uri, span: el.model.origin.span, message: `Model ${el.model.name} is defined here.` }];
    }
    f.data = {
      parameter: issue.name,
      given: Number.isFinite(issue.given) ? issue.given : String(issue.given),
      used: Number.isFinite(issue.used) ? issue.used : String(issue.used),
      netlistCodes: issue.inModel ? ['model-parameter-invalid'] : ['device-area-invalid', 'element-value-invalid'],
    };
    return f;
  }

  private elementOnUnknown(k: number | undefined): Element | undefined {
    if (k === undefined) return undefined;
    const info = this.layout.unknowns[k];
    if (!info) return undefined;
    if (info.kind === 'node') return this.circuit.elements.find((el) => el.nodes.includes(info.node));
    return this.circuit.elements[info.element];
  }

  /** Nonlinear devices with a terminal on one of `unknowns`, in element order. */
  private devicesOn(unknowns: Set<number>): Element[] {
    const { tables, deviceOrder } = this.layout;
    const out: Element[] = [];
    for (let d = 0; d < deviceOrder.element.length; d++) {
      const table = tables[deviceOrder.table[d]];
      const nt = table.kind.terminalCount;
      const base = deviceOrder.instance[d] * nt;
      for (let k = 0; k < nt; k++) {
        if (unknowns.has(table.instances.terminals[base + k])) {
          out.push(this.circuit.elements[deviceOrder.element[d]]);
          break;
        }
      }
    }
    return out;
  }

  /** The element carrying the value farthest from its ordinary scale (decades), for overflow hints. */
  private mostExtremeElement(): number {
    let best = 0;
    let bestScore = -1;
    this.circuit.elements.forEach((el, i) => {
      for (const v of this.valuesOf(el)) {
        if (v.decades > bestScore) {
          bestScore = v.decades;
          best = i;
        }
      }
    });
    return best;
  }

  private extremeValueHint(): string {
    const el = this.circuit.elements[this.mostExtremeElement()];
    if (!el) return '';
    let pick: { name: string; value: number; decades: number } | undefined;
    for (const v of this.valuesOf(el)) if (!pick || v.decades > pick.decades) pick = v;
    return pick && pick.decades > 12 ? `The most extreme value is ${pick.name} = ${pick.value.toExponential(2)} on ${el.name}.` : '';
  }

  /**
   * The numbers an element brings into the equations, each with its distance in decades from
   * its ordinary scale: 1 for most, the docs/DEVICE-MODELS.md default for IS and KP, which are tiny by nature.
   */
  private valuesOf(el: Element): { name: string; value: number; decades: number }[] {
    const item = (name: string, value: number, typical = 1): { name: string; value: number; decades: number } => ({
      name,
      value,
      decades: value === 0 || !Number.isFinite(value) ? 0 : Math.abs(Math.log10(Math.abs(value)) - Math.log10(typical)),
    });
    switch (el.kind) {
      case 'R':
        return [item('resistance', el.resistance)];
      case 'V':
      case 'I':
        return [item('DC value', el.dc)];
      case 'E':
      case 'G':
      case 'F':
      case 'H':
        return [item('gain', el.gain)];
      case 'C':
      case 'L':
        return [];
      default: {
        const kind = deviceKindOf(el.kind);
        if (!kind) return [];
        const typical: Record<string, number> = { IS: 1e-16, KP: 2e-5 };
        const out = 'model' in el ? Object.entries(el.model.params).map(([name, value]) => item(name, value, typical[name] ?? 1)) : [];
        kind.instanceValues(el, (name, value, typical) => out.push(item(name, value, typical)));
        return out;
      }
    }
  }

  private relatedFor(elements: number[]): RelatedLocation[] {
    return elements.slice(0, 8).map((i) => {
      const el = this.circuit.elements[i];
      return { uri: el.origin.uri, span: el.origin.span, message: `${el.name} is involved.` };
    });
  }

  /** A finding located at element `i` (its card; the X instance lines it came through are related locations). */
  private elementFinding(code: string, severity: Severity, message: string, i: number): Finding {
    const el = this.circuit.elements[i];
    const span: Span = el?.origin.span ?? { start: 0, end: 0 };
    const f: Finding = { code, severity, message, uri: el?.origin.uri ?? '', span };
    if (el && el.origin.instances.length > 0) {
      f.related = el.origin.instances.map((inst) => ({ uri: inst.uri, span: inst.span, message: `${el.name} is inside instance ${inst.name}.` }));
    }
    return f;
  }
}

/**
 * Whether every value of `q` is within ±RECORD_LIMIT (so neither NaN nor infinite): a loop of its own,
 * since a check through a closure per value was most of building a corner's point (110,000 values a
 * corner on the 20,000-element array).
 */
function allInRecordRange(q: Float64Array): boolean {
  for (let i = 0; i < q.length; i++) {
    const v = q[i];
    if (!(v <= RECORD_LIMIT && v >= -RECORD_LIMIT)) return false;
  }
  return true;
}

// `ReaderColumns.kind` codes, one per kind of `LinearReader` ('open' reads 0 A).
const READ_OPEN = 0;
const READ_CONDUCTANCE = 1;
const READ_BRANCH = 2;
const READ_SOURCE = 3;
const READ_VCCS = 4;
const READ_CCCS = 5;

/**
 * The layout's two-terminal readers in typed columns, reader k at k: what every point built (each corner's) reads for the
 * two-terminal voltages and currents. Read from the reader objects, which have a layout per kind, the loop was a look-up
 * of each field by the object's shape, 50,000 readers a corner at 100,000 elements. `first` is a branch's or a controlled
 * source's branch unknown, a current source's index among the sources, or a VCCS's positive control; `second` its negative one.
 */
class ReaderColumns {
  readonly kind: Uint8Array;
  readonly element: Int32Array;
  readonly a: Int32Array;
  readonly b: Int32Array;
  readonly first: Int32Array;
  readonly second: Int32Array;
  readonly gain: Float64Array;

  constructor(readers: readonly LinearReader[]) {
    const n = readers.length;
    this.kind = uint8Column(n);
    this.element = int32Column(n);
    this.a = int32Column(n);
    this.b = int32Column(n);
    this.first = int32Column(n);
    this.second = int32Column(n);
    this.gain = float64Column(n);
    for (let k = 0; k < n; k++) {
      const r = readers[k];
      this.element[k] = r.element;
      this.a[k] = r.a;
      this.b[k] = r.b;
      switch (r.kind) {
        case 'conductance':
          this.kind[k] = READ_CONDUCTANCE;
          break;
        case 'branch':
          this.kind[k] = READ_BRANCH;
          this.first[k] = r.branch;
          break;
        case 'open':
          this.kind[k] = READ_OPEN;
          break;
        case 'source-current':
          this.kind[k] = READ_SOURCE;
          this.first[k] = r.hook;
          break;
        case 'vccs':
          this.kind[k] = READ_VCCS;
          this.first[k] = r.cp;
          this.second[k] = r.cn;
          this.gain[k] = r.gain;
          break;
        case 'cccs':
          this.kind[k] = READ_CCCS;
          this.first[k] = r.branch;
          this.gain[k] = r.gain;
          break;
      }
    }
  }
}

/** Unknown u of x, 0 for ground (−1). */
function unknownValue(x: Float64Array, u: number): number {
  return u >= 0 ? x[u] : 0;
}

/** Whether |val| ≤ RECORD_LIMIT (false for NaN). */
function withinRecordLimit(val: number): boolean {
  return Math.abs(val) <= RECORD_LIMIT;
}

/** out[k] = x[k] for k < n, 0 where x[k] is not finite. */
function copyFinite(out: Float64Array, x: Float64Array, n: number): void {
  for (let k = 0; k < n; k++) out[k] = Number.isFinite(x[k]) ? x[k] : 0;
}

/**
 * Node i's voltage (unknown i − 1) into volts[i], ground 0 left as it is, a value past ±1e300 clamped;
 * true when one was. A loop of its own: see `twoTerminalValues`.
 */
function nodeVolts(x: Float64Array, volts: Float64Array): boolean {
  let overflow = false;
  for (let i = 1; i < volts.length; i++) {
    const val = x[i - 1];
    if (Math.abs(val) <= RECORD_LIMIT) volts[i] = val;
    else {
      overflow = true;
      volts[i] = Number.isNaN(val) ? 0 : val > 0 ? RECORD_LIMIT : -RECORD_LIMIT;
    }
  }
  return overflow;
}

/**
 * Drops solver findings that repeat a problem the netlist checks already reported: a solver
 * finding whose `data.netlistCodes` names a code present in `netlistFindings` for the same
 * document, on an overlapping span, or anywhere for circuit-wide problems (floating nodes,
 * source loops, temperature). For directly built circuits (no netlist checks) nothing is dropped.
 */
export function withoutNetlistDuplicates(solverFindings: Finding[], netlistFindings: Finding[]): Finding[] {
  // Indexed by code and document (spans sorted by start, with the running largest end), so the
  // check is O((m + n) log n) rather than m × n: thousands of islands give thousands of each.
  const index = new Map<string, Map<string, { starts: number[]; maxEnd: number[] }>>();
  for (const g of [...netlistFindings].sort((a, b) => a.span.start - b.span.start)) {
    let byUri = index.get(g.code);
    if (!byUri) index.set(g.code, (byUri = new Map()));
    let spans = byUri.get(g.uri);
    if (!spans) byUri.set(g.uri, (spans = { starts: [], maxEnd: [] }));
    const prev = spans.maxEnd.length ? spans.maxEnd[spans.maxEnd.length - 1]! : -Infinity;
    spans.starts.push(g.span.start);
    spans.maxEnd.push(Math.max(prev, g.span.end));
  }
  /** True when a netlist finding of `code` in `uri` has a span touching [start, end]. */
  const touches = (code: string, uri: string, start: number, end: number): boolean => {
    const spans = index.get(code)?.get(uri);
    if (!spans) return false;
    // The last netlist span starting at or before `end`; any earlier one reaching `start` touches.
    let lo = 0;
    let hi = spans.starts.length - 1;
    let last = -1;
    while (lo <= hi) {
      const mid = (lo + hi) >> 1;
      if (spans.starts[mid]! <= end) {
        last = mid;
        lo = mid + 1;
      } else hi = mid - 1;
    }
    return last >= 0 && spans.maxEnd[last]! >= start;
  };
  return solverFindings.filter((f) => {
    const codes = f.data?.netlistCodes;
    if (!Array.isArray(codes)) return true;
    const circuitWide = f.data?.kind === 'floating-node' || f.data?.kind === 'voltage-loop' || f.code === 'dc-temperature-unusable';
    for (const code of codes) {
      if (typeof code !== 'string') continue;
      if (circuitWide ? index.has(code) : touches(code, f.uri, f.span.start, f.span.end)) return false;
    }
    return true;
  });
}

/** One-shot convenience: prepares a DcSolver for `circuit` and solves once. */
export function solveOperatingPoint(circuit: Circuit, options?: SolveOptions): DcSolveResult {
  return new DcSolver(circuit).solve(options);
}

export { UNBOUNDED };

/** R(T)/R = 1 + TC1·ΔT + TC2·ΔT² (docs/DEVICE-MODELS.md). */
export function resistorTemperatureFactor(tc1: number, tc2: number, dt: number): number {
  return 1 + tc1 * dt + tc2 * dt * dt;
}
