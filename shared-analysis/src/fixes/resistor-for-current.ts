// Sizes a resistor for a target current: a hand-formula first value, refined with the DC solver, then the nearest standard values re-solved.

import { isBipolar } from '../structures/technology';
import { blockSolver, objectId, type BlockSolver } from './block-solvers';
import { circuitIndex, elementNamed } from './circuit-index';
import type { Circuit, Element, Origin, Resistor } from '../circuit';
import { DcSolver, type DcSolveResult } from '../solve/dc';
import { pointVectors } from '../solve/point';
import type { DeviceRecord, OperatingPoint } from '../solve/types';
import { kindOf, referenceJunctions } from '../structures/catalogue';
import { measureStructure } from '../structures/measure';
import { thermalVolts } from '../structures/formulas';
import type { Structure } from '../structures/types';
import type { Span, TextEdit } from '../types';
import { nearestStandardValues, STANDARD_VALUE_RANGE, type SeriesName } from './e-series';
import { formatEngineering } from './format';

/** What to size and for which current. */
export interface SizingContext {
  circuit: Circuit;
  /** The prepared solver of `circuit`, used for the baseline point (and its warm start). */
  solver: DcSolver;
  /** The structure the resistor feeds, when the target is one of its output currents. */
  structure?: Structure;
  /** Hierarchical name of the resistor to change. */
  resistor: string;
  /** Target current magnitude, amperes. */
  target: number;
  series: SeriesName;
  temperatureC?: number;
  /**
   * The element whose current is the target. Default: the structure's first output when
   * `structure` is given and the resistor is its reference resistor or Widlar emitter resistor,
   * else the resistor itself.
   */
  device?: string;
  /**
   * The analysed operating point of `circuit`: the block a target is sized on starts its solves there,
   * so it settles in the state the whole circuit is in (a circuit with two operating points, a latch,
   * could settle in the other from a cold start) and in fewer Newton iterations.
   */
  point?: OperatingPoint;
  /** An exact resistance found by an earlier sizing of the same target (another series): skips the refinement. */
  knownIdeal?: number;
  /**
   * What each trial solve covers: `affected-block` (the default) only the part of the circuit a
   * change of the resistor can reach (see `affectedBlock`), falling back to the whole circuit when
   * no smaller block exists; `whole-circuit` always the whole circuit (for checks of the former).
   */
  scope?: 'affected-block' | 'whole-circuit';
}

/** One standard value and what it gives. */
export interface SizingCandidate {
  /** Ohms. */
  value: number;
  /** The value as netlist text (`8.2k`). */
  valueText: string;
  /** The target element's current with this value, amperes (solved). */
  current: number;
  /** current/target − 1. */
  error: number;
  /** Which side of the ideal value it lies on; `exact` when the ideal value is itself standard. */
  side: 'below' | 'above' | 'exact';
  /**
   * The solver's unknowns its solve started from (the sizing's point nearest the value): a
   * verification that starts there too reads the same solve back from the block's kept solves.
   */
  start: Float64Array;
}

/** The result of sizing: the exact resistance for the target and the standard candidates. */
export interface SizingResult {
  /** Ohms that meet the target (0 when sizing failed; see `problem`). */
  ideal: number;
  candidates: SizingCandidate[];
  /** The element whose current was targeted. */
  device: string;
  /** How the first value was obtained, for messages. */
  firstValueFrom: 'reference-formula' | 'widlar-formula' | 'ohms-law' | 'known-ideal';
  /** DC solves spent. */
  solves: number;
  /** Why sizing gave no (or only a partial) answer, as a full sentence. */
  problem?: string;
}

/** Relative current accuracy the refinement stops at. */
const CURRENT_RELTOL = 1e-6;
/** Solve budget for the refinement (candidates take two more). */
const MAX_REFINE_SOLVES = 24;

/** A copy of the circuit with one resistor's resistance replaced; everything else is shared, not copied. */
export function withResistance(circuit: Circuit, resistor: Resistor, ohms: number): Circuit {
  return { ...circuit, elements: circuit.elements.map((e) => (e === resistor ? { ...resistor, resistance: ohms } : e)) };
}

function findElement(circuit: Circuit, name: string): Element | undefined {
  return elementNamed(circuit, name);
}

/** Below this many elements a circuit (a target's block) is searched by name directly instead of through its index. */
const SCANNED_CIRCUIT = 32;

/**
 * The index in `circuit.elements` of the first element named `name` (any letter case). A block of a
 * few elements is scanned: building its whole index (names, incidence, fixed nodes) for the three
 * names a target looks up cost more than the look-ups.
 */
function elementPosition(circuit: Circuit, name: string): number | undefined {
  if (circuit.elements.length >= SCANNED_CIRCUIT) {
    const el = findElement(circuit, name);
    return el ? circuitIndex(circuit).position.get(el) : undefined;
  }
  const lower = name.toLowerCase();
  const e = circuit.elements.findIndex((el) => el.name.toLowerCase() === lower);
  return e >= 0 ? e : undefined;
}

/** The record field that is an element's current, by record type (collector, drain, diode or branch current). */
function currentQuantity(type: DeviceRecord['type']): 'ic' | 'id' | 'current' {
  return type === 'bjt' ? 'ic' : type === 'mosfet' || type === 'jfet' || type === 'diode' ? 'id' : 'current';
}

/**
 * How to read a number of element `name`'s record at a point of `circuit` (`quantity` picks the
 * field by the record's type, undefined for none): from the point's vectors by the element's index
 * when the solver left them (a trial reads one number, and no table of every record is built), else
 * from its record.
 */
function recordReader(circuit: Circuit, name: string, quantity: (type: DeviceRecord['type']) => string | undefined): (op: OperatingPoint) => number | undefined {
  const e = elementPosition(circuit, name);
  return (op) => {
    const v = pointVectors(op);
    if (v && e !== undefined) {
      const type = v.type(e);
      const q = type === undefined ? undefined : quantity(type);
      return q === undefined ? undefined : v.value(e, q);
    }
    const rec = op.devices[name] as unknown as Record<string, unknown> | undefined;
    const q = rec ? quantity(rec['type'] as DeviceRecord['type']) : undefined;
    const field = rec && q !== undefined ? rec[q] : undefined;
    return typeof field === 'number' ? field : undefined;
  };
}

/** How to read the current magnitude element `name` carries at a point of `circuit` (see `currentQuantity`). */
function currentReader(circuit: Circuit, name: string): (op: OperatingPoint) => number | undefined {
  const read = recordReader(circuit, name, currentQuantity);
  return (op) => {
    const value = read(op);
    return value !== undefined && Number.isFinite(value) ? Math.abs(value) : undefined;
  };
}

/**
 * Finds the resistance for which the target element carries `target`, and the two nearest
 * standard values of the series on either side, each re-solved with the full circuit.
 *
 * First value, by the structure's formula:
 * - a reference-chain resistor: R = (V+ − V− − VBE(target))/IREF(target), with the chain's
 *   drop taken from the solved point and its junction voltages moved by n·VT·ln(ratio) to the
 *   target current (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4); IREF(target) scales with the
 *   output as the solved mirror ratio says;
 * - a Widlar emitter resistor: R2 = n·VT·ln(IREF/IOUT)/IOUT (Widlar, 1965);
 * - otherwise Ohm's law at the solved voltage.
 * Then a safeguarded secant on ln R against ln I re-solves the circuit with the resistor
 * changed, warm-started from the baseline point. Never throws; a failure is a `problem`.
 */
export function sizeResistorForCurrent(ctx: SizingContext): SizingResult {
  const { circuit, structure, target } = ctx;
  const resistor = findElement(circuit, ctx.resistor);
  const fail = (problem: string, device = ctx.device ?? ctx.resistor, solves = 0): SizingResult => ({
    ideal: 0,
    candidates: [],
    device,
    firstValueFrom: 'ohms-law',
    solves,
    problem,
  });
  if (!resistor || resistor.kind !== 'R') return fail(`There is no resistor named ${ctx.resistor} to size.`);
  if (!(Number.isFinite(target) && target > 0)) return fail('The target current must be a positive number of amperes.');
  if (!(resistor.resistance > 0 && Number.isFinite(resistor.resistance))) {
    return fail(`${resistor.name} has no positive finite resistance to start from.`);
  }

  const role = structure ? resistorRole(structure, resistor.name) : undefined;
  // The output a resistor acts on: the one it degenerates (Widlar), else the structure's first output.
  const actedOn =
    role === 'widlar'
      ? structure?.outputs.find((o) => o.degeneration?.resistor.toLowerCase() === resistor.name.toLowerCase())
      : structure?.outputs[0];
  const deviceName =
    ctx.device !== undefined ? findElement(circuit, ctx.device)?.name ?? ctx.device : role && actedOn ? actedOn.device : resistor.name;
  if (!findElement(circuit, deviceName)) return fail(`There is no element named ${deviceName} whose current could be targeted.`, deviceName);

  let solves = 0;
  const baseOptions = { temperatureC: ctx.temperatureC };
  // Every trial rebuilds a solver for the changed circuit, so the trials are solved on the smallest
  // part of the circuit that a change of this resistor can move, when one exists.
  const structureDevices = structure ? [...structure.devices, ...structure.reference.elements] : [];
  const local = ctx.scope === 'whole-circuit' ? undefined : sizingBlock(circuit, resistor, [deviceName, ...structureDevices], ctx.point);
  const block = local?.circuit;
  const work = block ?? circuit;
  const workResistor = block ? (block.elements[elementPosition(block, resistor.name)!] as Resistor) : resistor;
  const baseline = (local ? local.solver : ctx.solver).solve(baseOptions);
  solves++;
  if (!baseline.op.converged) {
    return fail('The circuit has no converged operating point to size from, so no resistor value is offered.', deviceName, solves);
  }
  const warm = baseline.x;
  const deviceCurrent = currentReader(work, deviceName);

  // Each distinct resistance is solved once; the card's own value is the baseline already solved. A
  // trial starts from the solved point nearest it (`start`; the baseline by default), so a small step
  // of the refinement or a standard value beside the refined one takes fewer Newton iterations.
  const seen = new Map<number, Measured | undefined>();
  const measure = (ohms: number, start: Float64Array = warm): Measured | undefined => {
    if (seen.has(ohms)) return seen.get(ohms);
    solves++;
    // On a block, its kept solver takes the trial value as an override (the prepared matrix and its
    // factorisation are reused); the whole circuit's solver belongs to the session, so a trial there
    // gets a solver of its own.
    const result = local
      ? local.solver.solve({ ...baseOptions, initialGuess: start, resistances: { [workResistor.name]: ohms } })
      : new DcSolver(withResistance(work, workResistor, ohms)).solve({ ...baseOptions, initialGuess: start });
    const current = result.op.converged ? deviceCurrent(result.op) : undefined;
    const out = current === undefined ? undefined : { current, x: result.x, start };
    seen.set(ohms, out);
    return out;
  };

  const i0 = deviceCurrent(baseline.op);
  if (i0 === undefined || !(i0 > 0)) {
    return fail(`${deviceName} carries no current at the present operating point, so the change needed cannot be estimated.`, deviceName, solves);
  }
  seen.set(resistor.resistance, { current: i0, x: warm, start: warm });

  if (ctx.knownIdeal !== undefined && Number.isFinite(ctx.knownIdeal) && ctx.knownIdeal > 0) {
    const ideal = clampOhms(ctx.knownIdeal);
    const { candidates, problem } = standardCandidates(ideal, ctx.series, target, measure);
    return { ideal, candidates, device: deviceName, firstValueFrom: 'known-ideal', solves, problem };
  }

  // First value from the structure's formula.
  const tempC = ctx.temperatureC ?? baseline.op.temperatureC;
  const vt = thermalVolts(tempC);
  let first: number;
  let firstValueFrom: SizingResult['firstValueFrom'] = 'ohms-law';
  const resistorVoltage = recordReader(work, resistor.name, (type) => (type === 'resistor' ? 'voltage' : undefined))(baseline.op);
  const resistorCurrent = currentReader(work, resistor.name);
  const vR = resistorVoltage !== undefined ? Math.abs(resistorVoltage) : Math.abs(resistorCurrent(baseline.op) ?? 0) * resistor.resistance;
  const iR = resistorCurrent(baseline.op) ?? 0;
  if (structure && role === 'widlar' && actedOn && deviceName.toLowerCase() === actedOn.device.toLowerCase() && !kindOf(structure.kind).emitterResistorByOhmsLaw) {
    const m = measureStructure(work, baseline.op, structure);
    const nf = deviceNf(circuit, actedOn.device);
    if (!(m.iref > target)) {
      return fail(
        `A Widlar source's output runs below its reference current, but the target ${formatEngineering(target, { unit: 'A' })} is not below IREF = ${formatEngineering(m.iref, { unit: 'A' })}; change the reference resistor instead.`,
        deviceName,
        solves,
      );
    }
    first = (nf * vt * Math.log(m.iref / target)) / target;
    firstValueFrom = 'widlar-formula';
  } else if (structure && role === 'reference' && iR > 0) {
    // Mirror ratio from the solved point keeps finite beta and area ratios in the inversion.
    const ratio = deviceName.toLowerCase() === resistor.name.toLowerCase() ? 1 : i0 / iR;
    const iRefTarget = target / ratio;
    // Bipolar junctions move by n·VT·ln(ratio); a MOS gate–source drop follows the square law
    // instead, which the refinement below takes care of, so its first value keeps the drop fixed.
    const bipolar = isBipolar(structure.technology);
    const junctions = bipolar ? Math.max(1, referenceJunctions(structure)) : 0;
    const vAvailable = vR - junctions * deviceNf(circuit, structure.reference.device) * vt * Math.log(iRefTarget / iR);
    first = vAvailable > 0 ? vAvailable / iRefTarget : resistor.resistance * (i0 / target);
    firstValueFrom = 'reference-formula';
  } else {
    // The resistor's own current, or an element whose current falls roughly as 1/R.
    first = resistor.resistance * (i0 / target);
  }
  if (!(Number.isFinite(first) && first > 0)) first = resistor.resistance * (i0 / target);
  first = clampOhms(first);

  // Safeguarded secant on g(u) = ln(I/target) with u = ln R. The current usually falls with R;
  // a bracket, once found, is kept and bisected whenever the secant step leaves it.
  type Pt = { u: number; g: number; current: number; x: Float64Array };
  const evalAt = (ohms: number, start: Pt): Pt | undefined => {
    const r = measure(ohms, start.x);
    return r ? { u: Math.log(ohms), g: Math.log(r.current / target), current: r.current, x: r.x } : undefined;
  };
  let a: Pt | undefined = { u: Math.log(resistor.resistance), g: Math.log(i0 / target), current: i0, x: warm };
  let b = evalAt(first, a);
  if (!b) return fail(`The circuit does not converge with ${resistor.name} = ${formatEngineering(first, { unit: 'Ω' })}, so no value is offered.`, deviceName, solves);
  let lo: Pt | undefined; // g > 0 side (too much current)
  let hi: Pt | undefined; // g < 0 side
  const noteBracket = (p: Pt): void => {
    if (p.g > 0 && (!lo || p.g < lo.g)) lo = p;
    if (p.g < 0 && (!hi || p.g > hi.g)) hi = p;
  };
  noteBracket(a);
  noteBracket(b);
  let best = Math.abs(b.g) < Math.abs(a.g) ? b : a;
  const uMin = Math.log(STANDARD_VALUE_RANGE.min);
  const uMax = Math.log(STANDARD_VALUE_RANGE.max);
  let refineSolves = 1;
  while (Math.abs(best.g) > CURRENT_RELTOL && refineSolves < MAX_REFINE_SOLVES) {
    let u: number;
    const slope = a && b.u !== a.u ? (b.g - a.g) / (b.u - a.u) : NaN;
    if (Number.isFinite(slope) && slope !== 0) u = b.u - b.g / slope;
    else u = b.u + (b.g > 0 ? 0.5 : -0.5); // no slope yet: step R by a factor of e^0.5 in the right direction
    if (lo && hi) {
      const [uA, uB] = lo.u < hi.u ? [lo.u, hi.u] : [hi.u, lo.u];
      if (!(u > uA && u < uB)) u = (lo.u + hi.u) / 2;
    }
    u = Math.min(Math.max(u, uMin), uMax);
    if (u === b.u) break;
    const p = evalAt(Math.exp(u), b);
    refineSolves++;
    if (!p) {
      // Step back halfway towards the best point when a trial value does not converge.
      const q = evalAt(Math.exp((u + best.u) / 2), best);
      refineSolves++;
      if (!q) break;
      a = b;
      b = q;
    } else {
      a = b;
      b = p;
    }
    noteBracket(b);
    if (Math.abs(b.g) < Math.abs(best.g)) best = b;
  }

  const ideal = Math.exp(best.u);
  let problem: string | undefined;
  if (Math.abs(best.g) > 1e-3) {
    const atEdge = best.u <= uMin + 1e-9 || best.u >= uMax - 1e-9;
    // A value pinned at the end of the range is not a design answer; offer nothing rather than 1 GΩ.
    if (atEdge) {
      return {
        ideal,
        candidates: [],
        device: deviceName,
        firstValueFrom,
        solves,
        problem: `No resistance between 1 mΩ and 1 GΩ gives ${deviceName} ${formatEngineering(target, { unit: 'A' })}; the nearest it gets is ${formatEngineering(best.current, { unit: 'A' })}.`,
      };
    }
    // Every trial on one side of the target: the current levels off before reaching it (a saturating
    // output, a load or supply that caps it), so no value of this resistor meets it. Say how far it gets.
    if (!(lo && hi) && Math.abs(Math.exp(best.g) - 1) > 0.01) {
      return {
        ideal,
        candidates: [],
        device: deviceName,
        firstValueFrom,
        solves,
        problem: `No value of ${resistor.name} gives ${deviceName} ${formatEngineering(target, { unit: 'A' })}: the nearest reachable is ${formatEngineering(best.current, { unit: 'A' })} (with ${resistor.name} ≈ ${formatEngineering(ideal, { unit: 'Ω' })}), where the current levels off, so something else (a load, the supply, a device leaving its region) limits it.`,
      };
    }
    problem = `The refinement stopped ${formatPercentPlain(Math.exp(best.g) - 1)} from the target after ${solves} solves; the values offered are the nearest found.`;
  }

  const standard = standardCandidates(ideal, ctx.series, target, (ohms) => measure(ohms, best.x));
  const candidates = standard.candidates;
  problem = problem ?? standard.problem;
  return { ideal, candidates, device: deviceName, firstValueFrom, solves, problem };
}

/** Below this share of the whole circuit's elements a block is worth solving on its own. */
const BLOCK_WORTHWHILE = 0.5;

/**
 * The part of `circuit` whose operating point a change of `resistor` can move, as a circuit of
 * its own (nodes renumbered, names kept), or undefined when that is (nearly) the whole circuit
 * or cannot be told.
 *
 * A node whose voltage is fixed by ideal voltage sources to ground (a supply rail: ground, then
 * every node joined to a fixed one through a V source) does not move whatever the rest does, so the
 * nodal equations of the nodes reached from the resistor without crossing a fixed node involve only
 * the elements touching them and the fixed voltages (nodal analysis: a node held by an ideal
 * voltage source is no unknown). The block is those elements
 * plus the V sources that fix its rail voltages; its solution equals the whole circuit's at every
 * element it holds (but the rail sources, whose currents include the rest of the circuit's). Circuits with controlled sources (whose control may sit anywhere) are not
 * split, nor is one where some element in `mustHold` falls outside the block or is a fixing source.
 */
export function affectedBlock(circuit: Circuit, resistor: Resistor, mustHold: string[]): Circuit | undefined {
  const n = circuit.nodes.length;
  // Incidence, fixed nodes and names come from the circuit's index, built once: a target costs the size of its block.
  const index = circuitIndex(circuit);
  if (!index.splittable) return undefined;
  const { fixed, pinning, touchStart, touching, position } = index;
  const els = circuit.elements;
  const start = position.get(resistor);
  if (start === undefined) return undefined;

  const inBlock = new Set<number>([start]);
  const seen = new Set<number>();
  const queue: number[] = [];
  for (const k of resistor.nodes) if (!fixed[k] && !seen.has(k)) seen.add(k), queue.push(k);
  while (queue.length > 0) {
    const k = queue.pop()!;
    for (let t = touchStart[k]; t < touchStart[k + 1]; t++) {
      const i = touching[t];
      if (inBlock.has(i)) continue;
      inBlock.add(i);
      for (const j of els[i].nodes) if (!fixed[j] && !seen.has(j)) seen.add(j), queue.push(j);
    }
  }
  for (const p of pinning) if (inBlock.has(position.get(p)!)) return undefined; // a fixing source carries the block's current together with others'
  for (const p of pinning) inBlock.add(position.get(p)!);
  if (inBlock.size > BLOCK_WORTHWHILE * els.length) return undefined;
  const names = new Set([...inBlock].map((i) => els[i].name.toLowerCase()));
  if (mustHold.some((m) => !names.has(m.toLowerCase()))) return undefined;

  // Keep the circuit's element order so the block's records come out as the whole circuit's would.
  const order = [...inBlock].sort((a, b) => a - b);
  // Renumber: ground stays 0, the block's other nodes follow in the circuit's order.
  const used = new Set<number>();
  for (const i of order) for (const k of els[i].nodes) used.add(k);
  const map = new Map<number, number>([[0, 0]]);
  const nodes: string[] = [circuit.nodes[0]];
  for (const k of [...used].sort((a, b) => a - b)) if (k !== 0 && k < n) map.set(k, nodes.length), nodes.push(circuit.nodes[k]);
  const elements = order.map((i) => ({ ...els[i], nodes: els[i].nodes.map((k) => map.get(k)!) }) as Element);
  return { ...circuit, nodes, elements };
}

/** The answers of the block being sized (`keptSolves`); another block's first solve empties them. */
let keptInUse: Map<Float64Array | undefined, Map<string, DcSolveResult>> | undefined;

/** What a sizing solves on: a solver, or a block's solver that keeps its answers (`keptSolves`). */
export type Solves = Pick<DcSolver, 'solve'>;

const blocks = new WeakMap<Circuit, Map<string, { circuit: Circuit; solver: Solves } | null>>();

/**
 * `solver` with each answer kept by the solve's temperature, resistance overrides and initial
 * guess, for a block whose solves repeat: a target's sizing solves the unchanged block, refines, and
 * re-solves the nearest standard values; a finer series' sizing of the same target starts from the
 * same unchanged block; and the verification of every value offered solves the unchanged block and
 * each value again, started from the unchanged point as the sizing's trials were, so it reads the
 * solve its sizing made and every distinct circuit is solved once.
 *
 * The initial guess is part of the key because it can change the answer, not only the way to it: a
 * block with more than one operating point (a latch) settles in the state nearest its start. A guess
 * is known by its array (the solver's results are never written to afterwards), so only a solve from
 * the very same start is read back. Options beyond these are solved afresh. Only the block in use
 * keeps its answers: a thousand targets' answers kept at once made the collector's work grow more
 * than the repeated solves cost.
 */
function keptSolves(solver: BlockSolver, start: { x: Float64Array; temperatureC: number } | undefined): Solves {
  // By the start's very array, then by temperature and resistances. (A number per start in a WeakMap, made for every
  // trial's solution, cost the collector more than the look-up saved: this map is emptied with the block's answers.)
  const kept = new Map<Float64Array | undefined, Map<string, DcSolveResult>>();
  return {
    solve: (asked = {}) => {
      if (keptInUse !== kept) {
        keptInUse?.clear();
        keptInUse = kept;
      }
      // A solve told no start, at the analysed point's temperature, starts from that point.
      const fromPoint = start && !asked.initialGuess && (asked.temperatureC === undefined || asked.temperatureC === start.temperatureC);
      const options = fromPoint ? { ...asked, initialGuess: start.x } : asked;
      const { temperatureC, resistances, initialGuess, ...rest } = options;
      if (Object.keys(rest).length > 0) return solver.solve(options);
      let fromStart = kept.get(initialGuess);
      if (!fromStart) kept.set(initialGuess, (fromStart = new Map()));
      const key = `${String(temperatureC)}|${JSON.stringify(resistances ?? {})}`;
      let result = fromStart.get(key);
      if (!result) fromStart.set(key, (result = solver.solve(options)));
      return result;
    },
  };
}

/**
 * `affectedBlock` of a resistor with a prepared solver of it (shared with the blocks of the same
 * shape, see `blockSolver`), kept per circuit, resistor and analysed point so the sizing of a target and the re-solves that verify its candidates share them; undefined
 * when the circuit is not split there. The block's solution equals the whole circuit's at every
 * element it holds, so a structure inside it can be measured on it. With `point` (the analysed
 * operating point of `circuit`), a solve on the block told no start starts from the point's node
 * voltages: the block stays in the state the circuit is in.
 */
export function sizingBlock(circuit: Circuit, resistor: Resistor, mustHold: string[], point?: OperatingPoint): { circuit: Circuit; solver: Solves } | undefined {
  let perCircuit = blocks.get(circuit);
  if (!perCircuit) blocks.set(circuit, (perCircuit = new Map()));
  const key = `${resistor.name}\u0000${objectId(point)}\u0000${mustHold.map((m) => m.toLowerCase()).sort().join('\u0000')}`;
  let entry = perCircuit.get(key);
  if (entry === undefined) {
    const block = affectedBlock(circuit, resistor, mustHold);
    const solver = block && blockSolver(circuit, block);
    entry = block && solver ? { circuit: block, solver: keptSolves(solver, pointOnBlock(block, solver.unknownCount, point)) } : null;
    perCircuit.set(key, entry);
  }
  return entry ?? undefined;
}

/**
 * The block's unknowns at `point`: its node voltages (the solver's first unknowns, node k at k − 1),
 * with the block's other unknowns (branch currents, internal nodes) left at 0 for Newton to find.
 * Undefined when the point did not converge or lacks a node.
 */
function pointOnBlock(block: Circuit, size: number, point: OperatingPoint | undefined): { x: Float64Array; temperatureC: number } | undefined {
  if (!point?.converged) return undefined;
  const x = new Float64Array(size);
  for (let k = 1; k < block.nodes.length && k - 1 < size; k++) {
    const v = point.nodes[block.nodes[k]];
    if (typeof v !== 'number' || !Number.isFinite(v)) return undefined;
    x[k - 1] = v;
  }
  return { x, temperatureC: point.temperatureC };
}

/** A trial's answer: the target's current, the solver's unknowns there, and where its solve started. */
type Measured = { current: number; x: Float64Array; start: Float64Array };

/** The standard neighbours of `ideal` in `series`, each re-solved through `measure`. */
function standardCandidates(
  ideal: number,
  series: SeriesName,
  target: number,
  measure: (ohms: number) => Measured | undefined,
): { candidates: SizingCandidate[]; problem?: string } {
  const candidates: SizingCandidate[] = [];
  const nearest = nearestStandardValues(ideal, series);
  if (!nearest) return { candidates, problem: 'No standard value could be found for the resistance.' };
  const values: { v: number; side: SizingCandidate['side'] }[] = nearest.exact
    ? [{ v: nearest.below, side: 'exact' }]
    : [
        { v: nearest.below, side: 'below' },
        { v: nearest.above, side: 'above' },
      ];
  for (const { v, side } of values) {
    const r = measure(v);
    if (!r) continue;
    candidates.push({
      value: v,
      valueText: formatEngineering(v, { style: 'netlist', digits: 4 }),
      current: r.current,
      error: r.current / target - 1,
      side,
      start: r.start,
    });
  }
  const problem = candidates.length < values.length ? 'The circuit did not converge with one of the standard values, so it is not offered.' : undefined;
  return { candidates, problem };
}

function formatPercentPlain(ratio: number): string {
  return `${Number((ratio * 100).toPrecision(2))} %`;
}

function clampOhms(r: number): number {
  return Math.min(Math.max(r, STANDARD_VALUE_RANGE.min), STANDARD_VALUE_RANGE.max);
}

/** How a resistor takes part in a structure: a resistor of the reference chain, or a Widlar emitter resistor. */
function resistorRole(s: Structure, name: string): 'reference' | 'widlar' | undefined {
  const want = name.toLowerCase();
  if (s.outputs.some((o) => o.degeneration?.resistor.toLowerCase() === want)) return 'widlar';
  if (s.reference.feed === 'resistor' && s.reference.elements.some((e) => e.toLowerCase() === want)) return 'reference';
  return undefined;
}

/** NF of a bipolar device (1 for MOS or when unknown). */
function deviceNf(circuit: Circuit, name: string | undefined): number {
  const dev = name ? findElement(circuit, name) : undefined;
  const nf = dev && dev.kind === 'Q' ? dev.model.params['NF'] : undefined;
  return nf !== undefined && Number.isFinite(nf) && nf > 0 ? nf : 1;
}

/**
 * The edit that writes `newText` over a card's value field (`origin.valueSpan`) and nothing
 * else, so spacing, comments and other fields stay as they were. Undefined when the card has
 * no value field to replace.
 */
export function valueEdit(uri: string, origin: Origin, newText: string): TextEdit | undefined {
  if (!origin.valueSpan) return undefined;
  const span: Span = { start: origin.valueSpan.start, end: origin.valueSpan.end };
  return { uri, span, newText };
}
