// After a value edit, a corner solve's start made exact in the parts of the circuit the edit reached: each such part
// solved alone with the rails held at the corner's values, the rest of the start left at the corner's last solution.

import type { Circuit, Element } from '../circuit';
import { DcSolver, type DcSolveResult } from './dc';
import type { UnknownInfo } from './mna';
import type { OperatingPoint, SolveOptions } from './types';

/**
 * Element kinds whose equations read only the nodes they list: in a circuit of these alone, parts joined through
 * nodes that are not rails (nodes held by voltage sources) share nothing but the rails and those sources' currents.
 * A current-controlled kind (F, H, W) or a behavioural source reads what another part may hold.
 */
const LOCAL_KINDS: ReadonlySet<Element['kind']> = new Set(['R', 'C', 'L', 'V', 'I', 'E', 'G', 'S', 'D', 'Q', 'M', 'J']);

/** Whether every element of the circuit reads only the nodes it lists, so that parts joined through rails alone share nothing but the rail sources' currents. */
export function partsAreSeparate(circuit: Circuit): boolean {
  return circuit.elements.every((el) => LOCAL_KINDS.has(el.kind));
}

/** A part larger than this share of the circuit is not solved apart: the whole circuit's Newton is as cheap then. */
const MOST_ELEMENTS_SHARE = 1 / 8;
/** ... unless it is this small. */
const ALWAYS_ELEMENTS = 64;

/** What a part solve needs to know of the whole circuit. */
export interface PartCircuit {
  circuit: Circuit;
  /** The global solver's unknowns (MNA order). */
  unknowns: readonly UnknownInfo[];
  /** Per node, 1 for a rail (ground included). */
  rail: Uint8Array;
  /** Per element, its part (see `circuitParts` in incremental.ts). */
  partOf: Int32Array;
}

/**
 * Per element, the resistance it had when a corner was solved (NaN for other kinds): what a later start compares
 * with the circuit's values to find the resistors an edit changed.
 */
export function resistancesOf(circuit: Circuit): Float64Array {
  const elements = circuit.elements;
  const out = new Float64Array(elements.length);
  // A plain loop: `Float64Array.from` with a mapping function took about 5 ms for 20,000 elements, on an edit's path.
  for (let i = 0; i < elements.length; i++) {
    const el = elements[i]!;
    out[i] = el.kind === 'R' ? el.resistance : NaN;
  }
  return out;
}

/**
 * Makes `start` (a corner's Newton start: its last solution moved by the nominal change) exact in the parts holding a
 * resistor whose value differs from `before` (the resistances that solution was solved with, see `resistancesOf`):
 * each unknown of those parts is replaced by a solve of the parts alone at the corner's conditions (`options`), and
 * the current of every rail source by its value in `last` (the corner's last solution) plus the change of the parts'
 * share of it (the parts solved alone with the old values, from `last`, and with the new ones). The other parts'
 * unknowns already solve their equations, which the edit did not touch, so the whole circuit's Newton then needs
 * one iteration to confirm the point by its own convergence test. Undefined (the start left as it was) when the
 * circuit has a kind that reads across parts, nothing changed, the parts are large, or a part solve did not converge.
 */
export class PartStarts {
  private constructor(private solves: { now: PartSolve; before: PartSolve } | undefined) {}

  /** The part starts of `whole` with the resistances `before` where they differ from the circuit's (see above). */
  static of(whole: PartCircuit, before: Float64Array): PartStarts {
    return new PartStarts(partSolves(whole, before));
  }

  /**
   * The part starts of the next value edit, whose circuit is `whole` and whose last values are `before` (this one's
   * new values): when it changed resistors in the same parts (an editor changing one value again and again), this
   * one's solvers are moved on instead of built again, the one with the new values becoming the next `before` and the
   * other taking the newest values in place (`DcSolver.adoptValues`). This one is spent either way (its solvers may
   * now hold other values): a state an edit stopped half-way returns to builds its part starts afresh.
   */
  followedBy(whole: PartCircuit, before: Float64Array): PartStarts {
    const last = this.solves;
    this.solves = undefined;
    const chosen = partElements(whole, before);
    if (!chosen) return new PartStarts(undefined);
    const reused = last && last.now.holds(chosen, whole.circuit, before) ? last.before.movedTo(whole.circuit) : undefined;
    return new PartStarts(reused ? { now: reused, before: last!.now } : solvesOf(whole, chosen, before));
  }

  /**
   * Writes the refined unknowns into `start` and returns the parts' point with the new values; undefined (and `start`
   * as it was) when a part solve did not converge.
   */
  refine(start: Float64Array, last: Float64Array, options: SolveOptions): PartPoint | undefined {
    if (!this.solves) return undefined;
    const { now, before } = this.solves;
    const solvedNow = now.solve(start, options);
    const xBefore = solvedNow && before.solve(last, options)?.x;
    if (!solvedNow || !xBefore) return undefined;
    const xNow = solvedNow.x;
    const { toGlobal, kind } = now;
    for (let k = 0; k < toGlobal.length; k++) {
      const g = toGlobal[k];
      if (kind[k] === PART_UNKNOWN) start[g] = xNow[k];
      else if (kind[k] === RAIL_CURRENT) start[g] = last[g] + (xNow[k] - xBefore[k]);
    }
    return { circuit: now.circuit, op: solvedNow.op, elements: now.elements };
  }
}

/** The parts an edit reached solved alone at a corner: their circuit (with the rail sources), its point, and each of its elements' index in the whole circuit. */
export interface PartPoint {
  circuit: Circuit;
  op: OperatingPoint;
  elements: Int32Array;
}

/** Unknowns of a part solve: the parts' own (copied into the start), a rail source's current (moved by the change), a rail's voltage (left). */
const PART_UNKNOWN = 0;
const RAIL_CURRENT = 1;
const RAIL_VOLTAGE = 2;

function partSolves(whole: PartCircuit, before: Float64Array): { now: PartSolve; before: PartSolve } | undefined {
  const chosen = partElements(whole, before);
  return chosen && solvesOf(whole, chosen, before);
}

/** The part solves of the elements `chosen` (`partElements`) with the circuit's values and with `before`'s. */
function solvesOf(whole: PartCircuit, chosen: readonly number[], before: Float64Array): { now: PartSolve; before: PartSolve } | undefined {
  const globalOf = globalUnknowns(whole.unknowns);
  const now = PartSolve.of(whole, globalOf, chosen, (el) => el);
  const old = PartSolve.of(whole, globalOf, chosen, (el, i) => (el.kind === 'R' && !Object.is(el.resistance, before[i]) ? { ...el, resistance: before[i] } : el));
  return now && old ? { now, before: old } : undefined;
}

/**
 * The elements of the parts holding a resistor whose value differs from `before`, with the sources that hold the rails,
 * in circuit order; undefined when nothing changed, the circuit has a kind that reads across parts, or the parts are large.
 */
function partElements(whole: PartCircuit, before: Float64Array): number[] | undefined {
  const { circuit, rail, partOf } = whole;
  const elements = circuit.elements;
  if (before.length !== elements.length) return undefined;
  // Plain loops over every element, and the touched parts marked in an array rather than a set (a look-up per
  // element): this runs before each corner solve and each nominal solve after a value edit. Parts are numbered
  // below the count of nodes and elements (a part holds a node or is an element on rails alone).
  const touched = new Uint8Array(circuit.nodes.length + elements.length);
  let any = false;
  for (let i = 0; i < elements.length; i++) {
    const el = elements[i]!;
    if (!LOCAL_KINDS.has(el.kind)) return undefined;
    if (el.kind === 'R' && !Object.is(el.resistance, before[i])) {
      touched[partOf[i]!] = 1;
      any = true;
    }
  }
  if (!any) return undefined;
  const inParts: number[] = [];
  const railSources: number[] = [];
  for (let i = 0; i < elements.length; i++) {
    const el = elements[i]!;
    if (touched[partOf[i]!] === 1) inParts.push(i);
    else if ((el.kind === 'V' || el.kind === 'L') && onRails(el.nodes, rail)) railSources.push(i);
  }
  if (inParts.length > Math.max(ALWAYS_ELEMENTS, elements.length * MOST_ELEMENTS_SHARE)) return undefined;
  return [...inParts, ...railSources].sort((a, b) => a - b);
}

/** Whether every node of a list is a rail. */
function onRails(nodes: readonly number[], rail: Uint8Array): boolean {
  for (let k = 0; k < nodes.length; k++) if (rail[nodes[k]!] !== 1) return false;
  return true;
}

/** A circuit made of some of a circuit's elements (renumbered nodes, the same names and models), with its own solver. */
class PartSolve {
  private constructor(
    private readonly solver: DcSolver,
    readonly circuit: Circuit,
    /** Part element i -> the whole circuit's element. */
    readonly elements: Int32Array,
    /** Part unknown k -> the whole circuit's unknown. */
    readonly toGlobal: Int32Array,
    /** Part unknown k: PART_UNKNOWN, RAIL_CURRENT or RAIL_VOLTAGE. */
    readonly kind: Uint8Array,
  ) {}

  static of(whole: PartCircuit, globalOf: Map<string, number>, chosen: readonly number[], valueOf: (el: Element, i: number) => Element): PartSolve | undefined {
    const { circuit, rail } = whole;
    const nodeOf = new Map<number, number>([[0, 0]]);
    const globalNode = [0];
    const local = (n: number): number => {
      let k = nodeOf.get(n);
      if (k === undefined) {
        nodeOf.set(n, (k = globalNode.length));
        globalNode.push(n);
      }
      return k;
    };
    const elements = chosen.map((i) => ({ ...valueOf(circuit.elements[i]!, i), nodes: circuit.elements[i]!.nodes.map(local) }) as Element);
    const part: Circuit = { ...circuit, nodes: globalNode.map((n) => circuit.nodes[n] ?? '0'), elements };
    delete part.detachedNodes;
    const solver = new DcSolver(part);
    const n = solver.unknownCount;
    const toGlobal = new Int32Array(n);
    const kind = new Uint8Array(n);
    for (let k = 0; k < n; k++) {
      const u = solver.unknowns[k]!;
      if (u.kind === 'node') {
        toGlobal[k] = globalNode[u.node]! - 1;
        kind[k] = rail[globalNode[u.node]!] === 1 ? RAIL_VOLTAGE : PART_UNKNOWN;
        continue;
      }
      const e = chosen[u.element]!;
      const g = globalOf.get(u.kind === 'internal' ? `${e} ${u.label}` : `${e}`);
      if (g === undefined) return undefined;
      toGlobal[k] = g;
      kind[k] = u.kind === 'branch' && circuit.elements[e]!.nodes.every((x) => rail[x] === 1) ? RAIL_CURRENT : PART_UNKNOWN;
    }
    return new PartSolve(solver, part, Int32Array.from(chosen), toGlobal, kind);
  }

  /** Whether this part is made of the elements `chosen` of `circuit` (a value edit of its circuit) with the resistances `values` holds for them. */
  holds(chosen: readonly number[], circuit: Circuit, values: Float64Array): boolean {
    if (chosen.length !== this.elements.length) return false;
    for (let k = 0; k < chosen.length; k++) {
      const i = chosen[k]!;
      const mine = this.circuit.elements[k]!;
      if (i !== this.elements[k] || mine.kind !== circuit.elements[i]!.kind || (mine.kind === 'R' && !Object.is(mine.resistance, values[i]))) return false;
    }
    return true;
  }

  /**
   * This part with the values of `circuit` (a value edit of the circuit it was made from, `holds` its elements): the
   * solver takes the changed resistances in place and is shared with the result, so this part is not to be solved
   * again. Undefined when the solver cannot take them (the caller builds the part afresh).
   */
  movedTo(circuit: Circuit): PartSolve | undefined {
    const changed: number[] = [];
    const elements = new Array<Element>(this.elements.length);
    for (let k = 0; k < elements.length; k++) {
      const mine = this.circuit.elements[k]!;
      const el = circuit.elements[this.elements[k]!]!;
      elements[k] = { ...el, nodes: mine.nodes } as Element;
      if (el.kind === 'R' && mine.kind === 'R' && !Object.is(el.resistance, mine.resistance)) changed.push(k);
    }
    const part: Circuit = { ...circuit, nodes: this.circuit.nodes, elements };
    delete part.detachedNodes;
    return this.solver.adoptValues(part, changed) ? new PartSolve(this.solver, part, this.elements, this.toGlobal, this.kind) : undefined;
  }

  /** The part solved at `options` from the whole circuit's `start` (vectors of its own); undefined when Newton did not converge. */
  solve(start: Float64Array, options: SolveOptions): DcSolveResult | undefined {
    const guess = new Float64Array(this.toGlobal.length);
    for (let k = 0; k < guess.length; k++) guess[k] = start[this.toGlobal[k]];
    // Not stopped from inside (the corner loop asks before each whole solve) and with vectors of its own.
    const r = this.solver.solve({ ...options, initialGuess: guess, initialGuessTemperatureC: options.temperatureC, reuseResult: false, shouldStop: undefined });
    return r.op.converged ? r : undefined;
  }
}

/** The whole circuit's internal and branch unknowns by `element label` and `element`. */
function globalUnknowns(unknowns: readonly UnknownInfo[]): Map<string, number> {
  const out = new Map<string, number>();
  unknowns.forEach((u, k) => {
    if (u.kind === 'internal') out.set(`${u.element} ${u.label}`, k);
    else if (u.kind === 'branch') out.set(`${u.element}`, k);
  });
  return out;
}
