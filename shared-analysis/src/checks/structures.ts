// The structure checks: hand analysis beside the solved values, headroom, compliance, output resistance, and the findings they raise.

import type { ResolvedOptions } from '../analysis';
import type { Circuit, Element, Model } from '../circuit';
import type { DeviceRecord, OperatingPoint } from '../solve/types';
import { namedPointReader, pointVectors, type NamedPointReader } from '../solve/point';
import { estimateStructure } from '../structures/estimate';
import { eng as engRaw, sig, signedVolts as signedRaw } from '../structures/format';
import { belowFloor, formatPercent as percent } from '../fixes/format';
import { recordIsOff } from './devices/context';
import { loadResistorOf } from './targets';
import { KINDS, kindName, kindOf, referenceJunctions } from '../structures/catalogue';
import { bjtRo, isAtTemperature, mosRo, thermalVolts, UNBOUNDED_OHMS } from '../structures/formulas';
import type { ResistanceContext, SmallSignal } from '../structures/kind';
import { measurePlanned, plannedMeasurements, readerOf, type Measurement } from '../structures/measure';
import { railsByIndex } from '../structures/rails';
import { checkedFigures, estimateFigures, FIGURE, HELD, keepChecked, recognisedTransistor, roleOf } from '../structures/recognised';
import { voltageAt } from '../structures/voltages';
import { isOnlyRatio, MATCH_PARAMS, sameNumber } from '../structures/matching';
import { isBipolar, polaritySign, topologyOf, type Topology, type Transistor } from '../structures/topology';
import { TECHNOLOGIES, technologyWords } from '../structures/technology';
import type { Structure, StructureOutput, StructureRole } from '../structures/types';
import type { Finding, RelatedLocation, Severity } from '../types';
import { pushAll, maxOf, minOf } from '../arrays';
import { nameTable } from '../names';
import { cardTnomC } from '../devices/physics';

export { measureStructure } from '../structures/measure';
export type { Measurement } from '../structures/measure';
export { estimateStructure } from '../structures/estimate';
export type { EstimateAt } from '../structures/estimate';

/** Every finding code this module owns, with its default severity and a one-line summary for the README. */
export const STRUCTURE_CODES: Record<string, { severity: Severity; summary: string }> = {
  'mirror-output-out-of-region': {
    severity: 'error',
    summary: 'A mirror output is saturated (BJT), in triode (MOS), in the linear region (JFET) or cut off at the operating point; says by how much and what output voltage or load would bring it back.',
  },
  'mirror-headroom-low': {
    severity: 'warning',
    summary: 'A mirror output is still in its active region but closer to the edge than the headroom margin.',
  },
  'reference-starved': {
    severity: 'error',
    summary: 'The supply across a reference branch cannot forward-bias its reference device(s), so the mirror carries (almost) no current.',
  },
  'reference-unfed': {
    severity: 'error',
    summary: 'Nothing feeds a mirror\'s reference node: no resistor, source or device outside the mirror supplies it (the bases of devices outside it draw current, they do not supply it), so the reference and its outputs carry only leakage. A feed is missing, or its node name is misspelt.',
  },
  'mirror-unmatched': {
    severity: 'warning',
    summary: 'Devices of one mirror use models that differ in BF, VAF, NF, KP, VTO, LAMBDA or GAMMA (or in IS together with another of them); gives the ratio error that causes. Bipolar models that differ only in IS are an intended ratio (see mirror-ratio), not a mismatch.',
  },
  'mirror-ratio': {
    severity: 'info',
    summary: 'An output is deliberately ratioed by area, M or W/L (or, in a degenerated mirror, by its emitter/source resistors); shows the intended ratio and the hand formula with it.',
  },
  'estimate-differs-from-solved': {
    severity: 'info',
    summary: 'The hand estimate and the solved operating point differ by more than 3 %; names the likely reasons.',
  },
  'structure-analysis-incomplete': {
    severity: 'info',
    summary: 'The hand analysis of a recognised structure could not be completed; the structure is shown without it.',
  },
};

/** A value with its SI prefix, or `≈ 0 A` (`≈ 0 V`) below the noise floor, so solver noise never reads as a number. */
function eng(value: number, unit: string, digits = 3): string {
  return belowFloor(value, unit) ? `≈ 0 ${unit}` : engRaw(value, unit, digits);
}

/** A signed voltage, `≈ 0 V` below the noise floor. */
function signedVolts(value: number): string {
  return belowFloor(value, 'V') ? '≈ 0 V' : signedRaw(value);
}

// The kinds' own finding codes join the table; a code declared twice is a programming error, not a choice.
for (const k of KINDS) {
  for (const [code, info] of Object.entries(k.codes ?? {})) {
    if (STRUCTURE_CODES[code]) throw new Error(`finding code ${code} is declared twice (structure kind ${k.id})`);
    STRUCTURE_CODES[code] = info;
  }
}

/** Relative difference between estimate and solve above which `discrepancy` is filled. */
export const DISCREPANCY_THRESHOLD = 0.03;

/**
 * The relative error of the estimate `e` against the solved value `x`, as a row of `StructureCheck.errors` gives it:
 * undefined when there is no row (a value not finite, or both below the 1 pA / 1 pV floor: no percentage of nothing),
 * Infinity when the estimate is below the floor beside a solved value above it (the hand analysis collapsed to zero).
 */
function relativeError(e: number, x: number, unit: 'A' | 'V'): number | undefined {
  if (!Number.isFinite(e) || !Number.isFinite(x)) return undefined;
  if (!belowFloor(e, unit) && e > 0) return (Math.max(x, 0) - e) / e;
  return !belowFloor(x, unit) && x > 0 ? Infinity : undefined;
}

/** Everything `analyseStructures` reads. */
export interface StructureCheckContext {
  circuit: Circuit;
  op?: OperatingPoint;
  structures: Structure[];
  options: ResolvedOptions;
  /**
   * A re-analysis after a value edit: the findings a structure the edit cannot have changed had last time
   * (that structure is then not analysed again), or undefined to analyse it.
   */
  kept?: (s: Structure) => Finding[] | undefined;
  /** Told each structure's findings (severities mapped), in the order they are returned. */
  record?: (s: Structure, findings: Finding[]) => void;
}

/**
 * Fills estimate, solved, headroom, compliance, outputResistance and discrepancy on each
 * structure (mutating them) and returns the findings. Without a converged operating
 * point only the hand analysis and the topology checks run (no solved values, no headroom).
 */
export function analyseStructures(ctx: StructureCheckContext): Finding[] {
  const { circuit, structures, options } = ctx;
  const op = ctx.op && ctx.op.converged ? ctx.op : undefined;
  const out: Finding[] = [];
  const topo = topologyOf(circuit);
  const rails = [...railsByIndex(circuit).values()].map((r) => r.volts);
  const shared: CheckShared = {
    circuit,
    topo,
    all: structures,
    op,
    options,
    railRange: { top: rails.length ? maxOf(rails) : UNBOUNDED_OHMS, bottom: rails.length ? minOf(rails) : -UNBOUNDED_OHMS },
    temperatureC: op?.temperatureC ?? options.temperatureC ?? circuit.temperatureC,
    at: op ? namedPointReader(op, topo) : undefined,
    voltsByIndex: op ? pointVectors(op)?.volts : undefined,
  };
  const measuring = op ? nominalMeasuring(topo, structures, ctx.kept, op) : undefined;
  const { order, at } = feedOrder(structures);
  for (let k = 0; k < order.length; k++) {
    const s = order[k];
    const own = ctx.kept?.(s) ?? applySeverities(checkStructure(shared, s, measuring, at[k]), options);
    ctx.record?.(s, own);
    pushAll(out, own);
  }
  return out;
}

/** What the checks of one list of structures share: made once per `analyseStructures` call, not once per structure. */
interface CheckShared {
  circuit: Circuit;
  topo: Topology;
  /** Every structure of the circuit (a mirror fed by another's output reads that one's estimate). */
  all: Structure[];
  /** The converged operating point, if any. */
  op: OperatingPoint | undefined;
  options: ResolvedOptions;
  /** Highest and lowest rail potential of the circuit (the compliance range's outer ends). */
  railRange: { top: number; bottom: number };
  temperatureC: number;
  /** Reads `op` by name without building the records of every device. */
  at: NamedPointReader | undefined;
  /** The solver's node voltages of `op` by index, when it has them (else `at` reads them by name). */
  voltsByIndex: Float64Array | undefined;
}

/** One structure's findings; a defect in its analysis must not take down the others or the editor. */
function checkStructure(shared: CheckShared, s: Structure, measuring: Measuring | undefined, at: number): Finding[] {
  const topo = shared.topo;
  try {
    return new StructureCheck(shared, s, measuring?.measure(s, at)).run();
  } catch (err) {
    const dev = topo.elementByName.get(s.reference.device);
    return [
      {
        code: 'structure-analysis-incomplete',
        severity: STRUCTURE_CODES['structure-analysis-incomplete'].severity,
        message: `The hand analysis of the ${kindName(s.kind)} on ${s.reference.device} could not be completed (${err instanceof Error ? err.message : String(err)}); its currents are not annotated.`,
        uri: dev?.origin.uri ?? '',
        span: dev?.origin.span ?? { start: 0, end: 0 },
      },
    ];
  }
}

/** Measures one structure at the nominal point (`at`: its position in the list analysed). */
interface Measuring {
  measure(s: Structure, at: number): Measurement;
}

/**
 * Every structure's measurement at the operating point (but those `kept` keeps), its names resolved and its plans
 * flattened once for all structures measured. A structure's plan is found at its position in the list measured: with
 * nothing kept, the list itself, whose positions the structures carry in `order` (no table keyed by structure).
 */
function nominalMeasuring(topo: Topology, structures: Structure[], kept: StructureCheckContext['kept'], op: OperatingPoint): Measuring {
  const measured = kept ? structures.filter((s) => !kept(s)) : structures;
  const plans = plannedMeasurements(topo, measured);
  const reader = readerOf(op, topo);
  if (!kept) return { measure: (s, at) => measurePlanned(plans, at, reader, s.outputs) };
  const position = new Map<Structure, number>();
  measured.forEach((s, i) => position.set(s, i));
  return { measure: (s) => measurePlanned(plans, position.get(s)!, reader, s.outputs) };
}

/**
 * Structures ordered so that a mirror fed by another mirror's output comes after it, each id once (the first structure
 * of an id), with each one's position in `structures`. A list in which no structure is fed by another's output keeps
 * its order, and only the ids are tabled.
 */
function feedOrder(structures: Structure[]): { order: Structure[]; at: Int32Array } {
  let fed = false;
  for (let k = 0; k < structures.length && !fed; k++) fed = structures[k].reference.fedBy ? true : false;
  if (!fed) {
    const ids = new Set<string>();
    const order: Structure[] = [];
    const at = new Int32Array(structures.length);
    for (let k = 0; k < structures.length; k++) {
      const s = structures[k];
      if (ids.has(s.id)) continue;
      ids.add(s.id);
      at[order.length] = k;
      order.push(s);
    }
    return { order, at };
  }
  const position = new Map<Structure, number>();
  structures.forEach((s, i) => position.set(s, i));
  const order = fedOrder(structures);
  const at = new Int32Array(order.length);
  for (let k = 0; k < order.length; k++) at[k] = position.get(order[k])!;
  return { order, at };
}

/** `feedOrder`'s order when some structure is fed by another's output: a depth-first walk up each one's feeds. */
function fedOrder(structures: Structure[]): Structure[] {
  const byId = new Map(structures.map((s) => [s.id, s]));
  const done = new Set<string>();
  const order: Structure[] = [];
  const visit = (s: Structure, depth: number) => {
    if (done.has(s.id)) return;
    const from = s.reference.fedBy ? byId.get(s.reference.fedBy) : undefined;
    if (from && depth < structures.length) visit(from, depth + 1);
    if (done.has(s.id)) return;
    done.add(s.id);
    order.push(s);
  };
  for (const s of structures) visit(s, 0);
  return order;
}

function applySeverities(findings: Finding[], options: ResolvedOptions): Finding[] {
  const out: Finding[] = [];
  for (const f of findings) {
    const o = options.severities?.[f.code];
    if (o === 'off') continue;
    out.push(o ? { ...f, severity: o } : f);
  }
  return out;
}


/** One structure's check; it is also the context its kind's output-resistance hook asks. */
class StructureCheck implements ResistanceContext {
  private readonly sign: 1 | -1;
  readonly bipolar: boolean;
  private readonly findings: Finding[] = [];
  /** The solved IREF and output currents `run` gives the structure (undefined without a converged point). */
  private solved: Structure['solved'] = undefined;
  /** The hand estimate `run` gives the structure (read from here: the structure makes its estimate again at each read). */
  private est: Structure['estimate'] = undefined;
  /** Devices of the structure that are off at the operating point (every terminal current below 1 pA); made when one is. */
  private offDevices: string[] | undefined = undefined;
  /**
   * The records of `op` read so far, each built once though several checks read it: a device of the structure's list at
   * its position there (null: read, and none), any other name in `otherRecords`. No table per structure.
   */
  private readonly records: (DeviceRecord | null | undefined)[] = [];
  private otherRecords: Map<string, DeviceRecord | undefined> | undefined = undefined;
  /** The structure's devices as transistors once looked up (see `t`), at their positions in its device list. */
  private readonly transistors: (Transistor | undefined)[] = [];
  private readonly circuit: Circuit;
  private readonly topo: Topology;
  private readonly op: OperatingPoint | undefined;
  private readonly options: ResolvedOptions;
  private readonly temperatureC: number;
  private readonly at: NamedPointReader | undefined;
  private readonly voltsByIndex: Float64Array | undefined;

  constructor(
    private readonly shared: CheckShared,
    readonly s: Structure,
    /** The structure's measurement at `op` (given with it). */
    private readonly measured: Measurement | undefined,
  ) {
    this.sign = polaritySign(s.technology);
    this.bipolar = isBipolar(s.technology);
    this.circuit = shared.circuit;
    this.topo = shared.topo;
    this.op = shared.op;
    this.options = shared.options;
    this.temperatureC = shared.temperatureC;
    this.at = shared.at;
    this.voltsByIndex = shared.voltsByIndex;
  }

  /** The record of a device at `op` (undefined without a solve). */
  private record(name: string): DeviceRecord | undefined {
    if (!this.at) return undefined;
    const at = this.s.devices.indexOf(name);
    if (at < 0) {
      const other = (this.otherRecords ??= new Map());
      if (other.has(name)) return other.get(name);
      const rec = this.at.record(name);
      other.set(name, rec);
      return rec;
    }
    const known = this.records[at];
    if (known !== undefined) return known ?? undefined;
    // The element through the transistor recognition found for it (no look-up of the name), when it is one.
    const e = this.topo.elementNamed(name, recognisedTransistor(this.s, at));
    const rec = e === undefined ? this.at.record(name) : this.at.recordAt(e, name);
    this.records[at] = rec ?? null;
    return rec;
  }

  /** Whether device `name` is off at the operating point (see `offDevices`). */
  private isOff(name: string): boolean {
    return this.offDevices !== undefined && this.offDevices.includes(name);
  }

  private t(name: string): Transistor {
    // The checks ask for the same few devices again and again (an output's several times): each is looked up in the
    // circuit's table once, and kept at its position in the structure's device list.
    const at = this.s.devices.indexOf(name);
    const t = (at >= 0 ? this.transistors[at] : undefined) ?? this.topo.transistorNamed(name, recognisedTransistor(this.s, at));
    if (!t) throw new Error(`device ${name} is not in the circuit`);
    if (at >= 0) this.transistors[at] = t;
    return t;
  }

  private v(node: number): number | undefined {
    const x = this.voltsByIndex ? this.voltsByIndex[node] : this.at?.volts(this.topo.nodeName(node));
    return x !== undefined && Number.isFinite(x) ? x : undefined;
  }

  run(): Finding[] {
    const s = this.s;
    // What the check finds goes to the structure at the end (`keepChecked`): as numbers in `figures` where the structure
    // can hold them (no table made for them), as tables or records where it cannot; the checks read them from here.
    const figures = checkedFigures(s);
    const n = s.outputs.length;
    let held = 0;
    let headroom: Structure['headroom'];
    if (this.op && this.measured) {
      for (const d of s.devices) if (recordIsOff(this.record(d)) && !this.isOff(d)) (this.offDevices ??= []).push(d);
      // The measurement's own tables (prototype-free, made for this structure alone, only read from here on).
      this.solved = { iref: this.measured.iref, iout: this.measured.iout };
      headroom = this.measured.headroom;
      if (figures && this.measuredFigures(figures)) held |= HELD.SOLVED | HELD.HEADROOM;
    } else {
      this.solved = undefined;
      headroom = {};
    }
    // What a check that fails part way has found is kept as before: the measurement, and what was found before it failed.
    let compliance = s.compliance;
    let outputResistance = s.outputResistance;
    let estimate = s.estimate;
    try {
      const outputVolts: Record<string, number> = nameTable();
      if (this.op) {
        for (const o of s.outputs) {
          const x = this.v(this.t(o.device).out);
          if (x !== undefined) outputVolts[o.device] = x;
        }
      }
      estimate = this.est = estimateStructure(this.circuit, s, {
        temperatureC: this.temperatureC,
        outputVolts: this.op ? outputVolts : undefined,
        structures: this.shared.all,
        irefGiven: s.reference.feed === 'other' || s.reference.feed === 'mirror-output' ? this.measured?.iref : undefined,
        deviceCurrents: this.op ? this.collectorCurrents() : undefined,
        nodeVolts: this.at?.volts,
        recordSteps: this.options.handAnalysisSteps,
      });
      // Without a feed the hand analysis can model and without a solve to borrow IREF from, there is no estimate to show.
      if (estimate.irefFrom === 'unknown') estimate = this.est = undefined;
      for (const v of s.voltages ?? []) {
        v.estimate = this.est?.voltages?.[v.name];
        v.tempcoByHandPpmPerC = this.est?.voltageTempco?.[v.name];
        v.solved = this.at ? voltageAt(s, v, this.at.volts) : undefined;
      }
      if (figures && estimate) held |= estimateFigures(estimate, s.outputs, figures, n);
      if (figures && this.complianceFigures(figures, n)) held |= HELD.COMPLIANCE;
      else compliance = this.compliance();
      if (figures) {
        this.outputResistanceFigures(figures, n);
        held |= HELD.RESISTANCE;
      } else outputResistance = this.outputResistance();
    } finally {
      keepChecked(s, figures, held, { solved: this.solved, headroom, compliance, outputResistance, estimate });
    }
    const unfed = this.referenceUnfed();
    // An unfed reference says why the estimate is zero; the leakage the solve carries is no discrepancy to explain.
    s.discrepancy = unfed ? undefined : this.discrepancy();

    if (unfed) this.reportUnfed();
    this.checkStarved();
    this.checkRegions();
    this.checkUnmatched();
    this.checkRatios();
    if (s.discrepancy) this.reportDiscrepancy();
    this.kindChecks();
    return this.findings;
  }

  /** Solved collector current of each bipolar device of the structure, so the hand analysis uses the model's β there. */
  private collectorCurrents(): Record<string, number> {
    const out: Record<string, number> = nameTable();
    for (const d of this.s.devices) {
      const rec = this.record(d);
      if (rec && rec.type === 'bjt') out[d] = rec.ic;
    }
    return out;
  }

  /** The kind's own checks (e.g. a wide-swing cascode's bottom devices), emitted like the shared ones. */
  private kindChecks(): void {
    const kind = kindOf(this.s.kind);
    if (!kind.check) return;
    const found = kind.check({
      s: this.s,
      bipolar: this.bipolar,
      sign: this.sign,
      op: this.op,
      v: (node) => {
        const x = this.at?.volts(node);
        return x !== undefined && Number.isFinite(x) ? x : undefined;
      },
      headroomMarginV: this.options.headroomMarginV,
    });
    for (const f of found) {
      const el = this.topo.elementByName.get(f.at);
      if (el && STRUCTURE_CODES[f.code]) this.emit(f.code, el, f.message, f.data);
    }
  }

  // ---- records ----------------------------------------------------------

  /**
   * `compliance` written into `figures` (blocks `COMPLIANCE_MIN`, `COMPLIANCE_MAX`; NaN where an output has no edge), when
   * every end is a finite number; false (the table is made instead) when one is not.
   */
  private complianceFigures(figures: number[], n: number): boolean {
    const { top, bottom } = this.shared.railRange;
    const outs = this.s.outputs;
    for (let o = 0; o < n; o++) {
      const edge = this.edgeVolts(outs[o].device);
      if (edge === undefined) continue;
      const min = this.sign > 0 ? edge : Math.min(bottom, edge);
      const max = this.sign > 0 ? Math.max(top, edge) : edge;
      if (!Number.isFinite(min) || !Number.isFinite(max)) return false;
      figures[FIGURE.COMPLIANCE_MIN * n + o] = min;
      figures[FIGURE.COMPLIANCE_MAX * n + o] = max;
    }
    return true;
  }

  private compliance(): Structure['compliance'] {
    const { top, bottom } = this.shared.railRange;
    const out: Structure['compliance'] = nameTable();
    for (const o of this.s.outputs) {
      const edge = this.edgeVolts(o.device);
      if (edge === undefined) continue;
      out[o.device] = this.sign > 0 ? { min: edge, max: Math.max(top, edge) } : { min: Math.min(bottom, edge), max: edge };
    }
    return out;
  }

  /** Output-node voltage at the edge of the active region: the output's base (VBC = 0) or V(gate) − VTH. */
  private edgeVolts(device: string): number | undefined {
    const t = this.t(device);
    if (this.op) {
      const vb = this.v(t.ctrl);
      if (vb === undefined) return undefined;
      if (this.bipolar) return vb;
      const rec = this.record(device);
      // MosRecord.vov is in the device's own polarity (positive when on): edge = V(source) ± VOV.
      if (rec && rec.type === 'mosfet') {
        const vs = this.v(t.common);
        if (vs !== undefined) return vs + this.sign * rec.vov;
      }
      // A JFET's pinch-off voltage keeps the device's own sense for both channel types: edge = V(gate) − sign·VP.
      if (rec && rec.type === 'jfet') return vb - this.sign * rec.vto;
      if (t.element.kind === 'J') return vb - this.sign * (t.element.model.params.VTO ?? 0);
      return vb - (t.element.model.params.VTO ?? 0);
    }
    return this.est?.outputEdge?.[device];
  }

  /**
   * Small-signal gm, ro, rπ and beta of one device: from the solved record when there is one
   * (ro with the VCB/VDS term of the device law), else textbook values at current `i`:
   * gm = IC/(NF·VT), rπ = β/gm, ro = VA/IC (Gray et al., ch. 1); gm = sqrt(2·KP·(W/L)·M·ID),
   * ro = 1/(λ·ID) (Razavi, ch. 2).
   */
  smallSignal(name: string, i: number): SmallSignal {
    const t = this.t(name);
    const p = t.element.model.params;
    const rec = this.record(name);
    if (this.bipolar) {
      const beta = p.BF > 0 ? p.BF : 100;
      if (rec && rec.type === 'bjt' && rec.gm > 0) {
        // The record's ro is the slope ∂VCE/∂IC at the operating point: (VA + VCB)/IC in forward-active in
        // either polarity (the device law IC = IT·(1 − VBC/VA) in its own polarity), the low saturated slope otherwise.
        const ro = rec.roInfinite || !(rec.ro > 0) ? UNBOUNDED_OHMS : Math.min(rec.ro, UNBOUNDED_OHMS);
        return { gm: rec.gm, ro, rpi: rec.rpi > 0 ? rec.rpi : beta / rec.gm, beta: rec.rpi > 0 ? rec.gm * rec.rpi : beta, gmb: 0 };
      }
      const gm = i / ((p.NF > 0 ? p.NF : 1) * thermalVolts(this.temperatureC));
      return { gm, ro: bjtRo(p.VAF ?? Infinity, i), rpi: gm > 0 ? beta / gm : UNBOUNDED_OHMS, beta, gmb: 0 };
    }
    if (rec && rec.type === 'mosfet' && rec.gm > 0) {
      // Body effect: a source off its bulk node moves VBS with the output (none when the bulk is tied to the source).
      const el = t.element;
      const gmb = el.kind === 'M' && el.nodes[3] !== el.nodes[2] && rec.gmbs > 0 ? rec.gmbs : 0;
      return { gm: rec.gm, ro: rec.roInfinite ? UNBOUNDED_OHMS : rec.ro, rpi: Infinity, beta: Infinity, gmb };
    }
    if (rec && rec.type === 'jfet' && rec.gm > 0) return { gm: rec.gm, ro: rec.roInfinite ? UNBOUNDED_OHMS : rec.ro, rpi: Infinity, beta: Infinity, gmb: 0 };
    // Square law ID = k/2·VOV²: k = KP·(W/L)·M for a MOSFET, 2·BETA·area·M for a JFET (docs/DEVICE-MODELS.md).
    const kb = t.element.kind === 'J' ? 2 * (p.BETA > 0 ? p.BETA : 1e-4) * t.scale : (p.KP > 0 ? p.KP : 2e-5) * t.scale;
    return { gm: Math.sqrt(2 * kb * Math.max(i, 0)), ro: mosRo(p.LAMBDA ?? 0, i), rpi: Infinity, beta: Infinity, gmb: 0 };
  }

  /** Resistance of the reference feed seen from the reference node (a current source is ideal). */
  feedOhms(): number {
    const ref = this.s.reference;
    if (ref.feed !== 'resistor') return UNBOUNDED_OHMS;
    return ref.elements.reduce((sum, r) => {
      const el = this.topo.elementByName.get(r);
      return sum + (el && el.kind === 'R' && el.resistance > 0 ? el.resistance : 0);
    }, 0);
  }

  irefOr(fallback: number): number {
    return this.measured?.iref || this.est?.iref || fallback;
  }

  withRole(role: StructureRole): string | undefined {
    return this.s.devices.find((d) => roleOf(this.s, d) === role);
  }

  resistance(name: string): number {
    const el = this.topo.elementByName.get(name);
    return el && el.kind === 'R' && el.resistance > 0 ? el.resistance : 0;
  }

  private outputResistance(): Record<string, number> {
    const res: Record<string, number> = nameTable();
    for (const o of this.s.outputs) res[o.device] = this.outputOhms(o);
    return res;
  }

  /** `outputResistance` written into `figures` (block `RESISTANCE`): each a finite number by construction. */
  private outputResistanceFigures(figures: number[], n: number): void {
    const outs = this.s.outputs;
    for (let o = 0; o < n; o++) figures[FIGURE.RESISTANCE * n + o] = this.outputOhms(outs[o]);
  }

  /** One output's small-signal output resistance (Ω, at most `UNBOUNDED_OHMS`, which stands for unbounded). */
  private outputOhms(o: StructureOutput): number {
    const i = this.measured?.iout[o.device] || this.est?.iout[o.device] || 0;
    if (!(i > 0)) return UNBOUNDED_OHMS;
    const out = this.smallSignal(o.device, i);
    let r = out.ro >= UNBOUNDED_OHMS ? UNBOUNDED_OHMS : kindOf(this.s.kind).outputResistance(this, o, out, i);
    r = this.saturatedBaseLoading(o, out, r);
    return Number.isFinite(r) && r > 0 ? Math.min(r, UNBOUNDED_OHMS) : UNBOUNDED_OHMS;
  }

  /**
   * The measurement's IREF, output currents and headroom written into `figures`, when each is a finite number (the
   * measurement's tables hold every output, in order); false when one is not.
   */
  private measuredFigures(figures: number[]): boolean {
    const m = this.measured!;
    const outs = this.s.outputs;
    const n = outs.length;
    if (!Number.isFinite(m.iref)) return false;
    for (let o = 0; o < n; o++) {
      const i = m.iout[outs[o].device];
      const h = m.headroom[outs[o].device];
      if (i === undefined || h === undefined || !Number.isFinite(i) || !Number.isFinite(h)) return false;
      figures[FIGURE.SOLVED_IOUT * n + o] = i;
      figures[FIGURE.HEADROOM * n + o] = h;
    }
    figures[FIGURE.PER_OUTPUT * n + FIGURE.SOLVED_IREF] = m.iref;
    return true;
  }

  /**
   * A saturated bipolar output whose base sits on the reference node: its forward-biased
   * base–collector junction (gμ) lets the collector move the shared base line, whose resistance
   * RB is the diode-connected reference (1/gm1) in parallel with the feed; the base moves by
   * gμ·ΔV·(RB ∥ rπ) and the collector current by gm times that. Output conductance
   * go + gm·gμ·(RB ∥ rπ) (node analysis of the hybrid-π model with rμ, Gray, Hurst, Lewis, Meyer,
   * 5th ed., ch. 1/3; from memory). Active outputs (gμ ≈ 0) are left as the kind computed them.
   */
  private saturatedBaseLoading(o: StructureOutput, out: SmallSignal, r: number): number {
    const rec = this.record(o.device);
    if (!rec || rec.type !== 'bjt' || rec.region !== 'saturation' || !(rec.gmu > 0) || !(r > 0) || r >= UNBOUNDED_OHMS) return r;
    if (this.t(o.device).ctrl !== this.t(this.s.reference.device).ctrl) return r;
    const q1 = this.smallSignal(this.s.reference.device, this.irefOr(0));
    const par = (a: number, b: number) => (a >= UNBOUNDED_OHMS ? b : b >= UNBOUNDED_OHMS ? a : (a * b) / (a + b));
    const rb = par(par(q1.gm > 0 ? 1 / q1.gm : UNBOUNDED_OHMS, this.feedOhms()), out.rpi);
    if (!(rb > 0) || rb >= UNBOUNDED_OHMS) return r;
    return 1 / (1 / r + out.gm * rec.gmu * rb);
  }

  /**
   * Calls `visit` with each quantity the estimate is compared on (IREF, each output's current, each voltage the
   * structure produces) that has a relative error (`relativeError`); stops at the first call that returns true, and
   * returns whether one did.
   */
  private compare(visit: (key: string, e: number, x: number, rel: number, unit: 'A' | 'V') => boolean | void): boolean {
    const est = this.est;
    const sol = this.solved;
    if (!est || !sol || est.irefFrom === 'unknown') return false;
    const one = (key: string, e: number, x: number, unit: 'A' | 'V'): boolean => {
      const rel = relativeError(e, x, unit);
      return rel !== undefined && visit(key, e, x, rel, unit) === true;
    };
    if (one('IREF', est.iref, sol.iref, 'A')) return true;
    for (const o of this.s.outputs) if (one(o.device, est.iout[o.device] ?? 0, sol.iout[o.device] ?? 0, 'A')) return true;
    // The voltages a structure produces (VBG, a VBE multiplier's voltage) are compared like its currents.
    for (const v of this.s.voltages ?? []) if (v.estimate !== undefined && v.solved !== undefined && one(v.name, v.estimate, v.solved, 'V')) return true;
    return false;
  }

  /** Per output (and IREF) relative errors of the estimate against the solve (see `relativeError`). */
  private errors(): { key: string; est: number; solved: number; rel: number; unit: 'A' | 'V' }[] {
    const rows: { key: string; est: number; solved: number; rel: number; unit: 'A' | 'V' }[] = [];
    this.compare((key, e, x, rel, unit) => {
      rows.push({ key, est: Math.max(e, 0), solved: x, rel, unit });
    });
    return rows;
  }

  /**
   * Whether some quantity is off by more than `DISCREPANCY_THRESHOLD`, asked before `errors` makes its rows: a
   * healthy structure (nearly every one of a large circuit) then makes no row objects or filtered list.
   */
  private differs(): boolean {
    return this.compare((_key, _e, _x, rel) => Math.abs(rel) > DISCREPANCY_THRESHOLD);
  }

  private discrepancy(): string | undefined {
    if (!this.differs()) return undefined;
    const rows = this.errors();
    const bad = rows.filter((r) => Math.abs(r.rel) > DISCREPANCY_THRESHOLD);
    if (bad.length === 0) return undefined;
    const reasons: string[] = [];
    const s = this.s;
    if (bad.some((r) => r.rel === Infinity)) {
      reasons.push('the hand estimate collapses to 0 A while the operating point carries current (a self-biased loop also has a zero-current solution, which the hand equations found instead of the working state)');
    }
    for (const d of s.devices) {
      if (this.isOff(d) && (d === s.reference.device || s.outputs.some((o) => o.device === d))) reasons.push(`${d} carries no current at the operating point`);
    }
    for (const d of this.measured?.outOfRegion ?? []) {
      if (this.isOff(d)) continue;
      const rec = this.record(d);
      const saturated = rec?.type === 'bjt' && rec.region === 'saturation';
      reasons.push(
        `${d} is out of its active region at the operating point` +
          (saturated && s.outputs.length > 1 ? ' (saturated, it also draws extra base current from the shared control node, which lowers the other outputs)' : ''),
      );
    }
    const unmatched = this.unmatchedPairs();
    if (unmatched.length > 0) reasons.push(`unmatched devices (${unmatched.map((u) => `${u.device}: ${u.differing.join(', ')}`).join('; ')})`);
    const byIs = this.isRatios();
    for (const r of bad) {
      const is = byIs[r.key];
      // An estimate that misses by just the IS ratio did not carry the intended ratio.
      if (is && Number.isFinite(r.rel) && Math.abs((1 + r.rel) / is.ratio - 1) < 0.2) reasons.push(`the hand estimate does not carry ${r.key}'s intended IS ratio (×${sig(is.ratio)})`);
    }
    const finiteEarly = s.devices.some((d) => {
      const p = this.t(d).element.model.params;
      return this.bipolar ? Number.isFinite(p.VAF ?? Infinity) && (p.VAF ?? 0) > 0 : (p.LAMBDA ?? 0) > 0;
    });
    if (finiteEarly) {
      const earlyInFormula = kindOf(s.kind).earlyInFormula;
      const vceMismatch = s.outputs.some((o) => {
        const t = this.t(o.device);
        const vo = this.v(t.out);
        const vc = this.v(t.ctrl);
        return vo !== undefined && vc !== undefined && Math.abs(vo - vc) > 0.1;
      });
      if (!earlyInFormula && vceMismatch) reasons.push(`the ${this.bipolar ? 'Early effect (VCE of output and reference differ, finite VAF)' : 'channel-length modulation (VDS of output and reference differ, λ > 0)'} is not in this kind's hand formula`);
    }
    const loads = this.controlLoads();
    if (loads.length > 0) reasons.push(`base-current or other loading of the control node by ${loads.join(', ')}`);
    const tnoms = new Set(s.devices.map((d) => this.t(d).element.model.params.TNOM).filter((x) => x !== undefined));
    if (tnoms.size > 1) reasons.push('temperature mismatch (the models have different nominal temperatures)');
    const irefRow = rows.find((r) => r.key === 'IREF');
    if (irefRow && Math.abs(irefRow.rel) > DISCREPANCY_THRESHOLD && s.reference.feed === 'mirror-output')
      reasons.push(`IREF comes from ${s.reference.elements[0]} of ${s.reference.fedBy}, which delivers ${eng(irefRow.solved, 'A')} against ${eng(irefRow.est, 'A')} by hand (see that structure)`);
    if (irefRow && Math.abs(irefRow.rel) > DISCREPANCY_THRESHOLD && reasons.length === 0)
      reasons.push(`the reference branch: IREF ${eng(irefRow.est, 'A')} by hand against ${eng(irefRow.solved, 'A')} solved, so something else on the reference node draws or supplies current`);
    if (reasons.length === 0) reasons.push(kindOf(s.kind).simplifications(s));
    return reasons.join('; ');
  }

  /** Elements on the structure's control nodes that draw current there without being part of it or its feed. */
  private controlLoads(): string[] {
    const members = new Set(this.s.devices);
    const feed = new Set(this.s.reference.elements);
    const nodes = new Set<number>();
    for (const d of this.s.devices) {
      const t = this.t(d);
      const role = roleOf(this.s, d);
      if (role === 'reference' || role === 'lower-diode' || role === 'output') nodes.add(t.ctrl);
    }
    // A bias branch of the structure's own (a wide-swing cascode's bias device) is fed on purpose.
    for (const d of this.s.devices) if (roleOf(this.s, d) === 'cascode-bias') nodes.delete(this.t(d).out);
    const names = new Set<string>();
    for (const n of nodes) {
      for (const a of this.topo.conducting(n)) {
        if (members.has(a.element.name) || feed.has(a.element.name)) continue;
        if (n === this.topo.nodeIndex.get(this.s.reference.node) && this.s.reference.feed === 'other' && a.slot !== 1) continue;
        // The helper's pull-downs on its emitter node are part of the hand analysis.
        if (kindOf(this.s.kind).pullDownsInFormula && (a.element.kind === 'R' || a.element.kind === 'I')) continue;
        names.add(a.element.name);
      }
    }
    return [...names].sort();
  }

  /**
   * Devices whose model differs from the reference's in a parameter that breaks the match. A bipolar
   * model that differs only in IS is an intended ratio (IS scales like the emitter area), not a
   * mismatch: see `isRatios`.
   */
  private unmatchedPairs(): { device: string; model: Model; differing: string[] }[] {
    const ref = this.t(this.s.reference.device).element.model;
    const keys = MATCH_PARAMS[this.bipolar ? 'bjt' : 'mos'];
    const out: { device: string; model: Model; differing: string[] }[] = [];
    for (const d of this.s.devices) {
      if (d === this.s.reference.device) continue;
      const m = this.t(d).element.model;
      if (m === ref) continue;
      const differing = keys.filter((k) => !sameNumber(m.params[k], ref.params[k]));
      if (this.bipolar && differing.length === 1 && differing[0] === 'IS') continue;
      if (differing.length > 0) out.push({ device: d, model: m, differing });
    }
    return out;
  }

  /** Outputs whose model differs from the reference's only in IS: the intended ratio IS(output)/IS(reference), by device. */
  private isRatios(): Readonly<Record<string, { ratio: number; model: Model; refModel: Model }>> {
    // The table is made only for a structure that has such an output (a mirror of one model has none).
    let out: Record<string, { ratio: number; model: Model; refModel: Model }> | undefined;
    if (!this.bipolar) return NO_IS_RATIOS;
    const ref = this.t(this.s.reference.device).element.model;
    for (const o of this.s.outputs) {
      const m = this.t(o.device).element.model;
      const ratio = isOnlyRatio(m, ref);
      if (ratio !== undefined) (out ??= nameTable())[o.device] = { ratio, model: m, refModel: ref };
    }
    return out ?? NO_IS_RATIOS;
  }

  // ---- findings ---------------------------------------------------------

  private related(except: string[]): RelatedLocation[] {
    const rel: RelatedLocation[] = [];
    for (const d of this.s.devices) {
      if (except.includes(d)) continue;
      const el = this.topo.elementByName.get(d);
      if (el) rel.push({ uri: el.origin.uri, span: el.origin.span, message: `${d}: ${roleOf(this.s, d) ?? 'device'} of the ${kindName(this.s.kind)}` });
    }
    for (const r of this.s.reference.elements) {
      if (except.includes(r)) continue;
      const el = this.topo.elementByName.get(r);
      if (el) rel.push({ uri: el.origin.uri, span: el.origin.span, message: `${r}: feeds the reference (${this.s.reference.feed})` });
    }
    return rel;
  }

  private emit(code: string, at: Element, message: string, data: Record<string, unknown>): void {
    this.findings.push({
      code,
      severity: STRUCTURE_CODES[code].severity,
      message,
      uri: at.origin.uri,
      span: at.origin.span,
      related: this.related([at.name]),
      data: jsonSafe({ structure: this.s.id, ...data }),
    });
  }

  /**
   * Whether nothing feeds the structure's reference node: recognition found no feed (`other`, no elements), the
   * solve carries no reference current, and nothing at the node but the reference device itself and control
   * terminals (bases and gates, of the structure's devices or others), which draw current from the node and cannot
   * supply the reference's. By Kirchhoff's current law the reference then carries nothing but the leakage the solver's
   * junction conductances allow. Any other terminal there (another device's collector, drain or emitter, such as a
   * self-biased loop's closing device at rest; a part of the structure, such as a start-up resistor) is a connection
   * that could feed it: not unfed.
   */
  private referenceUnfed(): boolean {
    const ref = this.s.reference;
    if (ref.feed !== 'other' || ref.elements.length > 0 || !this.measured || !belowFloor(this.measured.iref, 'A')) return false;
    const node = this.topo.nodeIndex.get(ref.node);
    if (node === undefined || node === 0) return false;
    for (const a of this.topo.conducting(node)) {
      const el = a.element;
      if (el.name === ref.device) continue;
      if ((el.kind === 'Q' || el.kind === 'J' || el.kind === 'M') && a.slot === 1) continue;
      return false;
    }
    return true;
  }

  private reportUnfed(): void {
    const s = this.s;
    const ref = s.reference;
    const at = this.topo.elementByName.get(ref.device)!;
    const outputs = s.outputs.map((o) => `${o.device} ${eng(this.measured?.iout[o.device] ?? 0, 'A')}`).join(', ');
    this.emit(
      'reference-unfed',
      at,
      `Nothing feeds the reference node ${ref.node} of the ${kindName(s.kind)} on ${ref.device}: no resistor, source or device outside the ${kindName(s.kind)} supplies it, so IREF is ${eng(this.measured!.iref, 'A')} and its output${s.outputs.length > 1 ? 's carry' : ' carries'} only leakage (${outputs}). A feed from a supply (a resistor or a current source) is missing, or its node name is misspelt.`,
      { referenceDevice: ref.device, node: ref.node, iref: this.measured!.iref },
    );
  }

  private checkStarved(): void {
    const est = this.est;
    if (!est?.starved) return;
    const ref = this.s.reference;
    const refDev = this.topo.elementByName.get(ref.device)!;
    const first = ref.elements[0] ? this.topo.elementByName.get(ref.elements[0]) : undefined;
    const at = first ?? refDev;
    if (ref.feed === 'current-source') {
      this.emit(
        'reference-starved',
        at,
        `${first?.name ?? 'The current source'} drives current out of the reference node ${ref.node}, the wrong way for the ${technologyWords(this.s.technology)} reference ${ref.device}: the ${kindName(this.s.kind)} carries no current.`,
        { referenceDevice: ref.device, iref: est.iref },
      );
      return;
    }
    const sup = est.supply;
    const chain = ref.elements.join(' + ');
    const stackWord = this.bipolar ? 'VBE' : 'VTH';
    const n = referenceJunctions(this.s);
    const msg = sup
      ? `The supply cannot forward-bias the reference of the ${kindName(this.s.kind)} on ${ref.device}: ${eng(sup.available, 'V')} across ${chain} and the reference chain, below the ${eng(sup.needed, 'V')} that ${n > 1 ? `${n} stacked ${stackWord}s need` : `one ${stackWord} needs`}${this.bipolar ? ' (about 0.6 V each)' : ''}; IREF by hand is only ${eng(est.iref, 'A')}.`
      : `The reference resistor chain ${chain} of the ${kindName(this.s.kind)} on ${ref.device} has no usable resistance; IREF cannot be set.`;
    this.emit('reference-starved', at, msg, { referenceDevice: ref.device, availableV: sup?.available, neededV: sup?.needed, iref: est.iref, resistors: ref.elements });
  }

  private checkRegions(): void {
    if (!this.measured || !this.op) return;
    const margin = this.options.headroomMarginV;
    for (const o of this.s.outputs) {
      const t = this.t(o.device);
      const head = this.measured.headroom[o.device];
      const solved = this.measured.iout[o.device];
      const active = this.est?.iout[o.device] ?? 0;
      const off = this.isOff(o.device);
      // An off output's junction signs are noise: it is judged only as cut off, and only when the hand analysis expects it to carry current.
      if (off && !(active > 0 && !belowFloor(active, 'A'))) continue;
      const edge = this.edgeVolts(o.device);
      const vout = this.v(t.out);
      if (off || this.measured.outOfRegion.includes(o.device)) {
        const rec = this.record(o.device);
        const facts = TECHNOLOGIES[this.s.technology];
        const region = off ? 'cutoff' : rec && (rec.type === 'bjt' || rec.type === 'mosfet' || rec.type === 'jfet') ? rec.region : head < 0 ? facts.beyondRegion : 'cutoff';
        const err = active > 0 ? (solved - active) / active : 0;
        const parts: string[] = [];
        let what: string;
        if (region === 'cutoff') {
          const vb = this.v(t.ctrl) ?? 0;
          const ve = this.v(t.common) ?? 0;
          what = `is cut off at the operating point (${this.bipolar ? (this.sign > 0 ? 'VBE' : 'VEB') : this.sign > 0 ? 'VGS' : 'VSG'} = ${eng(this.sign * (vb - ve), 'V')})`;
        } else if (this.bipolar) {
          const j = this.sign > 0 ? 'VBC' : 'VCB';
          what = `is ${region === 'reverse-active' ? 'reverse-active' : 'saturated'} at the operating point: ${j} = ${signedVolts(-head)}, ${eng(-head, 'V')} past the forward-active edge (${j} ≤ 0)`;
        } else if (facts.family === 'jfet') {
          const vov = rec && rec.type === 'jfet' ? this.sign * rec.vgs - rec.vto : 0;
          what = `is ${facts.beyondState} at the operating point: ${this.sign > 0 ? 'VDS' : 'VSD'} is ${eng(-head, 'V')} below ${this.sign > 0 ? 'VGS − VP' : 'VSG + VP'} = ${eng(vov, 'V')} (VP the pinch-off voltage)`;
        } else {
          const vov = rec && rec.type === 'mosfet' ? rec.vov : 0;
          what = `is in triode at the operating point: ${this.sign > 0 ? 'VDS' : 'VSD'} is ${eng(-head, 'V')} below the overdrive ${this.sign > 0 ? 'VGS − VTH' : 'VSG − |VTH|'} = ${eng(vov, 'V')}`;
        }
        parts.push(`${o.device} (output of the ${kindName(this.s.kind)} on ${this.s.reference.device}) ${what}.`);
        if (active > 0) parts.push(`It carries ${eng(solved, 'A')} against ${eng(active, 'A')} expected in the active region (${percent(err)}).`);
        const data: Record<string, unknown> = { device: o.device, region, pastEdgeV: -head, solvedA: solved, activeA: active, currentError: err, outputNode: o.node, outputV: vout };
        if (edge !== undefined && region !== 'cutoff') {
          const cmp = this.sign > 0 ? '≥' : '≤';
          // The advice keeps the headroom margin, not just the edge: an output parked on the edge fails at the first corner.
          const keep = edge + this.sign * margin;
          let advice = `Keep V(${o.node}) ${cmp} ${eng(keep, 'V')} (the edge at ${eng(edge, 'V')} plus the ${eng(margin, 'V')} margin)`;
          data.edgeV = edge;
          data.marginV = margin;
          const load = this.loadResistor(t);
          if (load && active > 0) {
            const rmax = (this.sign * (load.railV - keep)) / active;
            if (rmax > 0) {
              advice += `, i.e. ${load.name} ≤ ${eng(rmax, 'Ω')} at ${eng(active, 'A')}`;
              data.loadResistor = load.name;
              data.maxLoadOhms = rmax;
            } else advice += `; no value of ${load.name} to its rail ${eng(load.railV, 'V')} can do that`;
          }
          parts.push(advice + '.');
        }
        this.emit('mirror-output-out-of-region', t.element, parts.join(' '), data);
      } else if (head < margin) {
        const edgeText = edge !== undefined ? ` against the edge at ${eng(edge, 'V')}` : '';
        const basis = this.bipolar
          ? ` (edge: VBC = 0; stricter than the textbook VCE(sat) ≈ 0.2 V)`
          : ` (edge: VDS = VGS − VTH)`;
        this.emit(
          'mirror-headroom-low',
          t.element,
          `${o.device} (output of the ${kindName(this.s.kind)} on ${this.s.reference.device}) has ${eng(head, 'V')} of headroom, under the ${eng(margin, 'V')} margin: V(${o.node}) = ${eng(vout ?? 0, 'V')}${edgeText}${basis}.`,
          { device: o.device, headroomV: head, marginV: margin, outputV: vout, edgeV: edge },
        );
      }
    }
  }

  /** The single resistor from an output node to a rail, when the node's load is just that. */
  private loadResistor(t: Transistor): { name: string; railV: number } | undefined {
    const load = loadResistorOf(this.circuit, this.topo, t);
    return load ? { name: load.resistor.name, railV: load.railV } : undefined;
  }

  private checkUnmatched(): void {
    const refT = this.t(this.s.reference.device);
    const refModel = refT.element.model;
    for (const u of this.unmatchedPairs()) {
      const t = this.t(u.device);
      const err = this.mismatchError(refT, t);
      this.emit(
        'mirror-unmatched',
        t.element,
        `${u.device} uses model ${u.model.name} while the reference ${refT.name} uses ${refModel.name}; they differ in ${u.differing
          .map((k) => `${k} (${sig(u.model.params[k])} vs ${sig(refModel.params[k])})`)
          .join(', ')}, which shifts the ${kindName(this.s.kind)}'s ratio by about ${percent(err)}.`,
        { device: u.device, referenceDevice: refT.name, models: [refModel.name, u.model.name], differing: u.differing, ratioErrorPercent: err * 100 },
      );
    }
  }

  /** Relative ratio error a model difference causes at the estimated bias: IS (or KP, VTO) and beta / λ effects. */
  private mismatchError(ref: Transistor, t: Transistor): number {
    const pr = ref.element.model.params;
    const pt = t.element.model.params;
    const T = this.temperatureC;
    if (this.bipolar) {
      const isR = isAtTemperature(pr.IS ?? 1e-16, T, cardTnomC(pr, this.circuit.tnomC), pr.XTI ?? 3, pr.EG ?? 1.11);
      const isT = isAtTemperature(pt.IS ?? 1e-16, T, cardTnomC(pt, this.circuit.tnomC), pt.XTI ?? 3, pt.EG ?? 1.11);
      // Same VBE: IC scales with IS(T); the NF difference scales the exponent.
      const vbe = this.est?.vControl ?? 0.65;
      const vt = thermalVolts(T);
      const exp = vbe / ((pt.NF ?? 1) * vt) - vbe / ((pr.NF ?? 1) * vt);
      let ratio = (isT / isR) * Math.exp(Math.max(Math.min(exp, 50), -50));
      const bR = pr.BF ?? 100;
      const bT = pt.BF ?? 100;
      if (bR > 0 && bT > 0) ratio *= (1 + 2 / bR) / (1 + 1 / bR + 1 / bT);
      const vaR = pr.VAF ?? Infinity;
      const vaT = pt.VAF ?? Infinity;
      const vce = this.op ? Math.abs((this.v(t.out) ?? 0) - (this.v(t.common) ?? 0)) : vbe;
      const early = (va: number) => (Number.isFinite(va) && va > 0 ? 1 + vce / va : 1);
      ratio *= early(vaT) / early(vaR);
      return ratio - 1;
    }
    const vgs = this.est?.vControl ?? 1;
    const vthR = this.sign * (pr.VTO ?? 0);
    const vthT = this.sign * (pt.VTO ?? 0);
    const vovR = vgs - vthR;
    const vovT = vgs - vthT;
    if (!(vovR > 0)) return 0;
    let ratio = ((pt.KP ?? 2e-5) / (pr.KP ?? 2e-5)) * Math.pow(Math.max(vovT, 0) / vovR, 2);
    const vds = this.op ? Math.abs((this.v(t.out) ?? 0) - (this.v(t.common) ?? 0)) : vgs;
    ratio *= (1 + (pt.LAMBDA ?? 0) * vds) / (1 + (pr.LAMBDA ?? 0) * vds);
    return ratio - 1;
  }

  private checkRatios(): void {
    const kind = kindOf(this.s.kind);
    const byIs = this.isRatios();
    for (const o of this.s.outputs) {
      if (this.isOff(o.device)) continue; // no ratio on a device that carries nothing
      const is = byIs[o.device];
      if (is) {
        // Source: the transport model (docs/DEVICE-MODELS.md) — at one VBE, IC scales with IS, so IS2/IS1 multiplies the
        // geometric ratio; recognition already folded it into the output's intended ratio (`isRatio` says how much).
        const total = o.ratio;
        const geometric = o.ratio / (o.isRatio ?? 1);
        const geometry = Math.abs(geometric - 1) < 1e-9 ? '' : ` and ${sig(geometric)} by area × M`;
        this.emit(
          'mirror-ratio',
          this.t(o.device).element,
          `${o.device} is a 1:${sig(total)} output of the ${kindName(this.s.kind)} on ${this.s.reference.device}: its model ${is.model.name} differs from the reference's ${is.refModel.name} only in IS (${sig(is.model.params.IS!)} vs ${sig(is.refModel.params.IS!)}), read as an intended ratio of ${sig(is.ratio)}${geometry}, as an emitter-area ratio would be.`,
          { device: o.device, ratio: total, isRatio: is.ratio, geometricRatio: geometric },
        );
        continue;
      }
      const note = kind.ratio({ s: this.s, bipolar: this.bipolar, estimate: this.est }, o);
      if (note) this.emit('mirror-ratio', this.t(o.device).element, note.message, note.data);
    }
  }

  private reportDiscrepancy(): void {
    const rows = this.errors();
    // Point at the output that is furthest off; at the reference device when only IREF is.
    const outs = rows.filter((r) => r.unit === 'A' && r.key !== 'IREF' && Math.abs(r.rel) > DISCREPANCY_THRESHOLD);
    const worst = outs.length > 0 ? outs.reduce((a, b) => (Math.abs(b.rel) > Math.abs(a.rel) ? b : a)) : undefined;
    const dev = worst ? worst.key : this.s.reference.device;
    const el = this.topo.elementByName.get(dev)!;
    const list = rows
      .filter((r) => Math.abs(r.rel) > DISCREPANCY_THRESHOLD)
      .map((r) => `${r.unit === 'V' || r.key === 'IREF' ? r.key : `IOUT(${r.key})`} ${eng(r.est, r.unit)} by hand, ${eng(r.solved, r.unit)} solved (${Number.isFinite(r.rel) ? percent(r.rel) : 'the estimate is zero'})`)
      .reverse()
      .join('; ');
    this.emit(
      'estimate-differs-from-solved',
      el,
      `The hand estimate of the ${kindName(this.s.kind)} on ${this.s.reference.device} differs from the operating point by more than ${sig(DISCREPANCY_THRESHOLD * 100)} %: ${list}. Likely: ${this.s.discrepancy}.`,
      {
        rows: rows.map((r) => ({
          quantity: r.key,
          ...(r.unit === 'A' ? { estimateA: r.est, solvedA: r.solved } : { estimateV: r.est, solvedV: r.solved }),
          ...(Number.isFinite(r.rel) ? { relative: r.rel } : {}),
        })),
        reason: this.s.discrepancy,
      },
    );
  }
}


/** The IS ratios of a structure without IS-only outputs: never written, only looked up. */
const NO_IS_RATIOS: Readonly<Record<string, { ratio: number; model: Model; refModel: Model }>> = Object.freeze(nameTable<{ ratio: number; model: Model; refModel: Model }>());

/** Replaces non-finite numbers (not JSON-safe) by null and drops undefined fields. */
function jsonSafe(data: Record<string, unknown>): Record<string, unknown> {
  const fix = (v: unknown): unknown => {
    if (typeof v === 'number') return Number.isFinite(v) ? v : v > 0 ? UNBOUNDED_OHMS : v < 0 ? -UNBOUNDED_OHMS : null;
    if (Array.isArray(v)) return v.map(fix);
    if (v && typeof v === 'object') {
      const o: Record<string, unknown> = nameTable();
      for (const [k, x] of Object.entries(v)) if (x !== undefined) o[k] = fix(x);
      return o;
    }
    return v;
  };
  return fix(data) as Record<string, unknown>;
}
