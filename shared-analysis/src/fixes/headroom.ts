// Fixes for a mirror output out of its region or short of headroom: a smaller load resistor, or a larger current-setting resistor, each re-solved before it is offered.

import type { Circuit, Element, Resistor } from '../circuit';
import { elementNamed, structureWithId } from './circuit-index';
import { loadResistorOf, sizingKnob } from '../checks/targets';
import type { OperatingPoint } from '../solve/types';
import { isBipolar, polaritySign, topologyOf, type Topology, type Transistor } from '../structures/topology';
import type { Structure } from '../structures/types';
import type { Finding, Fix } from '../types';
import { isSeriesName, nearestStandardValues, type SeriesName } from './e-series';
import { formatMeasured } from './format';
import type { FixContext, SizingFixContext } from './index';
import { sizeResistorForCurrent, sizingBlock, type Solves } from './resistor-for-current';
import { resistorValueChange } from './value-edit';
import { regionChanges, resolveWith, type Resolved } from './verify';

/** The marker `attachFixes` puts in `data.sizing` of an out-of-region or low-headroom output. */
export interface HeadroomRequest {
  kind: 'headroom';
  structureId: string;
  output: string;
  /** Headroom to restore beyond the edge of the active region, volts. */
  marginV: number;
  series: SeriesName;
}

/** Standard values tried below the first one before the load fix gives up. */
const LOAD_TRIES = 4;

/** The marker of a `mirror-output-out-of-region` (saturated or triode, not cut off) or `mirror-headroom-low` finding. */
export function headroomRequestOf(f: Finding, ctx: FixContext): HeadroomRequest | undefined {
  if (f.code !== 'mirror-output-out-of-region' && f.code !== 'mirror-headroom-low') return undefined;
  const d = f.data ?? {};
  if (d['region'] === 'cutoff') return undefined;
  if (typeof d['structure'] !== 'string' || typeof d['device'] !== 'string') return undefined;
  // By the list's id map (built once): a scan per finding made thousands of out-of-region outputs cost findings × structures.
  if (!structureWithId(ctx.structures, d['structure'])) return undefined;
  return { kind: 'headroom', structureId: d['structure'], output: d['device'], marginV: ctx.options.headroomMarginV, series: ctx.options.resistorSeries };
}

/** A well-formed headroom marker in `data.sizing`, or undefined. */
export function headroomRequest(f: Finding): HeadroomRequest | undefined {
  const m = f.data?.['sizing'] as Record<string, unknown> | undefined;
  if (!m || m['kind'] !== 'headroom') return undefined;
  if (typeof m['structureId'] !== 'string' || typeof m['output'] !== 'string') return undefined;
  if (typeof m['marginV'] !== 'number' || !(m['marginV'] >= 0) || typeof m['series'] !== 'string' || !isSeriesName(m['series'])) return undefined;
  return { kind: 'headroom', structureId: m['structureId'], output: m['output'], marginV: m['marginV'], series: m['series'] };
}

/** Output-node voltage at the edge of the active region at an operating point: the base (VBC = 0), or V(source) + VOV. */
function edgeAt(op: OperatingPoint, topo: Topology, t: Transistor, bipolar: boolean, sign: number): number | undefined {
  const v = (n: number) => op.nodes[topo.nodeName(n)];
  if (bipolar) return v(t.ctrl);
  const rec = op.devices[t.name];
  const vs = v(t.common);
  if (!rec || rec.type !== 'mosfet' || vs === undefined) return undefined;
  return vs + sign * rec.vov;
}

function volts(x: number): string {
  return formatMeasured(x, 'V');
}

function amps(x: number): string {
  return formatMeasured(x, 'A');
}

/**
 * The fixes of an out-of-region or low-headroom mirror output, each re-solved (on the part of the circuit its
 * resistor can move when that splits off, else on the whole circuit) and offered only when the output then has at
 * least the headroom margin:
 * 1. its load resistor (the one resistor from its output node to a rail) set to the largest standard
 *    value that leaves the margin at its active-region current — the nearest standard value below
 *    the exact one, stepping lower while the re-solve still lacks the margin;
 * 2. the resistor that sets the structure's current (its reference resistor, or a Widlar output's
 *    emitter resistor) raised to the nearest standard value that lowers the current enough, with
 *    the other outputs' new currents named, since they move with it.
 * Each title states the resulting current and headroom, and any output left out of its region.
 */
export function headroomFixes(req: HeadroomRequest, ctx: SizingFixContext): Fix[] {
  const { circuit, solver } = ctx;
  const s = structureWithId(ctx.structures, req.structureId);
  const topo = topologyOf(circuit);
  const t = topo.byName.get(req.output);
  if (!s || !t || !s.outputs.some((o) => o.device === req.output)) return [];
  // Both fixes need the output's load resistor (the second to know the current the load allows): without one (an
  // output node left unconnected, say) nothing is solved.
  const load = loadResistorOf(circuit, topo, t);
  if (!load) return [];
  const bipolar = isBipolar(s.technology);
  const sign = polaritySign(s.technology);
  const tC = ctx.options.temperatureC;
  // Each change is re-solved on the part of the circuit its resistor can move, when that splits off (its solution
  // there equals the whole circuit's, `affectedBlock`), started from the analysed point; else on the whole circuit.
  const mustHold = [req.output, ...s.devices, ...s.reference.elements];
  const onBlock = (r: Resistor): { circuit: Circuit; solver: Solves } => sizingBlock(circuit, r, mustHold, ctx.point) ?? { circuit, solver };
  const loadSide = onBlock(load.resistor);
  const base = resolveWith(loadSide.circuit, loadSide.solver, s, {}, tC);
  if (!base) return [];
  const edge = edgeAt(base.op, topo, t, bipolar, sign);
  if (edge === undefined) return [];
  const margin = req.marginV;
  const fixes: Fix[] = [];

  const ok = (r: Resolved | undefined): r is Resolved => !!r && !r.m.outOfRegion.includes(req.output) && r.m.headroom[req.output]! >= margin - 1e-9;
  const outcome = (r: Resolved) => `${req.output} → ${amps(r.m.iout[req.output] ?? 0)}, headroom ${volts(r.m.headroom[req.output] ?? 0)}`;

  // 1. The load resistor: V(out) must stay `margin` beyond the edge at the current the output carries when active.
  const active = s.estimate?.iout[req.output] ?? base.m.iout[req.output] ?? 0;
  const room = sign * (load.railV - edge) - margin;
  if (active > 0 && room > 0) {
    let value = nearestStandardValues(room / active, req.series)?.below;
    for (let k = 0; k < LOAD_TRIES && value !== undefined && value > 0; k++) {
      if (value < load.resistor.resistance * (1 - 1e-9)) {
        const side = regionChanges(loadSide.circuit, loadSide.solver, s, { [load.resistor.name]: value }, tC, req.output, base.m);
        if (side && ok(side.after)) {
          const change = resistorValueChange(load.resistor, ctx.documents, value);
          if (change) fixes.push({ title: `Set ${load.resistor.name} to ${change.text}${change.note} (${req.series}): ${outcome(side.after)}${side.text}`, edits: change.edits });
          break;
        }
      }
      value = nearestStandardValues(value * (1 - 1e-6), req.series)?.below;
    }
  }

  // 2. The current-setting resistor: lower the output's current until the present load leaves the margin.
  const outputElement = elementNamed(circuit, req.output) as Element;
  const knob = sizingKnob(circuit, ctx.structures, outputElement);
  const knobResistor = knob ? (elementNamed(circuit, knob.resistor) as Resistor | undefined) : undefined;
  if (knobResistor && knobResistor !== load.resistor && room > 0) {
    const knobSide = onBlock(knobResistor);
    const target = room / load.resistor.resistance;
    const sizing = sizeResistorForCurrent({ circuit, solver, structure: s, resistor: knobResistor.name, target, series: req.series, device: req.output, temperatureC: tC, point: ctx.point });
    // The standard values whose current is at or below the target, nearest first; then the next larger ones.
    const values = sizing.candidates.filter((c) => c.current <= target * (1 + 1e-6)).map((c) => c.value);
    let next = values.length ? values[0] : sizing.candidates.at(-1)?.value;
    for (let k = 0; k < LOAD_TRIES && next !== undefined; k++) {
      const side = regionChanges(knobSide.circuit, knobSide.solver, s, { [knobResistor.name]: next }, tC, req.output, base.m);
      if (side && ok(side.after)) {
        const change = resistorValueChange(knobResistor, ctx.documents, next);
        if (change) {
          const others = s.outputs.filter((o) => o.device !== req.output).slice(0, 3).map((o) => `${o.device} → ${amps(side.after.m.iout[o.device] ?? 0)}`);
          const moves = others.length ? `; the other outputs move with it (${others.join(', ')}${s.outputs.length > 4 ? ', …' : ''})` : '';
          fixes.push({ title: `Set ${knobResistor.name} to ${change.text}${change.note} (${req.series}): ${outcome(side.after)}${moves}${side.text}`, edits: change.edits });
        }
        break;
      }
      next = nearestStandardValues(next * (1 + 1e-6), req.series)?.above;
    }
  }
  if (fixes.length > 0) fixes[0]!.preferred = true;
  return fixes;
}
