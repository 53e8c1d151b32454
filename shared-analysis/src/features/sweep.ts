// The output characteristic of one mirror output: its current against a swept output-node voltage, across the structure's own rails.

import type { MonteCarloFigures } from '../variation/types';
import { polaritySign, technologyWords } from '../structures/technology';
import type { Analysis } from '../analysis';
import type { Circuit, Element, VoltageSource } from '../circuit';
import { DcSolver } from '../solve/dc';
import type { DeviceRecord, OperatingPoint } from '../solve/types';
import type { Structure, Technology } from '../structures/types';
import { capitalised, kindName, outputKindName } from '../structures/catalogue';
import { railsByIndex } from '../structures/rails';
import { outputWords } from './structure-words';
import { maxOf, minOf } from '../arrays';

/** One output's current against its output-node voltage, with the solved markers the plot draws. */
export interface OutputCharacteristicResult {
  device: string;
  structureId: string;
  /** What is plotted, in words: "Widlar output Q5 of the simple current mirror on Q1 (NPN)". */
  title: string;
  /** What the output is, in words: "Widlar output of the simple current mirror on Q1". */
  outputKind?: string;
  technology: Technology;
  /** The output node that was swept. */
  node: string;
  /**
   * Output-node voltage (V) against the output current (A), in sweep order (lower rail to upper
   * rail). The current is signed in the output's own direction: positive when it flows as a mirror
   * output's does (into an NPN collector or NMOS drain, out of a PNP collector or PMOS drain),
   * negative where the output is driven backwards.
   */
  points: { v: number; i: number }[];
  /** Output-node voltage at the edge of the active region: the solved compliance edge, else where the sweep crosses it. */
  edgeV: number;
  /** The side of the edge where the output is active: above it for NPN/NMOS outputs, below it for PNP/PMOS outputs. */
  activeSide: 'above' | 'below';
  /** Output-node voltage at the solved operating point. */
  operatingV: number;
  /** The output current at the operating point, from the operating-point solve (not read off the sweep); absent when the circuit was not solved. */
  operatingI?: number;
  /** The swept span: the rails the structure itself hangs from (its devices' and feed's nodes pinned by sources), widened to the operating point. */
  range: { low: number; high: number; rails: string[] };
  /** The output current at each corner, from the corner re-solves. */
  cornerSpread: { label: string; i: number }[];
  /** The output current (A, signed as `points`) against temperature (°C) with its load in place, from the cold to the hot corner temperature. */
  drift?: { t: number; i: number }[];
  /** The output's predicted spread (docs/VARIATION.md), when the analysis has it: σ and worst case relative to nominal, drift in ppm/°C. */
  spread?: { sigmaRelative: number; worstCaseRelative: number; tempcoPpmPerC: number };
  /**
   * The output's Monte Carlo figures when Monte Carlo ran on this analysis (docs/VARIATION.md):
   * the magnitude of the current in each of `histogram.length` equal bins from `min` to `max`,
   * beside the linear prediction (`nominal`, `linearSigma`) and the target window, if any.
   */
  monteCarlo?: MonteCarloFigures & {
    nominal: number;
    linearSigma: number;
    target?: { low: number; high: number };
    predictedYield?: number;
  };
}

/** Temperature points of the drift sweep. */
const DRIFT_POINTS = 23;

/** Name of the sweep source added to the copied circuit; it cannot clash because `#` never starts an element name. */
const SWEEP_SOURCE = '#output-sweep';
const MAX_POINTS = 2001;

/**
 * Sweeps the output node of `device` (a mirror output) across the rails the structure hangs
 * from: the circuit is copied, every element on the output node other than the structure's own
 * devices (the load) is removed, a voltage source to ground drives the node, and one DcSolver
 * is re-solved at each point, warm-started from the previous one.
 */
export function outputCharacteristic(analysis: Analysis, device: string, points = 81): OutputCharacteristicResult | { error: string } {
  const circuit = analysis.circuit;
  if (!circuit) return { error: 'The netlist has no elaborated circuit to sweep (see its findings).' };
  if (!Number.isInteger(points) || points < 2 || points > MAX_POINTS) return { error: `The number of sweep points must be a whole number from 2 to ${MAX_POINTS}; got ${points}.` };
  const lower = device.toLowerCase();
  const structure = analysis.structures.find((s) => s.outputs.some((o) => o.device.toLowerCase() === lower));
  if (!structure) {
    const known = analysis.structures.flatMap((s) => s.outputs.map((o) => o.device));
    return { error: `${device} is not the output of a recognised mirror${known.length ? `; the outputs are ${known.join(', ')}` : '; this netlist has none'}.` };
  }
  const output = structure.outputs.find((o) => o.device.toLowerCase() === lower)!;
  const nodeIndex = circuit.nodes.findIndex((n) => n.toLowerCase() === output.node.toLowerCase());
  if (nodeIndex <= 0) return { error: `The output node ${output.node} of ${output.device} is ground or missing; there is nothing to sweep.` };
  const outEl = circuit.elements.find((e) => e.name.toLowerCase() === lower);
  if (!outEl || (outEl.kind !== 'Q' && outEl.kind !== 'M' && outEl.kind !== 'J')) return { error: `${device} is not a transistor of the circuit.` };

  const op = analysis.operatingPoint;
  const operatingV = op?.nodes[circuit.nodes[nodeIndex]] ?? NaN;
  const range = structureRails(circuit, structure, op, operatingV);
  const { low, high } = range;
  if (!(high > low)) return { error: `The structure has no supply rails to sweep between (lowest ${low} V, highest ${high} V).` };

  const sink = polaritySign(structure.technology) > 0;
  const swept = sweepCircuit(circuit, structure, nodeIndex);
  const solver = new DcSolver(swept);
  const pts: { v: number; i: number; active: boolean; margin: number }[] = [];
  let guess: Float64Array | undefined;
  const order = Array.from({ length: points }, (_, k) => low + ((high - low) * k) / (points - 1));
  for (const v of order) {
    const res = solver.solve({ sourceValues: { [SWEEP_SOURCE]: v }, initialGuess: guess, temperatureC: op?.temperatureC });
    if (!res.op.converged) {
      guess = undefined;
      continue;
    }
    guess = res.x;
    const rec = res.op.devices[outEl.name];
    const i = outputCurrent(rec, sink);
    if (i === undefined || !Number.isFinite(i)) continue;
    pts.push({ v, i, active: isActive(rec), margin: activeMargin(rec) });
  }
  if (pts.length < 2) return { error: `The sweep of ${output.node} did not converge at enough points to draw (${pts.length} of ${points}).` };

  const compliance = structure.compliance[output.device];
  const solvedEdge = compliance ? (sink ? compliance.min : compliance.max) : NaN;
  const edgeV = Number.isFinite(solvedEdge) ? solvedEdge : activeEdge(pts, operatingV);
  const solvedI = structure.solved?.iout[output.device];
  const recI = outputCurrent(op?.devices[outEl.name], sink);
  const opCurrent = recI ?? solvedI;
  const cornerSpread = structure.corners
    .filter((c) => c.converged && c.iout[output.device] !== undefined && Number.isFinite(c.iout[output.device]))
    .map((c) => ({ label: c.label, i: c.iout[output.device] }));
  const where = structure.instance ? `, in ${structure.instance.replace(/\.$/, '')}` : '';
  const drift = driftOf(analysis, circuit, outEl.name);
  const variation = structure.variation?.iout[output.device];
  return {
    ...(drift.length >= 2 ? { drift } : {}),
    ...(variation ? { spread: { sigmaRelative: variation.sigmaRelative, worstCaseRelative: variation.worstCaseRelative, tempcoPpmPerC: variation.tempcoPpmPerC } } : {}),
    ...(variation?.monteCarlo && variation.monteCarlo.converged > 0
      ? {
          monteCarlo: {
            runs: variation.monteCarlo.runs,
            converged: variation.monteCarlo.converged,
            mean: variation.monteCarlo.mean,
            sigma: variation.monteCarlo.sigma,
            min: variation.monteCarlo.min,
            max: variation.monteCarlo.max,
            histogram: [...variation.monteCarlo.histogram],
            nominal: Math.abs(variation.nominal),
            linearSigma: variation.sigma,
            ...(variation.target ? { target: { low: variation.target.current * (1 - variation.target.tolerance), high: variation.target.current * (1 + variation.target.tolerance) }, predictedYield: variation.target.yield } : {}),
            ...(variation.monteCarlo.yield !== undefined ? { yield: variation.monteCarlo.yield } : {}),
          },
        }
      : {}),
    device: output.device,
    structureId: structure.id,
    title: `${capitalised(outputKindName(structure, output.device))} ${output.device} of the ${kindName(structure.kind)} on ${structure.reference.device} (${technologyWords(structure.technology)}${where})`,
    technology: structure.technology,
    outputKind: `${outputWords(structure, output)} of the ${kindName(structure.kind)} on ${structure.reference.device}`,
    node: circuit.nodes[nodeIndex],
    points: pts.map(({ v, i }) => ({ v, i })),
    edgeV,
    activeSide: sink ? 'above' : 'below',
    operatingV: Number.isFinite(operatingV) ? operatingV : pts[0].v,
    ...(opCurrent !== undefined && Number.isFinite(opCurrent) && Number.isFinite(operatingV) ? { operatingI: opCurrent } : {}),
    range,
    cornerSpread,
  };
}

/**
 * The rails the structure hangs from: nodes pinned by voltage sources that its devices, its
 * reference feed or its outputs' emitter (source) resistors touch. The span is widened to take
 * in the operating voltage (a load to another rail can hold the output beyond them); a structure
 * that touches fewer than two rails falls back to every rail of the circuit.
 */
function structureRails(circuit: Circuit, s: Structure, op: OperatingPoint | undefined, operatingV: number): { low: number; high: number; rails: string[] } {
  const rails = railsByIndex(circuit);
  const names = new Set([...s.devices, ...s.reference.elements, ...s.outputs.map((o) => o.degeneration?.resistor ?? '')].filter(Boolean).map((n) => n.toLowerCase()));
  if (s.reference.degeneration) names.add(s.reference.degeneration.resistor.toLowerCase());
  const touched = new Map<string, number>();
  for (const el of circuit.elements) {
    if (!names.has(el.name.toLowerCase())) continue;
    for (const n of el.nodes) {
      const r = rails.get(n);
      if (r && Number.isFinite(r.volts)) touched.set(r.node, r.volts);
    }
  }
  if (s.reference.rail && Number.isFinite(s.reference.rail.volts)) touched.set(s.reference.rail.node, s.reference.rail.volts);
  let volts = [...touched.values()];
  let railNames = [...touched.keys()];
  if (new Set(volts).size < 2) {
    const all = [...rails.values()].filter((r) => Number.isFinite(r.volts));
    volts = all.map((r) => r.volts);
    railNames = all.map((r) => r.node);
    if (volts.length === 0 && op) volts = [0];
  }
  let low = minOf(volts);
  let high = maxOf(volts);
  if (Number.isFinite(operatingV)) {
    low = Math.min(low, operatingV);
    high = Math.max(high, operatingV);
  }
  return { low, high, rails: railNames };
}

/**
 * Each analysis's temperature sweep of its mirror outputs, worked out once for all of them: the
 * whole circuit is solved at the same temperatures whichever output is asked for, so a report that
 * draws every output (and a panel that redraws one) pays for one sweep, not one per chart.
 */
const driftByAnalysis = new WeakMap<Analysis, Map<string, Map<string, { t: number; i: number }[]>>>();

/** The drift of the output element `name` (as the circuit spells it) from the analysis's cold to its hot corner. */
function driftOf(analysis: Analysis, circuit: Circuit, name: string): { t: number; i: number }[] {
  const { coldC, hotC } = analysis.options.corners;
  const key = `${coldC} ${hotC}`;
  let byRange = driftByAnalysis.get(analysis);
  if (!byRange) driftByAnalysis.set(analysis, (byRange = new Map()));
  let table = byRange.get(key);
  if (!table) {
    // Every mirror output of the analysis, by the element's own name, with its direction.
    const elements = new Map<string, Element>();
    for (const e of circuit.elements) if (!elements.has(e.name.toLowerCase())) elements.set(e.name.toLowerCase(), e);
    const outputs = new Map<string, boolean>();
    for (const s of analysis.structures) {
      const sink = polaritySign(s.technology) > 0;
      for (const o of s.outputs) {
        const el = elements.get(o.device.toLowerCase());
        if (el && (el.kind === 'Q' || el.kind === 'M' || el.kind === 'J') && !outputs.has(el.name)) outputs.set(el.name, sink);
      }
    }
    table = driftSweep(circuit, outputs, coldC, hotC);
    byRange.set(key, table);
  }
  return table.get(name) ?? [];
}

/** The output current of each device (name → sink) in the whole circuit, solved from `cold` to `hot` (warm-started point to point). */
function driftSweep(circuit: Circuit, devices: Map<string, boolean>, cold: number, hot: number): Map<string, { t: number; i: number }[]> {
  const out = new Map<string, { t: number; i: number }[]>();
  for (const name of devices.keys()) out.set(name, []);
  if (!(Number.isFinite(cold) && Number.isFinite(hot) && hot > cold) || devices.size === 0) return out;
  const solver = new DcSolver(circuit);
  let guess: Float64Array | undefined;
  for (let k = 0; k < DRIFT_POINTS; k++) {
    const t = cold + ((hot - cold) * k) / (DRIFT_POINTS - 1);
    const res = solver.solve({ temperatureC: t, initialGuess: guess });
    if (!res.op.converged) {
      guess = undefined;
      continue;
    }
    guess = res.x;
    for (const [name, sink] of devices) {
      const i = outputCurrent(res.op.devices[name], sink);
      if (i !== undefined && Number.isFinite(i)) out.get(name)!.push({ t, i });
    }
  }
  return out;
}

/** A copy of the circuit with the output node's load replaced by the sweep source. */
function sweepCircuit(circuit: Circuit, structure: Structure, node: number): Circuit {
  const own = new Set(structure.devices.map((d) => d.toLowerCase()));
  const elements: Element[] = circuit.elements.filter((e) => own.has(e.name.toLowerCase()) || !e.nodes.includes(node));
  const source: VoltageSource = {
    kind: 'V',
    name: SWEEP_SOURCE,
    nodes: [node, 0],
    dc: 0,
    origin: { uri: '', span: { start: 0, end: 0 }, instances: [] },
  };
  return { ...circuit, elements: [...elements, source] };
}

/** The output current signed in the output's own direction: IC or ID for a sink (NPN, NMOS, N-channel JFET), −IC or −ID for a source (PNP, PMOS, P-channel JFET). */
function outputCurrent(rec: DeviceRecord | undefined, sink: boolean): number | undefined {
  if (!rec) return undefined;
  if (rec.type === 'bjt') return sink ? rec.ic : -rec.ic;
  if (rec.type === 'mosfet' || rec.type === 'jfet') return sink ? rec.id : -rec.id;
  return undefined;
}

/** Volts by which a device is inside its active region (negative: outside): −VBC for NPN, |VDS| − overdrive for MOS, |VDS| − (VGS − VP) for a JFET. */
function activeMargin(rec: DeviceRecord | undefined): number {
  if (!rec) return NaN;
  if (rec.type === 'bjt') return rec.polarity === 'npn' ? -rec.vbc : rec.vbc;
  if (rec.type === 'mosfet') return Math.abs(rec.vds) - rec.vov;
  if (rec.type === 'jfet') return Math.abs(rec.vds) - ((rec.polarity === 'pjf' ? -rec.vgs : rec.vgs) - rec.vto);
  return NaN;
}

function isActive(rec: DeviceRecord | undefined): boolean {
  if (!rec) return false;
  if (rec.type === 'bjt') return rec.region === 'forward-active';
  if (rec.type === 'mosfet' || rec.type === 'jfet') return rec.region === 'saturation';
  return false;
}

/**
 * The boundary between active and inactive sweep points nearest the operating voltage: where the
 * margin (VBC or VDS − overdrive) crosses zero, interpolated linearly between the two points.
 */
function activeEdge(pts: { v: number; active: boolean; margin: number }[], operatingV: number): number {
  const edges: number[] = [];
  for (let k = 1; k < pts.length; k++) {
    const a = pts[k - 1];
    const b = pts[k];
    if (a.active === b.active) continue;
    const t = Number.isFinite(a.margin) && Number.isFinite(b.margin) && a.margin !== b.margin ? a.margin / (a.margin - b.margin) : 0.5;
    edges.push(a.v + (b.v - a.v) * Math.min(1, Math.max(0, t)));
  }
  if (edges.length === 0) return pts.every((p) => p.active) ? pts[0].v : pts[pts.length - 1].v;
  if (!Number.isFinite(operatingV)) return edges[0];
  return edges.reduce((best, e) => (Math.abs(e - operatingV) < Math.abs(best - operatingV) ? e : best), edges[0]);
}
