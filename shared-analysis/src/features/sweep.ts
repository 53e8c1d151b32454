// The output characteristic of one mirror output: its current against a swept output-node voltage, rail to rail.

import { kindName } from '../structures/catalogue';
import { outputWords } from './structure-words';
import type { Analysis } from '../analysis';
import type { Circuit, Element, VoltageSource } from '../circuit';
import { DcSolver } from '../solve/dc';
import type { DeviceRecord, OperatingPoint } from '../solve/types';
import type { Structure } from '../structures/types';

/** One output's current (magnitude, A) against its output-node voltage (V), plus where it leaves its active region. */
export interface OutputCharacteristicResult {
  device: string;
  structureId: string;
  /** What the output is, in words: "Widlar output of the simple current mirror on Q1". */
  outputKind?: string;
  /** The output node that was swept. */
  node: string;
  /** Output-node voltage (V) against output current magnitude (A), in sweep order (lower rail to upper rail). */
  points: { v: number; i: number }[];
  /** Output-node voltage at the edge of the active region (saturation / triode edge). */
  edgeV: number;
  /** Output-node voltage at the solved operating point. */
  operatingV: number;
  /** The output current at each corner at the operating point. */
  cornerSpread: { label: string; i: number }[];
  /** The output current (A) against temperature (°C) with its load in place, from the cold to the hot corner temperature. */
  drift?: { t: number; i: number }[];
  /** The output's predicted spread (docs/VARIATION.md), when the analysis has it: σ and worst case relative to nominal, drift in ppm/°C. */
  spread?: { sigmaRelative: number; worstCaseRelative: number; tempcoPpmPerC: number };
}

/** Temperature points of the drift sweep. */
const DRIFT_POINTS = 23;

/** Name of the sweep source added to the copied circuit; it cannot clash because `#` never starts an element name. */
const SWEEP_SOURCE = '#output-sweep';
const MAX_POINTS = 2001;

/**
 * Sweeps the output node of `device` (a mirror output) from the lowest to the highest rail:
 * the circuit is copied, every element on the output node other than the structure's own
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
  if (!outEl || (outEl.kind !== 'Q' && outEl.kind !== 'M')) return { error: `${device} is not a transistor of the circuit.` };

  const { low, high } = railSpan(circuit, analysis.operatingPoint);
  if (!(high > low)) return { error: `The circuit has no supply rails to sweep between (lowest ${low} V, highest ${high} V).` };

  const swept = sweepCircuit(circuit, structure, nodeIndex);
  const solver = new DcSolver(swept);
  const pts: { v: number; i: number; active: boolean; margin: number }[] = [];
  let guess: Float64Array | undefined;
  // Sweep from the side where the output conducts best so each warm start is a small step.
  const order = Array.from({ length: points }, (_, k) => low + ((high - low) * k) / (points - 1));
  for (const v of order) {
    const res = solver.solve({ sourceValues: { [SWEEP_SOURCE]: v }, initialGuess: guess, temperatureC: analysis.operatingPoint?.temperatureC });
    if (!res.op.converged) {
      guess = undefined;
      continue;
    }
    guess = res.x;
    const rec = res.op.devices[outEl.name];
    const i = outputCurrent(rec);
    if (i === undefined || !Number.isFinite(i)) continue;
    pts.push({ v, i, active: isActive(rec), margin: activeMargin(rec) });
  }
  if (pts.length < 2) return { error: `The sweep of ${output.node} did not converge at enough points to draw (${pts.length} of ${points}).` };

  const operatingV = analysis.operatingPoint?.nodes[circuit.nodes[nodeIndex]] ?? NaN;
  const edgeV = activeEdge(pts, operatingV);
  const cornerSpread = structure.corners
    .filter((c) => c.iout[output.device] !== undefined && Number.isFinite(c.iout[output.device]))
    .map((c) => ({ label: c.label, i: c.iout[output.device] }));
  const drift = driftSweep(circuit, outEl, analysis.options.corners.coldC, analysis.options.corners.hotC);
  const v = structure.variation?.iout[output.device];
  return {
    ...(drift.length >= 2 ? { drift } : {}),
    ...(v ? { spread: { sigmaRelative: v.sigmaRelative, worstCaseRelative: v.worstCaseRelative, tempcoPpmPerC: v.tempcoPpmPerC } } : {}),
    device: output.device,
    structureId: structure.id,
    outputKind: `${outputWords(structure, output)} of the ${kindName(structure.kind)} on ${structure.reference.device}`,
    node: circuit.nodes[nodeIndex],
    points: pts.map(({ v, i }) => ({ v, i })),
    edgeV,
    operatingV: Number.isFinite(operatingV) ? operatingV : pts[0].v,
    cornerSpread,
  };
}

/** The output current of `device` in the whole circuit, solved from `cold` to `hot` (warm-started point to point). */
function driftSweep(circuit: Circuit, device: Element, cold: number, hot: number): { t: number; i: number }[] {
  const out: { t: number; i: number }[] = [];
  if (!(Number.isFinite(cold) && Number.isFinite(hot) && hot > cold)) return out;
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
    const i = outputCurrent(res.op.devices[device.name]);
    if (i !== undefined && Number.isFinite(i)) out.push({ t, i });
  }
  return out;
}

/** Lowest and highest node voltage pinned by a voltage source to ground (ground itself counts as a rail). */
function railSpan(circuit: Circuit, op: OperatingPoint | undefined): { low: number; high: number } {
  let low = 0;
  let high = 0;
  for (const el of circuit.elements) {
    if (el.kind !== 'V') continue;
    const [p, m] = el.nodes;
    const v = p !== 0 && m === 0 ? el.dc : m !== 0 && p === 0 ? -el.dc : op ? (op.nodes[circuit.nodes[p]] ?? 0) : 0;
    if (!Number.isFinite(v)) continue;
    low = Math.min(low, v);
    high = Math.max(high, v);
  }
  return { low, high };
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

function outputCurrent(rec: DeviceRecord | undefined): number | undefined {
  if (!rec) return undefined;
  if (rec.type === 'bjt') return Math.abs(rec.ic);
  if (rec.type === 'mosfet') return Math.abs(rec.id);
  return undefined;
}

/** Volts by which a device is inside its active region (negative: outside): −VBC for NPN, |VDS| − overdrive for MOS. */
function activeMargin(rec: DeviceRecord | undefined): number {
  if (!rec) return NaN;
  if (rec.type === 'bjt') return rec.polarity === 'npn' ? -rec.vbc : rec.vbc;
  if (rec.type === 'mosfet') return Math.abs(rec.vds) - rec.vov;
  return NaN;
}

function isActive(rec: DeviceRecord | undefined): boolean {
  if (!rec) return false;
  if (rec.type === 'bjt') return rec.region === 'forward-active';
  if (rec.type === 'mosfet') return rec.region === 'saturation';
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
