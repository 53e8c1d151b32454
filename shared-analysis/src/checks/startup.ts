// Start-up of self-biased loops: whether the zero-current state also satisfies the circuit, at nominal conditions and at the corners.

import type { ResolvedOptions } from '../analysis';
import type { Circuit, Element } from '../circuit';
import { DcSolver } from '../solve/dc';
import type { OperatingPoint } from '../solve/types';
import { kindName, kindOf } from '../structures/catalogue';
import { eng } from '../structures/format';
import { isAtTemperature, thermalVolts } from '../structures/formulas';
import { feedLoops } from '../structures/loops';
import { measureStructure } from '../structures/measure';
import { polaritySign, topologyOf, type Topology, type Transistor } from '../structures/topology';
import type { StartupResult, Structure } from '../structures/types';
import type { Finding, RelatedLocation, Severity } from '../types';
import { cornerScope, cornerSourceValues, cornerSpecs, processCornerParameters, supplySources } from './corners';
import { nameTable } from '../names';
import { cardTnomC } from '../devices/physics';

/** Finding codes this module owns, with their default severity and a one-line summary for the README. */
export const STARTUP_CODES: Record<string, { severity: Severity; summary: string }> = {
  'bias-loop-can-stay-off': {
    severity: 'warning',
    summary:
      'A self-biased loop (structures that feed each other round, such as a ΔVBE cell or a beta-multiplier reference with its closing mirror) also balances at zero current: with the loop off nothing drives it on, so at power-up it can stay dead. Says at which conditions, what the solver settled on, and the usual remedies (a start-up resistor or a start-up device).',
  },
};

/** Everything `checkStartup` reads. */
export interface StartupContext {
  circuit: Circuit;
  structures: Structure[];
  /** The nominal operating point (the state the solver chose). */
  op: OperatingPoint;
  options: ResolvedOptions;
}

/** Loops beyond this many are checked together in one solve with every loop off (a netlist of many instances of one cell). */
const MAX_SEPARATE_LOOPS = 16;
/** Below this reference current (A) the solved state counts as the loop at rest, not a conducting state. */
const SETTLED_ON = 1e-9;
/** A junction counts as off while it carries less than this fraction of the loop's solved current. */
const OFF_FRACTION = 1e-6;

/**
 * Finds every self-biased loop (structures whose reference nodes are driven round by each other's
 * outputs, `feedLoops`), and asks whether the zero-current state satisfies the circuit: the loop's
 * devices are taken out (they carry no current), the rest of the circuit is solved, and the loop's
 * nodes are checked for voltages that keep every loop junction off — a system of difference
 * constraints between node voltages, feasible exactly when no cycle of bounds is negative
 * (Bellman–Ford; Cormen, Leiserson, Rivest and Stein, "Introduction to Algorithms", ch. 24).
 * Nodes only the loop's devices touch are free; nodes the rest of the circuit fixes are not. A start-up
 * resistor or device drives a loop node with the loop off and makes the zero state impossible.
 *
 * Repeated at every corner of the corner table (`cornerSpecs`, when corners are enabled). Beta does not
 * move the zero state (no device conducts in it), so corners that differ only in beta share one verdict
 * and one loop-off solve; supply, temperature, the MOS process and single-supply corners each get theirs.
 * The state the solver chose at each corner is the corner table's own solve, added by `fillStartupCorners`
 * once the corners are solved (in the same pass, or a host's second phase), so it costs nothing more and
 * the check itself does not depend on the corners having run. Where a start-up path exists, the whole circuit is solved once from the all-off
 * state at nominal and once at the hardest corner (lowest supply, then coldest, then slow MOS: where a
 * start-up resistor delivers least and the junctions it must open need most, common practice), which
 * shows by a solve that the path turns the loop on there too.
 *
 * Fills `structure.startup` on every loop member and returns one warning per loop that can rest at zero current.
 */
export function checkStartup(ctx: StartupContext): Finding[] {
  const { circuit, structures, op } = ctx;
  if (!op.converged || structures.length === 0) return [];
  const topo = topologyOf(circuit);
  const loops = feedLoops(topo, structures);
  if (loops.length === 0) return [];
  const findings: Finding[] = [];
  const { conditions, labels: cornerLabels } = startupConditions(circuit, ctx.options, op.temperatureC);
  const batched = loops.length > MAX_SEPARATE_LOOPS;
  const allOff = batched ? offSolver(circuit, new Set(loops.flat().flatMap((s) => s.devices))) : undefined;
  const full = batched ? undefined : new DcSolver(circuit);
  for (const loop of loops) {
    const devices = new Set(loop.flatMap((s) => s.devices));
    const solver = allOff ?? offSolver(circuit, devices);
    const main = mainOf(loop);
    const current = referenceCurrent(main, op);
    const zeroAt = new Set<string>();
    const checked = new Set<string>();
    let nominal: Verdict | undefined;
    let nominalOff: OperatingPoint | undefined;
    let hardest: { cond: Condition; verdict: Verdict; offOp: OperatingPoint } | undefined;
    // Each corner's loop-off solve starts from the nominal one (conditions[0]), as the corner table's solves start from the nominal point.
    let warm: { x: Float64Array; temperatureC: number } | undefined;
    for (const cond of conditions) {
      let offOp: OperatingPoint | undefined;
      try {
        const r = solver.solve({
          temperatureC: cond.temperatureC,
          sourceValues: cond.sourceValues,
          ...(cond.deviceParameters ? { deviceParameters: cond.deviceParameters } : {}),
          ...(warm ? { initialGuess: warm.x, initialGuessTemperatureC: warm.temperatureC } : {}),
        });
        offOp = r.op.converged ? r.op : undefined;
        if (cond.nominal && offOp) warm = { x: r.x, temperatureC: cond.temperatureC };
      } catch {
        offOp = undefined;
      }
      if (!offOp) continue;
      const v = zeroStateVerdict(topo, devices, offOp, current, cond.temperatureC, circuit, cond.deviceParameters);
      for (const label of cond.labels) {
        if (label === '') {
          nominal = v;
          nominalOff = offOp;
          continue;
        }
        checked.add(label);
        if (v.feasible) zeroAt.add(label);
      }
      if (!cond.nominal && !v.feasible && v.path && v.rest && (!hardest || harder(cond, hardest.cond))) hardest = { cond, verdict: v, offOp };
    }
    const labels = cornerLabels;
    const result: StartupResult = {
      loopDevices: [...devices],
      loopStructures: loop.map((s) => s.id),
      zeroStateNominal: nominal?.feasible ?? false,
      zeroStateCorners: labels.filter((l) => zeroAt.has(l)),
      ...(nominal && !nominal.feasible && nominal.path ? { startupPath: nominal.path } : {}),
      solvedCurrent: current,
      corners: labels.filter((l) => checked.has(l)).map((label) => ({ label, zeroState: zeroAt.has(label) })),
    };
    if (nominal?.rest && nominalOff) {
      const start = allOffStart(full, circuit, topo, devices, main, nominalOff, nominal, { temperatureC: op.temperatureC });
      if (start) result.allOffStart = { restNodes: start.restNodes, ...(start.solved ? { solved: start.solved } : {}) };
    }
    if (hardest && nominal && !nominal.feasible) {
      const c = hardest.cond;
      const start = allOffStart(full, circuit, topo, devices, main, hardest.offOp, hardest.verdict, { temperatureC: c.temperatureC, sourceValues: c.sourceValues, deviceParameters: c.deviceParameters });
      // Measured as the corner table measures IREF, so it compares with the state that corner's own solve chose.
      if (start?.solved) result.allOffStartCorner = { label: c.label, solved: { converged: start.solved.converged, current: start.solved.converged ? start.iref ?? 0 : 0 } };
    }
    for (const s of loop) s.startup = result;
    if (result.zeroStateNominal || result.zeroStateCorners.length > 0) findings.push(loopFinding(topo, loop, result));
  }
  return findings;
}

/**
 * Adds to every loop's start-up record the state each corner's own solve chose (the loop's IREF in the
 * corner table), once the corners have been solved: by the one-pass analysis, or by a host's second
 * phase (`addCorners`), so both show the same. No solve of its own.
 */
export function fillStartupCorners(structures: Structure[]): void {
  const byId = new Map(structures.map((s) => [s.id, s]));
  const done = new Set<StartupResult>();
  for (const s of structures) {
    const r = s.startup;
    if (!r || done.has(r) || !r.corners) continue;
    done.add(r);
    const loop = r.loopStructures.map((id) => byId.get(id)).filter((x): x is Structure => !!x);
    if (loop.length === 0) continue;
    const main = mainOf(loop);
    if (main.corners.length === 0) continue;
    r.corners = r.corners.map(({ label, zeroState }) => {
      const c = main.corners.find((x) => x.label === label);
      if (!c) return { label, zeroState };
      return { label, zeroState, converged: c.converged, ...(c.converged && Number.isFinite(c.iref) ? { solvedCurrent: c.iref } : {}) };
    });
  }
}

/**
 * One state of the rest of the circuit the zero state is checked in: nominal, or one corner's supply,
 * temperature and MOS process. `labels` are the corner-table labels that share it ('' for nominal):
 * corners that differ only in beta.
 */
interface Condition {
  label: string;
  labels: string[];
  nominal: boolean;
  temperatureC: number;
  /** Scale of the supply that moves (every supply, or the one of a single-source corner). */
  supplyScale: number;
  process?: 'slow' | 'fast';
  sourceValues?: Record<string, number>;
  deviceParameters?: Record<string, Record<string, number>>;
}

/** Whether `a` is a harder condition to start in than `b`: lower supply, then colder, then slow MOS. */
function harder(a: Condition, b: Condition): boolean {
  if (a.supplyScale !== b.supplyScale) return a.supplyScale < b.supplyScale;
  if (a.temperatureC !== b.temperatureC) return a.temperatureC < b.temperatureC;
  return a.process === 'slow' && b.process !== 'slow';
}

/** The conditions to check, nominal first, and every corner label in the corner table's order. */
function startupConditions(circuit: Circuit, options: ResolvedOptions, nominalC: number): { conditions: Condition[]; labels: string[] } {
  const nominal: Condition = { label: '', labels: [''], nominal: true, temperatureC: nominalC, supplyScale: 1 };
  const out: Condition[] = [nominal];
  const labels: string[] = [];
  const sources = supplySources(circuit);
  const dcOf = new Map<string, number>();
  for (const e of circuit.elements) if (e.kind === 'V') dcOf.set(e.name, e.dc);
  const byKey = new Map<string, Condition>([['|1|' + nominalC + '|', nominal]]);
  // The corner table's own corners; beta does not move the zero state (no device conducts), so corners that differ only in beta share one condition.
  for (const spec of cornerSpecs(options, nominalC, sources, cornerScope(circuit))) {
    labels.push(spec.label);
    const scale = spec.singleSource === undefined ? spec.supplyScale : spec.singleScale ?? 1;
    const key = `${spec.singleSource ?? ''}|${scale}|${spec.temperatureC}|${spec.process ?? ''}`;
    const known = byKey.get(key);
    if (known) {
      known.labels.push(spec.label);
      if (spec.betaScale === 1 && !known.nominal) known.label = spec.label;
      continue;
    }
    const cond: Condition = {
      label: spec.label,
      labels: [spec.label],
      nominal: false,
      temperatureC: spec.temperatureC,
      supplyScale: scale,
      ...(spec.process ? { process: spec.process, deviceParameters: processCornerParameters(circuit, options, spec.process) } : {}),
      sourceValues: cornerSourceValues(spec, sources, dcOf),
    };
    byKey.set(key, cond);
    out.push(cond);
  }
  return { conditions: out, labels };
}

/** A solver for the circuit with the given devices taken out (they carry no current in the zero state). */
function offSolver(circuit: Circuit, devices: Set<string>): DcSolver {
  const elements = circuit.elements.filter((e) => !devices.has(e.name));
  return new DcSolver({ ...circuit, elements });
}

/** The structure that sets a loop's current (a kind with its own loop equation), else the loop's first. */
function mainOf(loop: Structure[]): Structure {
  return loop.find((s) => kindOf(s.kind).ownReference) ?? loop[0];
}

/** The collector (drain) current of a structure's reference device at the operating point. */
function referenceCurrent(s: Structure, op: OperatingPoint): number {
  const rec = op.devices[s.reference.device];
  const i = rec?.type === 'bjt' ? Math.abs(rec.ic) : rec?.type === 'mosfet' || rec?.type === 'jfet' ? Math.abs(rec.id) : 0;
  return Number.isFinite(i) ? i : 0;
}

interface Verdict {
  feasible: boolean;
  path?: StartupResult['startupPath'];
  /** Voltages of the loop's free nodes that keep every loop junction off (with the start-up node left at its driven voltage when there is a path). */
  rest?: Map<number, number>;
}

/**
 * The all-off state of a loop: the rest of the circuit at its loop-off solution, the loop's free
 * nodes at voltages that keep every loop junction off (`restNodes`). When a start-up path exists,
 * the whole circuit (loop devices in) is solved from that start, so the record says which state
 * the solver reaches from power-up; the caller compares its current with the nominal solution.
 * Without a path the all-off state is not solved: with ideal devices the off nodes are held only by
 * the solver's leakage aid, which would float them (a continuum of zero-current states), so the
 * verdict there is the bounds above, and `restNodes` is one such state.
 */
function allOffStart(
  full: DcSolver | undefined,
  circuit: Circuit,
  topo: Topology,
  devices: Set<string>,
  main: Structure,
  offOp: OperatingPoint,
  verdict: Verdict,
  at: { temperatureC: number; sourceValues?: Record<string, number>; deviceParameters?: Record<string, Record<string, number>> },
): (StartupResult['allOffStart'] & { iref?: number }) | undefined {
  const rest = verdict.rest ?? new Map<number, number>();
  const n = full?.unknownCount ?? circuit.nodes.length - 1;
  const guess = new Float64Array(Math.max(n, 0));
  for (let i = 1; i < circuit.nodes.length && i - 1 < guess.length; i++) {
    const v = rest.get(i) ?? offOp.nodes[circuit.nodes[i]];
    guess[i - 1] = v !== undefined && Number.isFinite(v) ? v : 0;
  }
  const loopNodes = new Set<number>();
  for (const d of devices) {
    const t = topo.byName.get(d);
    if (t) loopNodes.add(t.out).add(t.ctrl).add(t.common);
  }
  const restNodes: Record<string, number> = nameTable();
  for (const k of loopNodes) restNodes[topo.nodeName(k)] = k === 0 ? 0 : guess[k - 1];
  if (!full || verdict.feasible || !verdict.path) return { restNodes };
  let r;
  try {
    r = full.solve({
      temperatureC: at.temperatureC,
      initialGuess: guess,
      initialGuessTemperatureC: at.temperatureC,
      ...(at.sourceValues ? { sourceValues: at.sourceValues } : {}),
      ...(at.deviceParameters ? { deviceParameters: at.deviceParameters } : {}),
    });
  } catch {
    return { restNodes };
  }
  if (!r.op.converged) return { restNodes, solved: { converged: false, current: 0, nodes: {} } };
  const nodes: Record<string, number> = nameTable();
  for (const k of loopNodes) {
    const v = r.op.nodes[topo.nodeName(k)];
    if (v !== undefined) nodes[topo.nodeName(k)] = v;
  }
  return { restNodes, solved: { converged: true, current: referenceCurrent(main, r.op), nodes }, iref: measureStructure(circuit, r.op, main, topo).iref };
}

/** One bound x[to] − x[from] ≤ w between node voltages (node −1 is the fixed reference, 0 V). */
interface Bound {
  from: number;
  to: number;
  w: number;
}

/**
 * Whether the loop's devices can all be off with the rest of the circuit at `offOp`: every junction
 * (base–emitter and base–collector; gate–source and gate–drain) at most at its off voltage, in its
 * own polarity. BJT: the voltage at which the junction carries OFF_FRACTION of the loop's current
 * (never above 0.4 V); MOS: the threshold (no current below it in the square law); JFET: the pinch-off voltage.
 */
function zeroStateVerdict(
  topo: Topology,
  devices: Set<string>,
  offOp: OperatingPoint,
  loopI: number,
  temperatureC: number,
  circuit: Circuit,
  parameters?: Record<string, Record<string, number>>,
): Verdict {
  const loopT = [...devices].map((d) => topo.byName.get(d)).filter((t): t is Transistor => !!t);
  const nodes = new Set<number>();
  for (const t of loopT) nodes.add(t.out).add(t.ctrl).add(t.common);
  const fixed = fixedNodes(topo, devices, offOp, nodes);
  const bounds: Bound[] = [];
  for (const t of loopT) {
    const sign = polaritySign(t.tech);
    const w = offVoltage(t, loopI, temperatureC, circuit, parameters?.[t.name]);
    // sign·(V(ctrl) − V(x)) ≤ w for x the common and the output terminal.
    for (const x of [t.common, t.out]) {
      if (x === t.ctrl) continue;
      if (sign > 0) bounds.push({ from: x, to: t.ctrl, w });
      else bounds.push({ from: t.ctrl, to: x, w });
    }
  }
  const potentials = feasibleBounds(bounds, fixed);
  const feasible = potentials !== undefined;
  if (feasible) return { feasible, rest: restVoltages(bounds, fixed, potentials) };
  // Which fixed loop node makes it impossible: free it and see (rails are not a start-up path).
  const rails = new Set<number>([0]);
  for (const e of circuit.elements) if (e.kind === 'V') for (const n of e.nodes) if (fixed.has(n)) rails.add(n);
  for (const n of [...fixed.keys()].filter((k) => nodes.has(k) && !rails.has(k))) {
    const without = new Map(fixed);
    without.delete(n);
    const freed = feasibleBounds(bounds, without);
    if (!freed) continue;
    const drivers = topo
      .conducting(n)
      .filter((a) => !devices.has(a.element.name))
      .map((a) => a.element.name);
    const turnsOn = loopT.find((t) => t.ctrl === n || t.common === n)?.name ?? '';
    return { feasible, path: { node: topo.nodeName(n), volts: fixed.get(n)!, elements: drivers, turnsOn }, rest: restVoltages(bounds, without, freed) };
  }
  return { feasible };
}

/** Biases (V) of the loop's junctions in an all-off start, when the free nodes allow it: well inside off, so Newton is not already on the exponential's slope. */
const REST_BIAS = 1e-3;

/**
 * Voltages for the free loop nodes in an all-off start: every junction at most REST_BIAS forward
 * where the fixed nodes allow it, else the potentials that keep them below their off voltage.
 */
function restVoltages(bounds: Bound[], fixed: Map<number, number>, fallback: Map<number, number>): Map<number, number> {
  const deep = feasibleBounds(
    bounds.map((b) => ({ ...b, w: Math.min(b.w, REST_BIAS) })),
    fixed,
  );
  return freeOf(deep ?? fallback, fixed);
}

/** The potentials of the nodes that are not fixed (the loop-only nodes an all-off start places). */
function freeOf(potentials: Map<number, number>, fixed: Map<number, number>): Map<number, number> {
  const out = new Map<number, number>();
  for (const [n, v] of potentials) if (n > 0 && !fixed.has(n)) out.set(n, v);
  return out;
}

/** Loop nodes the rest of the circuit fixes, with their voltages (free: tied by the solver or touched only by loop devices). */
function fixedNodes(topo: Topology, devices: Set<string>, offOp: OperatingPoint, loopNodes: Set<number>): Map<number, number> {
  const tied = new Set(offOp.tiedNodes ?? []);
  const fixed = new Map<number, number>();
  for (const n of loopNodes) {
    const name = topo.nodeName(n);
    if (n !== 0 && tied.has(name)) continue;
    const others = topo.conducting(n).filter((a) => !devices.has(a.element.name));
    if (n !== 0 && others.length === 0) continue;
    const v = offOp.nodes[name];
    if (v !== undefined && Number.isFinite(v)) fixed.set(n, v);
  }
  return fixed;
}

/** The junction voltage (own polarity) below which a loop device counts as off. */
function offVoltage(t: Transistor, loopI: number, temperatureC: number, circuit: Circuit, overrides?: Record<string, number>): number {
  // A process corner's model parameters (VTO, KP) replace the model's for this device.
  const p = overrides ? { ...t.element.model.params, ...overrides } : t.element.model.params;
  if (t.element.kind === 'M') return Math.max(polaritySign(t.tech) * (p.VTO ?? 0), 0) + 1e-3;
  // A JFET's channel is off at or below its pinch-off voltage, which keeps the device's own sense (negative for a depletion device).
  if (t.element.kind === 'J') return Number.isFinite(p.VTO) ? p.VTO : -2;
  const is = isAtTemperature(p.IS > 0 ? p.IS : 1e-16, temperatureC, cardTnomC(p, circuit.tnomC), p.XTI ?? 3, p.EG ?? 1.11) * t.scale;
  const nVt = (p.NF > 0 ? p.NF : 1) * thermalVolts(temperatureC);
  const target = Math.max(loopI, 1e-9) * OFF_FRACTION;
  return Math.min(Math.max(nVt * Math.log(target / is + 1), 1e-3), 0.4);
}

/**
 * Feasibility of x[to] − x[from] ≤ w with the fixed nodes pinned to their voltages, by Bellman–Ford
 * from a virtual source: infeasible exactly when the constraint graph has a negative cycle. Returns
 * node voltages that meet every bound (shortest distances less the reference's), or undefined.
 */
function feasibleBounds(bounds: Bound[], fixed: Map<number, number>): Map<number, number> | undefined {
  const REF = -1;
  const all: Bound[] = [...bounds];
  // Node 0 is ground: pinned at 0 V like any fixed node.
  const pins = new Map(fixed);
  pins.set(0, 0);
  for (const [n, v] of pins) {
    all.push({ from: REF, to: n, w: v + 1e-9 });
    all.push({ from: n, to: REF, w: -v + 1e-9 });
  }
  const vars = new Set<number>([REF]);
  for (const b of all) vars.add(b.from).add(b.to);
  const dist = new Map<number, number>();
  for (const v of vars) dist.set(v, 0);
  const n = vars.size;
  for (let k = 0; k < n; k++) {
    let changed = false;
    for (const b of all) {
      const d = dist.get(b.from)! + b.w;
      if (d < dist.get(b.to)! - 1e-12) {
        dist.set(b.to, d);
        changed = true;
      }
    }
    if (!changed) {
      const ref = dist.get(REF)!;
      const out = new Map<number, number>();
      for (const [v, d] of dist) if (v !== REF) out.set(v, d - ref);
      return out;
    }
  }
  return undefined;
}

/** Corner labels in running text: at most four, then how many more. */
function listed(labels: string[], max = 4): string {
  return labels.length <= max ? labels.join('; ') : `${labels.slice(0, max).join('; ')}; and ${labels.length - max} more`;
}

function loopFinding(topo: Topology, loop: Structure[], r: StartupResult): Finding {
  const main = mainOf(loop);
  const at = topo.elementByName.get(main.reference.device) as Element;
  const names = loop.map((s) => `the ${kindName(s.kind)} on ${s.reference.device}`).join(' and ');
  const total = r.corners?.length ?? 0;
  const when = r.zeroStateNominal
    ? `at nominal supply and temperature${r.zeroStateCorners.length ? ` (and at ${r.zeroStateCorners.length} of the ${total} corners)` : ''}`
    : `at ${listed(r.zeroStateCorners)} (not at nominal)`;
  const i = r.solvedCurrent ?? 0;
  const solved =
    i >= SETTLED_ON
      ? ` The operating point shown is the conducting state the solver settled on (${eng(i, 'A')} in ${main.reference.device}); the circuit can equally rest with every loop device off.`
      : ` The solver itself settled at almost no current (${eng(i, 'A')} in ${main.reference.device}).`;
  const message =
    `The self-biased loop of ${names} can rest at zero current ${when}: with its devices off, nothing in the rest of the circuit drives any of them on, so at power-up it can stay dead.` +
    solved +
    ` Usual remedies: a start-up resistor from the supply into the loop's reference node (large enough not to disturb the bias), or a start-up device that injects current while the loop is off and turns itself off once it conducts.`;
  const related: RelatedLocation[] = [];
  for (const d of r.loopDevices) {
    if (d === at.name) continue;
    const el = topo.elementByName.get(d);
    if (el) related.push({ uri: el.origin.uri, span: el.origin.span, message: `${d}: part of the self-biased loop` });
  }
  return {
    code: 'bias-loop-can-stay-off',
    severity: STARTUP_CODES['bias-loop-can-stay-off'].severity,
    message,
    uri: at.origin.uri,
    span: at.origin.span,
    related,
    data: {
      structures: r.loopStructures,
      devices: r.loopDevices,
      zeroStateNominal: r.zeroStateNominal,
      zeroStateCorners: r.zeroStateCorners,
      solvedCurrentA: r.solvedCurrent ?? 0,
    },
  };
}
