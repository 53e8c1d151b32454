// Hand analysis of one recognised structure: IREF from its feed, solved self-consistently with the reference's VBE/VGS, then each output current.

import { MODEL_DEFAULTS, type Circuit, type CurrentSource, type Model } from '../circuit';
import { eng, sig } from './format';
import {
  cascodeGain,
  degeneratedOutput,
  diodeMosVgs,
  earlyFactor,
  helperMirrorGain,
  isAtTemperature,
  lambdaFactor,
  mosWidlarOutput,
  simpleMirrorGain,
  thermalVolts,
  thresholdWithBody,
  vbeAt,
  widlarOutput,
  wilsonGain,
} from './formulas';
import { railsByIndex } from './rails';
import { isBipolar, polaritySign, topologyOf, type Topology, type Transistor } from './topology';
import type { Estimate, EstimateStep, Structure } from './types';

/** Where and how to evaluate the hand analysis. */
export interface EstimateAt {
  temperatureC: number;
  /** Multiplies every BF (beta corners). */
  betaScale?: number;
  /** Node name -> volts, overriding the rails found in the circuit (supply corners). */
  railVolts?: Record<string, number>;
  /** Output device -> its output-node voltage (e.g. solved), for the Early / λ correction. */
  outputVolts?: Record<string, number>;
  /** The other structures of the circuit, so a mirror fed by another mirror's output can use that estimate. */
  structures?: Structure[];
  /** IREF to use when the feed cannot be estimated by hand (feed `other`), e.g. the solved one. */
  irefGiven?: number;
  /** Overrides of `Element.dc` by source name (supply corners on current sources). */
  sourceValues?: Record<string, number>;
}

/** Turn-on voltage per stacked junction below which a bipolar reference counts as starved: about one VBE(on) (common practice; Horowitz and Hill, 3rd ed., ch. 2: 0.6–0.7 V at 1 mA). */
export const STARVED_VBE = 0.6;
/** The 0.7 V shortcut designers use for VBE (common practice). */
export const SHORTCUT_VBE = 0.7;

const GRAY = 'Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4';
const RAZAVI = 'Razavi, Design of Analog CMOS Integrated Circuits, ch. 5';

/**
 * The hand analysis of one structure alone (no operating point). IREF comes from the feed:
 * resistor chain (V+ − V− − Σ VBE)/R solved together with each stacked device's VBE (or VGS)
 * at its own current, a current source's value, or the feeding structure's estimated output.
 * Outputs follow the formula of the structure's kind; every step is recorded.
 */
export function estimateStructure(circuit: Circuit, s: Structure, at: EstimateAt): Estimate {
  return new HandAnalysis(circuit, s, at, 0).run();
}

interface DeviceParams {
  t: Transistor;
  model: Model;
  /** Bipolar: effective IS at temperature (× area × M). */
  isEff: number;
  nfVt: number;
  beta: number;
  va: number;
  /** MOS: KP·W/L·M, own-polarity VTO, λ, γ, φ. */
  kBeta: number;
  vto: number;
  lambda: number;
  gamma: number;
  phi: number;
}

/** What the chain of a structure does at one IREF. */
interface ChainState {
  /** Voltage of the reference node above (NPN/NMOS) or below (PNP/PMOS) the common rail. */
  stack: number;
  /** VBE/VGS of the reference device. */
  vControl: number;
  /** Reference device current. */
  iRef: number;
  iout: Record<string, number>;
  /** Output device -> output-node edge voltage relative to the common rail (own polarity). */
  edge: Record<string, number>;
  steps: EstimateStep[];
}

class HandAnalysis {
  private readonly topo: Topology;
  private readonly sign: 1 | -1;
  private readonly bipolar: boolean;
  private readonly vt: number;
  private readonly railVolts = new Map<number, number>();
  private readonly params = new Map<string, DeviceParams>();
  /** The common rail's potential, looked up once (the IREF solve asks for it at every trial current). */
  private common: { v: number | undefined } | null = null;
  /** Degenerated outputs: the last solved collector current, the Newton start of the next trial IREF. */
  private readonly lastOut = new Map<string, number>();
  /** Σ ratios of a simple mirror without degenerated outputs (null for every other structure), for `stackAt`. */
  private simpleSum: number | null | undefined;

  constructor(
    private readonly circuit: Circuit,
    private readonly s: Structure,
    private readonly at: EstimateAt,
    private readonly depth: number,
  ) {
    this.topo = topologyOf(circuit);
    this.sign = polaritySign(s.technology);
    this.bipolar = isBipolar(s.technology);
    this.vt = thermalVolts(at.temperatureC);
    for (const [i, r] of railsByIndex(circuit)) this.railVolts.set(i, r.volts);
    for (const [name, v] of Object.entries(at.railVolts ?? {})) {
      const i = this.topo.nodeIndex.get(name);
      if (i !== undefined && Number.isFinite(v)) this.railVolts.set(i, v);
    }
  }

  private dev(name: string): DeviceParams {
    const known = this.params.get(name);
    if (known) return known;
    const t = this.topo.byName.get(name);
    if (!t) throw new Error(`structure device ${name} is not in the circuit`);
    const model = t.element.model;
    const kind = model.kind === 'pnp' || model.kind === 'npn' || model.kind === 'nmos' || model.kind === 'pmos' ? model.kind : 'npn';
    const get = (k: string) => {
      const v = model.params[k];
      return Number.isFinite(v) || v === Infinity ? v : MODEL_DEFAULTS[kind][k] ?? 0;
    };
    let p: DeviceParams;
    if (t.element.kind === 'Q') {
      const is = positiveOr(get('IS'), 1e-16);
      const isT = isAtTemperature(is, this.at.temperatureC, this.circuit.tnomC, get('XTI'), get('EG'));
      const bf = positiveOr(get('BF'), 100) * positiveOr(this.at.betaScale ?? 1, 1);
      const va = get('VAF');
      p = {
        t,
        model,
        isEff: isT * t.scale,
        nfVt: positiveOr(get('NF'), 1) * this.vt,
        beta: bf,
        va: va > 0 ? va : Infinity,
        kBeta: 0,
        vto: 0,
        lambda: 0,
        gamma: 0,
        phi: 0.6,
      };
    } else {
      const kp = positiveOr(get('KP'), 2e-5);
      p = {
        t,
        model,
        isEff: 0,
        nfVt: this.vt,
        beta: Infinity,
        va: Infinity,
        kBeta: kp * t.scale,
        vto: this.sign * get('VTO'),
        lambda: Math.max(get('LAMBDA'), 0),
        gamma: Math.max(get('GAMMA'), 0),
        phi: positiveOr(get('PHI'), 0.6),
      };
    }
    // Paralleled diode-connected twins of a simple mirror's reference share its current: the
    // reference then behaves as one device of the summed geometry.
    if (name === this.s.reference.device && (this.s.kind === 'simple-mirror' || this.s.kind === 'widlar-source' || this.s.kind === 'degenerated-mirror')) {
      const total = this.s.devices
        .filter((d) => this.s.roles?.[d] === 'reference')
        .reduce((sum, d) => sum + (this.topo.byName.get(d)?.scale ?? 0), 0);
      if (total > t.scale) {
        p.isEff *= total / t.scale;
        p.kBeta *= total / t.scale;
      }
    }
    this.params.set(name, p);
    return p;
  }

  private role(r: string): Transistor[] {
    return this.s.devices.filter((d) => this.s.roles?.[d] === r).map((d) => this.topo.byName.get(d)!).filter(Boolean);
  }

  private refT(): Transistor {
    return this.topo.byName.get(this.s.reference.device)!;
  }

  /** Potential of the common (emitter/source) node of the reference, when it is a rail. */
  private commonVolts(): number | undefined {
    if (this.common === null) {
      const node = this.commonNode();
      this.common = { v: node === undefined ? undefined : this.railVolts.get(node) };
    }
    return this.common.v;
  }

  /** The node every current of the structure returns to: the lower diode's or reference's emitter, or the far end of a degenerated reference's emitter resistor. */
  private commonNode(): number | undefined {
    const ref = this.refT();
    if (this.s.kind === 'degenerated-mirror') {
      const r1 = this.s.reference.degeneration ? this.topo.elementByName.get(this.s.reference.degeneration.resistor) : undefined;
      if (!r1 || r1.kind !== 'R') return undefined;
      return r1.nodes[0] === ref.common ? r1.nodes[1] : r1.nodes[1] === ref.common ? r1.nodes[0] : undefined;
    }
    const lower = this.role('lower-diode')[0];
    return (lower ?? ref).common;
  }

  /** A degenerated mirror needs its emitter resistors: the reference's (on its emitter) and every output's. */
  private degeneratedComplete(): boolean {
    const deg = this.s.reference.degeneration;
    if (!deg || !(deg.ohms > 0) || this.commonNode() === undefined) return false;
    return this.s.outputs.every((o) => o.degeneration !== undefined && o.degeneration.ohms > 0 && Number.isFinite(o.degeneration.ohms));
  }

  run(): Estimate {
    const steps: EstimateStep[] = [];
    const needs: Record<string, string[]> = {
      'helper-mirror': ['helper'],
      'wilson-mirror': ['lower-diode'],
      'improved-wilson-mirror': ['lower-diode', 'lower-partner'],
      'cascode-mirror': ['lower-diode', 'lower-partner'],
    };
    // A structure built elsewhere (or edited) without its devices or roles has nothing to compute from.
    const complete =
      this.s.devices.every((d) => this.topo.byName.has(d)) &&
      this.topo.byName.has(this.s.reference.device) &&
      this.s.outputs.length > 0 &&
      this.s.outputs.every((o) => this.topo.byName.has(o.device)) &&
      (needs[this.s.kind] ?? []).every((r) => this.role(r).length > 0) &&
      (this.s.kind !== 'degenerated-mirror' || this.degeneratedComplete());
    if (!complete) {
      return { iref: 0, iout: Object.fromEntries(this.s.outputs.map((o) => [o.device, 0])), vControl: 0, steps, irefFrom: 'unknown' };
    }
    steps.push({
      quantity: 'VT',
      formula: 'k·T/q (k = 1.380649e-23 J/K, q = 1.602176634e-19 C, exact, SI 2019)',
      substituted: `k × ${sig(this.at.temperatureC + 273.15, 5)} K / q`,
      value: this.vt,
      unit: 'V',
    });
    const feed = this.s.reference;
    let iref = 0;
    let irefFrom: Estimate['irefFrom'] = 'unknown';
    let starved = false;
    let supply: Estimate['supply'];
    let irefShortcut: number | undefined;
    const vCommon = this.commonVolts();
    const nStack = this.stackCount();

    // The IREF step of a feed other than a resistor chain, shown before the chain's VBE/VGS steps.
    let irefStep: EstimateStep | undefined;
    let resistorFed: { ohms: number; available: number; hi: string } | undefined;

    if (feed.feed === 'resistor' && feed.rail && vCommon !== undefined) {
      irefFrom = 'resistor';
      const ohms = feed.elements.reduce((sum, r) => {
        const el = this.topo.elementByName.get(r);
        return sum + (el && el.kind === 'R' && el.resistance > 0 ? el.resistance : 0);
      }, 0);
      const railNode = this.topo.nodeIndex.get(feed.rail.node);
      const vRail = (railNode !== undefined ? this.railVolts.get(railNode) : undefined) ?? feed.rail.volts;
      const available = this.sign * (vRail - vCommon);
      const needed = this.bipolar ? nStack * STARVED_VBE : this.thresholdStack();
      supply = { available, needed };
      const hi = this.sign > 0 ? `${eng(vRail, 'V')} − ${eng(vCommon, 'V')}` : `${eng(vCommon, 'V')} − ${eng(vRail, 'V')}`;
      if (!(ohms > 0) || available <= needed) {
        starved = true;
      }
      if (ohms > 0 && available > 0) {
        iref = this.solveResistorFed(available, ohms);
      }
      if (!this.bipolar && available <= needed) iref = 0;
      resistorFed = { ohms, available, hi };
    } else if (feed.feed === 'current-source') {
      irefFrom = 'current-source';
      const src = this.topo.elementByName.get(feed.elements[0]) as CurrentSource | undefined;
      const refNode = this.topo.nodeIndex.get(feed.node);
      if (src && refNode !== undefined) {
        const dc = this.at.sourceValues?.[src.name] ?? src.dc;
        // dc flows from plus through the source to minus: into the node when the node is `minus`.
        const into = src.nodes[1] === refNode ? dc : -dc;
        iref = Math.max(this.sign * into, 0);
        if (!(this.sign * into > 0)) starved = true;
        irefStep = {
          quantity: 'IREF',
          formula: 'the current source value',
          substituted: `${src.name} = ${eng(Math.abs(dc), 'A')}${this.sign * into > 0 ? '' : ' (flows the wrong way for this reference)'}`,
          value: iref,
          unit: 'A',
        };
      }
    } else if (feed.feed === 'mirror-output') {
      irefFrom = 'mirror-output';
      iref = this.feedingOutput();
      irefStep = {
        quantity: 'IREF',
        formula: "the feeding structure's estimated output current",
        substituted: `${feed.elements[0]} of ${feed.fedBy ?? '?'} = ${eng(iref, 'A')}`,
        value: iref,
        unit: 'A',
      };
    } else if (this.at.irefGiven !== undefined && Number.isFinite(this.at.irefGiven)) {
      irefFrom = 'given';
      iref = Math.abs(this.at.irefGiven);
      irefStep = { quantity: 'IREF', formula: 'taken from the operating point (the feed is not a resistor chain, current source or mirror output)', substituted: eng(iref, 'A'), value: iref, unit: 'A' };
    }

    const st = this.chain(iref, true);
    const isVoltage = (x: EstimateStep) => x.quantity.startsWith('V');
    if (resistorFed) {
      const { ohms, available, hi } = resistorFed;
      const rText = eng(ohms, 'Ω');
      const vName = this.bipolar ? 'VBE' : 'VGS';
      const r1 = this.s.reference.degeneration?.resistor ?? 'R1';
      const stackFormula =
        this.s.kind === 'degenerated-mirror' ? `(${vName}1 + ${this.bipolar ? 'IE1' : 'ID1'}·${r1})` : nStack > 1 ? `${nStack} stacked ${vName}` : vName;
      steps.push(...st.steps.filter(isVoltage));
      steps.push({
        quantity: 'IREF',
        formula: `(V+ − V− − ${stackFormula})/R, solved together with the device law (${this.bipolar ? GRAY : RAZAVI})`,
        substituted: `(${hi} − ${eng(st.stack, 'V')})/${rText}`,
        value: iref,
        unit: 'A',
      });
      if (this.bipolar && ohms > 0 && this.s.kind === 'degenerated-mirror') {
        // The reference's emitter resistor is in series with the feed once VBE is fixed at 0.7 V (base current neglected).
        const re = this.s.reference.degeneration?.ohms ?? 0;
        irefShortcut = Math.max((available - SHORTCUT_VBE) / (ohms + re), 0);
        steps.push({
          quantity: 'IREF (0.7 V shortcut)',
          formula: `(V+ − V− − 0.7 V)/(R + ${r1}), base current neglected (common practice)`,
          substituted: `(${hi} − 0.7 V)/(${rText} + ${eng(re, 'Ω')})`,
          value: irefShortcut,
          unit: 'A',
        });
      } else if (this.bipolar && ohms > 0) {
        irefShortcut = Math.max((available - nStack * SHORTCUT_VBE) / ohms, 0);
        steps.push({
          quantity: 'IREF (0.7 V shortcut)',
          formula: `(V+ − V− − ${nStack} × 0.7 V)/R (common practice)`,
          substituted: `(${hi} − ${eng(nStack * SHORTCUT_VBE, 'V')})/${rText}`,
          value: irefShortcut,
          unit: 'A',
        });
      }
    } else {
      if (irefStep) steps.push(irefStep);
      steps.push(...st.steps.filter(isVoltage));
    }
    steps.push(...st.steps.filter((x) => !isVoltage(x)));
    const outputEdge: Record<string, number> = {};
    if (vCommon !== undefined) {
      for (const [k, v] of Object.entries(st.edge)) {
        outputEdge[k] = vCommon + this.sign * v;
        const node = this.s.outputs.find((o) => o.device === k)?.node ?? k;
        const cmp = this.sign > 0 ? '≥' : '≤';
        steps.push({
          quantity: `Compliance edge V(${node})`,
          formula: this.bipolar
            ? `V(${node}) ${cmp} V(base of ${k}): the VBC = 0 edge of forward-active (stricter than the textbook VCE(sat) ≈ 0.2 V)`
            : `V(${node}) ${cmp} V(source) ${this.sign > 0 ? '+' : '−'} VOV of ${k}, i.e. V(gate) ${this.sign > 0 ? '− VTH' : '+ |VTH|'}: the edge of saturation (${RAZAVI})`,
          substituted: `${eng(vCommon, 'V')} ${this.sign > 0 ? '+' : '−'} ${eng(v, 'V')}`,
          value: outputEdge[k],
          unit: 'V',
          devices: [k],
        });
      }
    }
    return {
      iref,
      iout: st.iout,
      vControl: st.vControl,
      irefShortcut,
      steps,
      irefFrom,
      starved,
      supply,
      outputEdge: vCommon !== undefined ? outputEdge : undefined,
    };
  }

  private stackCount(): number {
    return this.s.kind === 'simple-mirror' || this.s.kind === 'widlar-source' || this.s.kind === 'degenerated-mirror' ? 1 : 2;
  }

  /** Sum of the thresholds a MOS reference chain must exceed before any current flows. */
  private thresholdStack(): number {
    return this.chain(0, false).stack;
  }

  private feedingOutput(): number {
    const from = this.at.structures && this.s.reference.fedBy !== undefined ? structuresById(this.at.structures).get(this.s.reference.fedBy) : undefined;
    const dev = this.s.reference.elements[0];
    if (!from || this.depth > 8) return 0;
    const known = from.estimate?.iout[dev];
    if (known !== undefined) return known;
    return new HandAnalysis(this.circuit, from, this.at, this.depth + 1).run().iout[dev] ?? 0;
  }

  /**
   * IREF·R + stack(IREF) = available, solved on u = ln(IREF): the left side rises monotonically
   * with IREF, so the root stays bracketed. Regula falsi with the Illinois modification (the
   * retained end's residual is halved when the same end is kept twice), which converges
   * superlinearly where plain bisection needs about 50 steps (Dowell and Jarratt, BIT 11, 1971).
   */
  private solveResistorFed(available: number, ohms: number): number {
    const hi0 = available / ohms;
    const f = (u: number) => {
      const i = Math.exp(u);
      return i * ohms + this.stackAt(i) - available;
    };
    let lo = Math.log(hi0 * 1e-18);
    let hi = Math.log(hi0);
    let flo = f(lo);
    let fhi = f(hi);
    if (flo >= 0) return 0;
    if (fhi <= 0) return hi0;
    // Residuals are in volts: 1e-12 of the supply is far below any printed digit.
    const tol = 1e-12 * Math.max(available, 1e-3);
    let side = 0;
    for (let n = 0; n < 200 && hi - lo > 1e-13; n++) {
      let u = hi - (fhi * (hi - lo)) / (fhi - flo);
      if (!(u > lo && u < hi)) u = 0.5 * (lo + hi);
      const fu = f(u);
      if (Math.abs(fu) <= tol) return Math.exp(u);
      if (fu > 0) {
        hi = u;
        fhi = fu;
        if (side === 1) flo *= 0.5;
        side = 1;
      } else {
        lo = u;
        flo = fu;
        if (side === -1) fhi *= 0.5;
        side = -1;
      }
    }
    return Math.exp(0.5 * (lo + hi));
  }

  /**
   * The reference-chain voltage at one IREF without recording steps: the same value as
   * `chain(iref, false).stack`, in closed form for a simple mirror without degenerated
   * outputs (the common case, asked for at every trial current of the IREF solve).
   */
  private stackAt(iref: number): number {
    if (this.simpleSum === undefined) {
      const plain = (this.s.kind === 'simple-mirror' || this.s.kind === 'widlar-source') && this.s.outputs.every((o) => !o.degeneration);
      this.simpleSum = plain ? this.s.outputs.reduce((a, o) => a + o.ratio, 0) : null;
    }
    if (this.simpleSum === null) {
      // A MOS degenerated mirror's gate node depends on the reference alone (gates draw no current).
      if (this.s.kind === 'degenerated-mirror' && !this.bipolar && this.s.reference.degeneration) {
        const ref = this.dev(this.s.reference.device);
        const vsb1 = this.vsbBase(ref) + iref * this.s.reference.degeneration.ohms;
        return this.vgsWithVds(ref, iref, vsb1, (g) => g) + iref * this.s.reference.degeneration.ohms;
      }
      return this.chain(iref, false).stack;
    }
    const ref = this.dev(this.s.reference.device);
    if (this.bipolar) return this.vbe(ref, iref / (1 + (1 + this.simpleSum) / ref.beta));
    return this.vgs(ref, iref, this.vsbBase(ref));
  }

  /**
   * Current drawn from `node` (sitting `vAbove` beyond the common rail, own polarity) by
   * elements outside the structure: resistors to a rail and current sources.
   */
  private pullDown(node: number, vAbove: number): number {
    const vc = this.commonVolts();
    if (vc === undefined) return 0;
    const vNode = vc + this.sign * vAbove;
    const members = new Set(this.s.devices);
    let sum = 0;
    for (const a of this.topo.conducting(node)) {
      const el = a.element;
      if (members.has(el.name)) continue;
      if (el.kind === 'R' && el.resistance > 0) {
        const other = el.nodes[0] === node ? el.nodes[1] : el.nodes[0];
        const vo = this.railVolts.get(other);
        if (vo !== undefined) sum += (this.sign * (vNode - vo)) / el.resistance;
      } else if (el.kind === 'I') {
        const dc = this.at.sourceValues?.[el.name] ?? el.dc;
        sum += this.sign * (el.nodes[0] === node ? dc : -dc);
      }
    }
    return Math.max(sum, 0);
  }

  private vbe(p: DeviceParams, ic: number): number {
    return vbeAt(ic, p.isEff, p.nfVt);
  }

  private vgs(p: DeviceParams, id: number, vsb: number): number {
    const vth = thresholdWithBody(p.vto, p.gamma, p.phi, vsb);
    return diodeMosVgs(id, p.kBeta, vth, p.lambda);
  }

  /** VGS of a saturated MOSFET carrying `id` whose VDS is a function of its own VGS (square law with λ, fixed point). */
  private vgsWithVds(p: DeviceParams, id: number, vsb: number, vdsOf: (vgs: number) => number): number {
    const vth = thresholdWithBody(p.vto, p.gamma, p.phi, vsb);
    if (!(id > 0) || !(p.kBeta > 0)) return vth;
    let vgs = vth + Math.sqrt((2 * id) / p.kBeta);
    for (let n = 0; n < 60; n++) {
      const clm = Math.max(1 + p.lambda * vdsOf(vgs), 0.05);
      const next = vth + Math.sqrt((2 * id) / (p.kBeta * clm));
      if (Math.abs(next - vgs) < 1e-12) return next;
      vgs = next;
    }
    return vgs;
  }

  private vsbBase(p: DeviceParams): number {
    const bulk = p.t.bulk;
    const vc = this.commonVolts();
    if (bulk === undefined || vc === undefined) return 0;
    const vb = this.railVolts.get(bulk);
    return vb === undefined ? 0 : this.sign * (vc - vb);
  }

  private outputVds(o: Transistor, emitterOffset = 0): number | undefined {
    const v = this.at.outputVolts?.[o.name];
    const vc = this.commonVolts();
    if (v === undefined || vc === undefined || !Number.isFinite(v)) return undefined;
    return this.sign * (v - vc) - emitterOffset;
  }

  /** The state of the whole structure at one IREF; with `record`, the substituted steps too. */
  private chain(iref: number, record: boolean): ChainState {
    const steps: EstimateStep[] = [];
    // Steps are formatted only when recorded: the IREF solve calls this dozens of times per structure.
    const push = (x: () => EstimateStep) => {
      if (record) steps.push(x());
    };
    const iout: Record<string, number> = {};
    const edge: Record<string, number> = {};
    const ref = this.dev(this.s.reference.device);
    const outs = this.s.outputs.map((o) => ({ o, p: this.dev(o.device) }));
    const beta = ref.beta;
    const vName = this.bipolar ? 'VBE' : 'VGS';

    const junction = (label: string, p: DeviceParams, i: number, vsb: number): number => {
      if (this.bipolar) {
        const v = this.vbe(p, i);
        push(() => ({
          quantity: `${vName}(${p.t.name})`,
          formula: 'NF·VT·ln(IC/IS(T) + 1), IS scaled by area × M (junction law)',
          substituted: `${sig(p.nfVt / this.vt, 3)} × ${eng(this.vt, 'V', 4)} × ln(${eng(i, 'A')}/${sig(p.isEff, 3)} A + 1)${label}`,
          value: v,
          unit: 'V',
          devices: [p.t.name],
        }));
        return v;
      }
      const v = this.vgs(p, i, vsb);
      const vth = thresholdWithBody(p.vto, p.gamma, p.phi, vsb);
      push(() => ({
        quantity: `${vName}(${p.t.name})`,
        formula: 'VTH + sqrt(2·ID/(KP·W/L·M·(1 + λ·VGS))) (square law, Shichman and Hodges, IEEE JSSC, 1968)',
        substituted: `${eng(vth, 'V')} + sqrt(2 × ${eng(i, 'A')}/${eng(p.kBeta, 'A/V²')})${label}`,
        value: v,
        unit: 'V',
        devices: [p.t.name],
      }));
      return v;
    };

    // The steps go through `push` into this chain's own list.
    if (this.s.kind === 'degenerated-mirror') return { ...this.degeneratedChain(iref, ref, outs, junction, push), steps };

    if (this.s.kind === 'simple-mirror' || this.s.kind === 'widlar-source') {
      const simple = outs.filter((x) => !x.o.degeneration);
      const widlar = outs.filter((x) => x.o.degeneration);
      if (this.bipolar) {
        const sumSimple = simple.reduce((a, x) => a + x.o.ratio, 0);
        let ic1 = iref / (1 + (1 + sumSimple) / beta);
        const wout: Record<string, number> = {};
        // The Widlar outputs' base currents also come out of IREF; a few passes settle IC1.
        const wEarly: Record<string, number> = {};
        for (let pass = 0; pass < (widlar.length > 0 ? 8 : 1); pass++) {
          let ibW = 0;
          const vbe1Now = this.vbe(ref, ic1);
          for (const x of widlar) {
            // Early effect of the output at its own VCE (emitter lifted by IE·R2) against the reference's VCE = VBE.
            const ie = ((wout[x.o.device] ?? 0) * (x.p.beta + 1)) / x.p.beta;
            const vce = this.outputVds(x.p.t, ie * x.o.degeneration!.ohms);
            wEarly[x.o.device] = vce !== undefined ? earlyFactor(vce, vbe1Now, x.p.va) : 1;
            const mEff = x.o.ratio * wEarly[x.o.device];
            wout[x.o.device] = widlarOutput({ iin: ic1, r2: x.o.degeneration!.ohms, nVt: x.p.nfVt, m: mEff, k: (x.p.beta + 1) / x.p.beta });
            ibW += wout[x.o.device] / x.p.beta;
          }
          ic1 = Math.max(iref - ibW, 0) / (1 + (1 + sumSimple) / beta);
        }
        const vbe1 = junction('', ref, ic1, 0);
        for (const x of simple) {
          const vce = this.outputVds(x.p.t);
          const early = vce !== undefined ? earlyFactor(vce, vbe1, x.p.va) : 1;
          const base = simpleMirrorGain(beta, x.o.ratio, sumSimple) * iref;
          iout[x.o.device] = base * early;
          edge[x.o.device] = vbe1;
          push(() => ({
            quantity: `IOUT(${x.o.device})`,
            formula: `m·IREF/(1 + (1 + Σm)/β)${early !== 1 ? ' × (1 + (VCE2 − VBE)/VA)' : ''} (${GRAY})`,
            substituted:
              `${sig(x.o.ratio)} × ${eng(iref, 'A')}/(1 + ${sig(1 + sumSimple)}/${sig(beta)})` +
              (early !== 1 ? ` × (1 + (${eng(vce!, 'V')} − ${eng(vbe1, 'V')})/${eng(x.p.va, 'V')})` : ''),
            value: iout[x.o.device],
            unit: 'A',
            devices: [x.o.device],
          }));
        }
        for (const x of widlar) {
          const i = wout[x.o.device] ?? 0;
          iout[x.o.device] = i;
          edge[x.o.device] = vbe1;
          push(() => ({
            quantity: `IOUT(${x.o.device})`,
            formula: `NF·VT·ln(m·IC1/IOUT) = IOUT·(1 + 1/β)·R2 (Widlar, IEEE Trans. Circuit Theory, 1965, with the output base current added to R2${wEarly[x.o.device] !== 1 ? '; m × (1 + (VCE2 − VBE)/VA) for the Early effect' : ''})`,
            substituted: `${sig(x.p.nfVt, 4)} V × ln(${sig(x.o.ratio * (wEarly[x.o.device] ?? 1), 5)} × ${eng(ic1, 'A')}/IOUT) = IOUT × ${sig((x.p.beta + 1) / x.p.beta, 4)} × ${eng(x.o.degeneration!.ohms, 'Ω')}`,
            value: i,
            unit: 'A',
            devices: [x.o.device, x.o.degeneration!.resistor],
          }));
        }
        return { stack: vbe1, vControl: vbe1, iRef: ic1, iout, edge, steps };
      }
      const vsb = this.vsbBase(ref);
      const vgs1 = junction('', ref, iref, vsb);
      const vth1 = thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb);
      for (const x of simple) {
        const vds = this.outputVds(x.p.t);
        const clm = vds !== undefined ? lambdaFactor(x.p.lambda, vds, vgs1) : 1;
        iout[x.o.device] = x.o.ratio * iref * clm;
        edge[x.o.device] = vgs1 - vth1;
        push(() => ({
          quantity: `IOUT(${x.o.device})`,
          formula: `((W/L)2·M2)/((W/L)1·M1) × IREF${clm !== 1 ? ' × (1 + λ·VDS2)/(1 + λ·VDS1)' : ''} (${RAZAVI})`,
          substituted: `${sig(x.o.ratio)} × ${eng(iref, 'A')}` + (clm !== 1 ? ` × (1 + ${sig(x.p.lambda)}/V × ${eng(vds!, 'V')})/(1 + ${sig(x.p.lambda)}/V × ${eng(vgs1, 'V')})` : ''),
          value: iout[x.o.device],
          unit: 'A',
          devices: [x.o.device],
        }));
      }
      for (const x of widlar) {
        const i = mosWidlarOutput({ iref, beta1: ref.kBeta, beta2: x.p.kBeta, r2: x.o.degeneration!.ohms });
        iout[x.o.device] = i;
        edge[x.o.device] = vgs1 - vth1;
        push(() => ({
          quantity: `IOUT(${x.o.device})`,
          formula: 'sqrt(2·IREF/β1) = sqrt(2·IOUT/β2) + IOUT·R2, β = KP·W/L·M, body effect neglected (square law; Razavi, ch. 5)',
          substituted: `sqrt(2 × ${eng(iref, 'A')}/${eng(ref.kBeta, 'A/V²')}) = sqrt(2·IOUT/${eng(x.p.kBeta, 'A/V²')}) + IOUT × ${eng(x.o.degeneration!.ohms, 'Ω')}`,
          value: i,
          unit: 'A',
          devices: [x.o.device, x.o.degeneration!.resistor],
        }));
      }
      return { stack: vgs1, vControl: vgs1, iRef: iref, iout, edge, steps };
    }

    if (this.s.kind === 'helper-mirror') {
      const helper = this.dev(this.role('helper')[0]?.name ?? this.s.reference.device);
      const sumM = outs.reduce((a, x) => a + x.o.ratio, 0);
      if (this.bipolar) {
        // A pull-down on the base node (a common speed-up resistor) adds to the helper's emitter
        // current, so the helper's base current, taken from IREF, grows by I_pd/(β + 1).
        let ic1 = iref / (1 + (1 + sumM) / (beta * (beta + 1)));
        let iPd = 0;
        for (let pass = 0; pass < 4; pass++) {
          iPd = this.pullDown(this.refT().ctrl, this.vbe(ref, ic1));
          ic1 = Math.max(iref - iPd / (helper.beta + 1), 0) / (1 + (1 + sumM) / (beta * (beta + 1)));
        }
        const ieH = ((1 + sumM) * ic1) / beta + iPd;
        const vbe1 = junction('', ref, ic1, 0);
        const vbeH = junction(' (helper: carries the base currents and the pull-down)', helper, (ieH * helper.beta) / (helper.beta + 1), 0);
        for (const x of outs) {
          const vce = this.outputVds(x.p.t);
          // The reference's VCE is VBE1 + VBE(helper) here, not one VBE.
          const early = vce !== undefined ? earlyFactor(vce, vbe1 + vbeH, x.p.va) : 1;
          const irefNet = iref - iPd / (helper.beta + 1);
          iout[x.o.device] = helperMirrorGain(beta, x.o.ratio, sumM) * irefNet * early;
          edge[x.o.device] = vbe1;
          push(() => ({
            quantity: `IOUT(${x.o.device})`,
            formula: `m·(IREF − I_pulldown/(β + 1))/(1 + (1 + Σm)/(β(β + 1)))${early !== 1 ? ' × (1 + (VCE2 − VCE1)/VA), VCE1 = VBE1 + VBE(helper)' : ''} (${GRAY}; pull-down term by node currents)`,
            substituted:
              `${sig(x.o.ratio)} × (${eng(iref, 'A')} − ${eng(iPd, 'A')}/${sig(helper.beta + 1)})/(1 + ${sig(1 + sumM)}/(${sig(beta)} × ${sig(beta + 1)}))` +
              (early !== 1 ? ` × ${sig(early, 5)}` : ''),
            value: iout[x.o.device],
            unit: 'A',
            devices: [x.o.device],
          }));
        }
        return { stack: vbe1 + vbeH, vControl: vbe1, iRef: ic1, iout, edge, steps };
      }
      const vsb = this.vsbBase(ref);
      // Gates draw no current: the helper carries only what the pull-downs on the gate node take.
      // The reference's VDS is VGS1 + VGS(helper), so the two are solved together.
      let vgs1 = this.vgs(ref, iref, vsb);
      let vgsH = 0;
      let iH = 0;
      for (let n = 0; n < 30; n++) {
        iH = this.pullDown(this.refT().ctrl, vgs1);
        const vDrain = this.railVolts.get(helper.t.out);
        const vc = this.commonVolts();
        const g1 = vgs1;
        vgsH = this.vgsWithVds(helper, iH, vsb + vgs1, (g) => (vDrain !== undefined && vc !== undefined ? this.sign * (vDrain - vc) - g1 : g));
        const h = vgsH;
        vgs1 = this.vgsWithVds(ref, iref, vsb, (g) => g + h);
      }
      push(() => ({
        quantity: `VGS(${ref.t.name})`,
        formula: 'VTH + sqrt(2·ID/(KP·W/L·M·(1 + λ·VDS))), VDS = VGS1 + VGS(helper) (square law, Shichman and Hodges, IEEE JSSC, 1968)',
        substituted: `${eng(thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb), 'V')} + sqrt(2 × ${eng(iref, 'A')}/${eng(ref.kBeta, 'A/V²')}/(1 + λ·${eng(vgs1 + vgsH, 'V')}))`,
        value: vgs1,
        unit: 'V',
        devices: [ref.t.name],
      }));
      junction(' (helper: carries the pull-down current)', helper, iH, vsb + vgs1);
      const vth1 = thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb);
      for (const x of outs) {
        const vds = this.outputVds(x.p.t);
        // The reference's VDS is VGS1 + VGS(helper).
        const clm = vds !== undefined ? lambdaFactor(x.p.lambda, vds, vgs1 + vgsH) : 1;
        iout[x.o.device] = x.o.ratio * iref * clm;
        edge[x.o.device] = vgs1 - vth1;
        push(() => ({
          quantity: `IOUT(${x.o.device})`,
          formula: `((W/L)·M ratio) × IREF${clm !== 1 ? ' × (1 + λ·VDS2)/(1 + λ·VDS1), VDS1 = VGS1 + VGS(helper)' : ''} (${RAZAVI})`,
          substituted: `${sig(x.o.ratio)} × ${eng(iref, 'A')}${clm !== 1 ? ` × ${sig(clm, 5)}` : ''}`,
          value: iout[x.o.device],
          unit: 'A',
          devices: [x.o.device],
        }));
      }
      return { stack: vgs1 + vgsH, vControl: vgs1, iRef: iref, iout, edge, steps };
    }

    // Wilson, improved Wilson and cascode: one output on a lower pair.
    const lowerDiode = this.dev(this.role('lower-diode')[0].name);
    const x0 = outs[0];
    const m = x0.o.ratio;
    if (this.s.kind === 'cascode-mirror') {
      const top = ref;
      if (this.bipolar) {
        const ic1 = iref / (1 + (1 + m) / beta + m / (beta + 1));
        const ie3 = ic1 * (1 + (1 + m) / beta);
        const vLow = junction(' (lower reference)', lowerDiode, ic1, 0);
        const vTop = junction(' (upper reference)', top, (ie3 * beta) / (beta + 1), 0);
        iout[x0.o.device] = cascodeGain(beta, m) * iref;
        // The output's collector must stay above its base (node A) for VBC ≤ 0.
        edge[x0.o.device] = vLow + vTop;
        push(() => ({
          quantity: `IOUT(${x0.o.device})`,
          formula: `m·x·β/(β + 1) with IREF = x·(1 + (1 + m)/β + m/(β + 1)) ≈ IREF·(1 − 4/β) matched (${GRAY}; node currents)`,
          substituted: `${sig(m)} × ${eng(ic1, 'A')} × ${sig(beta)}/${sig(beta + 1)}`,
          value: iout[x0.o.device],
          unit: 'A',
          devices: [x0.o.device],
        }));
        return { stack: vLow + vTop, vControl: vTop, iRef: ic1, iout, edge, steps };
      }
      const vsb = this.vsbBase(lowerDiode);
      const vLow = junction(' (lower reference)', lowerDiode, iref, vsb);
      const vTop = junction(' (upper reference)', top, iref, vsb + vLow);
      const out = x0.p;
      const vthOut = thresholdWithBody(out.vto, out.gamma, out.phi, vsb + vLow);
      iout[x0.o.device] = m * iref;
      edge[x0.o.device] = vLow + vTop - vthOut;
      push(() => ({ quantity: `IOUT(${x0.o.device})`, formula: `((W/L)·M ratio) × IREF; λ effect suppressed by the cascode (${RAZAVI})`, substituted: `${sig(m)} × ${eng(iref, 'A')}`, value: iout[x0.o.device], unit: 'A', devices: [x0.o.device] }));
      return { stack: vLow + vTop, vControl: vTop, iRef: iref, iout, edge, steps };
    }

    // Wilson and improved Wilson.
    const kindName = this.s.kind === 'wilson-mirror' ? 'Wilson' : 'improved Wilson';
    if (this.bipolar) {
      const irefPerX = 1 / m + (1 + 1 / beta + 1 / (m * beta)) / (beta + 1);
      const x = iref / irefPerX;
      const ie3 = x * (1 + 1 / beta + 1 / (m * beta));
      const ic3 = (ie3 * beta) / (beta + 1);
      const vLow = junction(' (lower diode)', lowerDiode, x, 0);
      const vOut = junction(' (output)', x0.p, ic3, 0);
      // Simple Wilson: Q1 sits at VCE = 2·VBE against VBE for the lower diode, an Early error the improved form removes.
      const early = this.s.kind === 'wilson-mirror' ? earlyFactor(vLow, vLow + vOut, ref.va) : 1;
      iout[x0.o.device] = wilsonGain(beta, m * early) * iref;
      edge[x0.o.device] = vLow + vOut;
      const vRef = this.vbe(ref, x / m);
      push(() => ({
        quantity: `IOUT(${x0.o.device})`,
        formula: `IREF·(1 − 2/(β² + 2β + 2)) for a matched ${kindName} mirror, node currents when ratioed (${GRAY})`,
        substituted: `${eng(iref, 'A')} × (1 − 2/(${sig(beta)}² + 2 × ${sig(beta)} + 2))${m !== 1 ? ` (ratio ${sig(m)})` : ''}${early !== 1 ? ` with the lower ratio × (1 + (VBE − 2·VBE)/VA) = × ${sig(early, 5)}` : ''}`,
        value: iout[x0.o.device],
        unit: 'A',
        devices: [x0.o.device],
      }));
      return { stack: vLow + vOut, vControl: vRef, iRef: x / m, iout, edge, steps };
    }
    // MOS Wilson: Q1 (the input device) carries IREF at VDS1 = VGS2 + VGS3 (− VGS4 in the improved form);
    // the lower diode Q2 and the output Q3 carry IOUT = m·IREF·(1 + λ·VGS2)/(1 + λ·VDS1).
    const vsb = this.vsbBase(lowerDiode);
    const improved = this.s.kind === 'improved-wilson-mirror';
    let vLow = this.vgs(lowerDiode, m * iref, vsb);
    let vOut = this.vgs(x0.p, m * iref, vsb + vLow);
    let vTop = improved ? this.vgs(ref, iref, 0) : 0;
    let vds1 = vLow + vOut - vTop;
    let io = m * iref;
    const refIn = improved ? this.dev(this.role('lower-partner')[0].name) : ref;
    for (let n = 0; n < 40; n++) {
      const o = vOut;
      const t4 = vTop;
      vLow = this.vgsWithVds(refIn, iref, vsb, (g) => g + o - t4);
      vds1 = vLow + vOut - vTop;
      io = m * iref * lambdaFactor(lowerDiode.lambda, vLow, vds1);
      const vdsOut = this.outputVds(x0.p.t, vLow);
      vOut = this.vgsWithVds(x0.p, io, vsb + vLow, (g) => (vdsOut !== undefined ? vdsOut : g));
      if (improved) vTop = this.vgs(ref, iref, vsb + vds1);
    }
    junction(' (lower diode)', lowerDiode, io, vsb);
    junction(' (output)', x0.p, io, vsb + vLow);
    const vthOut = thresholdWithBody(x0.p.vto, x0.p.gamma, x0.p.phi, vsb + vLow);
    const clm = io / (m * iref || 1);
    iout[x0.o.device] = io;
    edge[x0.o.device] = vLow + vOut - vthOut;
    push(() => ({
      quantity: `IOUT(${x0.o.device})`,
      formula: `((W/L)·M ratio) × IREF × (1 + λ·VGS2)/(1 + λ·VDS1), VDS1 = VGS2 + VGS3${improved ? ' − VGS4' : ''}; feedback holds the ratio (${kindName}, ${RAZAVI})`,
      substituted: `${sig(m)} × ${eng(iref, 'A')}${clm !== 1 ? ` × ${sig(clm, 5)}` : ''}`,
      value: io,
      unit: 'A',
      devices: [x0.o.device],
    }));
    return { stack: vLow + vOut, vControl: improved ? vTop : vLow, iRef: iref, iout, edge, steps };
  }

  /**
   * Degenerated mirror: the base node sits VBE1 + IE1·R1 above the common node, and each output
   * carries the IC2 that makes VBE2 + IE2·R2 equal to it; IREF = IC1·(1 + 1/β) + Σ IC2/β. The two are
   * solved together (a few fixed-point passes on IC1; each IC2 by a bracketed Newton solve). MOS:
   * VGS1 + ID1·R1 = VGS2 + ID2·R2 with the square law, body effect from the raised sources and λ.
   */
  private degeneratedChain(
    iref: number,
    ref: DeviceParams,
    outs: { o: Structure['outputs'][number]; p: DeviceParams }[],
    junction: (label: string, p: DeviceParams, i: number, vsb: number) => number,
    push: (x: () => EstimateStep) => void,
  ): Omit<ChainState, 'steps'> {
    const iout: Record<string, number> = {};
    const edge: Record<string, number> = {};
    const r1 = this.s.reference.degeneration!.ohms;
    const r1Name = this.s.reference.degeneration!.resistor;
    const refName = this.s.reference.device;
    if (this.bipolar) {
      const beta = ref.beta;
      const k1 = (beta + 1) / beta;
      const sumM = outs.reduce((a, x) => a + x.o.ratio, 0);
      let ic1 = iref / (1 + (1 + sumM) / beta);
      let vbe1 = this.vbe(ref, ic1);
      let vTop = vbe1 + ic1 * k1 * r1;
      const early: Record<string, number> = {};
      for (let pass = 0; pass < 60; pass++) {
        vbe1 = this.vbe(ref, ic1);
        vTop = vbe1 + ic1 * k1 * r1;
        let ib = 0;
        for (const x of outs) {
          const r2 = x.o.degeneration!.ohms;
          const k2 = (x.p.beta + 1) / x.p.beta;
          const prev = iout[x.o.device] ?? ic1 * x.o.ratio;
          // Early effect of the output at its own VCE (emitter lifted by IE2·R2) against the reference's VCE = VBE1.
          const vce = this.outputVds(x.p.t, prev * k2 * r2);
          early[x.o.device] = vce !== undefined ? Math.max(earlyFactor(vce, vbe1, x.p.va), 1e-3) : 1;
          iout[x.o.device] = degeneratedOutput({ v: vTop, isEff: x.p.isEff * early[x.o.device], nVt: x.p.nfVt, r: r2, k: k2, guess: iout[x.o.device] ?? this.lastOut.get(x.o.device) });
          ib += iout[x.o.device] / x.p.beta;
        }
        for (const x of outs) this.lastOut.set(x.o.device, iout[x.o.device]);
        const next = Math.max(iref - ib, 0) / k1;
        const done = Math.abs(next - ic1) <= 1e-13 * Math.max(iref, 1e-30);
        ic1 = next;
        if (done) break;
      }
      vbe1 = junction('', ref, ic1, 0);
      vTop = vbe1 + ic1 * k1 * r1;
      const vb = vTop;
      const ic1Now = ic1;
      push(() => ({
        quantity: `VBE(${refName}) + IE·${r1Name}`,
        formula: `VBE1 + IC1·(1 + 1/β)·R1: the base node above the common node (${GRAY}, emitter degeneration)`,
        substituted: `${eng(vbe1, 'V')} + ${eng(ic1Now, 'A')} × ${sig(k1, 4)} × ${eng(r1, 'Ω')}`,
        value: vb,
        unit: 'V',
        devices: [refName, r1Name],
      }));
      for (const x of outs) {
        const r2 = x.o.degeneration!.ohms;
        const r2Name = x.o.degeneration!.resistor;
        const k2 = (x.p.beta + 1) / x.p.beta;
        const i = iout[x.o.device];
        edge[x.o.device] = vTop;
        const ef = early[x.o.device] ?? 1;
        const vbe2 = vbeAt(i, x.p.isEff * ef, x.p.nfVt);
        push(() => ({
          quantity: `VBE(${x.o.device})`,
          formula: `NF·VT·ln(IC/IS + 1), IS scaled by area × M${ef !== 1 ? ' × (1 + (VCE2 − VBE)/VA)' : ''} (junction law)`,
          substituted: `${sig(x.p.nfVt / this.vt, 3)} × ${eng(this.vt, 'V', 4)} × ln(${eng(i, 'A')}/${sig(x.p.isEff * ef, 3)} A + 1)`,
          value: vbe2,
          unit: 'V',
          devices: [x.o.device],
        }));
        push(() => ({
          quantity: `IOUT(${x.o.device})`,
          formula:
            `VBE1 + IE1·R1 = VBE2 + IE2·R2 with VBE = NF·VT·ln(IC/IS + 1), IE = IC·(1 + 1/β) and IREF = IC1·(1 + 1/β) + Σ IC2/β` +
            `${ef !== 1 ? '; IS2 × (1 + (VCE2 − VBE)/VA) for the Early effect' : ''} (${GRAY}, emitter degeneration)`,
          substituted: `${eng(vTop, 'V')} = ${sig(x.p.nfVt, 4)} V × ln(IOUT/${sig(x.p.isEff * ef, 4)} A + 1) + IOUT × ${sig(k2, 4)} × ${eng(r2, 'Ω')}`,
          value: i,
          unit: 'A',
          devices: [x.o.device, r2Name],
        }));
        push(() => ({
          quantity: `IOUT(${x.o.device})/IREF at large drops`,
          formula: 'R1/R2: the ratio the emitter resistors set once their drops are much larger than VT (area ratio and base currents aside) (' + GRAY + ')',
          substituted: `${eng(r1, 'Ω')}/${eng(r2, 'Ω')}`,
          value: r1 / r2,
          unit: '',
          devices: [x.o.device, r1Name, r2Name],
        }));
      }
      return { stack: vTop, vControl: vbe1, iRef: ic1, iout, edge };
    }
    // MOS: gates draw nothing, ID1 = IREF.
    const vsb0 = this.vsbBase(ref);
    const vsb1 = vsb0 + iref * r1;
    const vgs1 = iref > 0 ? this.vgsWithVds(ref, iref, vsb1, (g) => g) : thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb1);
    const vTop = vgs1 + iref * r1;
    const vth1 = thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb1);
    const vsbText = this.bulkText(vsb1);
    push(() => ({
      quantity: `VGS(${refName})`,
      formula: 'VTH(VSB) + sqrt(2·ID/(KP·W/L·M·(1 + λ·VGS))), the source raised by ID·R1 (square law, Shichman and Hodges, IEEE JSSC, 1968)',
      substituted: `${eng(vth1, 'V')} + sqrt(2 × ${eng(iref, 'A')}/${eng(ref.kBeta, 'A/V²')})${vsbText}`,
      value: vgs1,
      unit: 'V',
      devices: [refName],
    }));
    push(() => ({
      quantity: `VGS(${refName}) + ID·${r1Name}`,
      formula: `VGS1 + ID1·R1: the gate node above the common node (${RAZAVI}, source degeneration)`,
      substituted: `${eng(vgs1, 'V')} + ${eng(iref, 'A')} × ${eng(r1, 'Ω')}`,
      value: vTop,
      unit: 'V',
      devices: [refName, r1Name],
    }));
    for (const x of outs) {
      const r2 = x.o.degeneration!.ohms;
      const r2Name = x.o.degeneration!.resistor;
      const p = x.p;
      const vgsAt = (i: number) => {
        const vds = this.outputVds(p.t, i * r2);
        return this.vgsWithVds(p, i, vsb0 + i * r2, (g) => (vds !== undefined ? vds : g));
      };
      const g = (i: number) => (i > 0 ? vgsAt(i) : thresholdWithBody(p.vto, p.gamma, p.phi, vsb0)) + i * r2 - vTop;
      const i = solveRising(g, vTop / r2);
      iout[x.o.device] = i;
      const vth2 = thresholdWithBody(p.vto, p.gamma, p.phi, vsb0 + i * r2);
      edge[x.o.device] = vTop - vth2;
      push(() => ({
        quantity: `IOUT(${x.o.device})`,
        formula: `VGS1 + ID1·R1 = VGS2 + ID2·R2, VGS = VTH(VSB) + sqrt(2·ID/(KP·W/L·M·(1 + λ·VDS))) (${RAZAVI}, source degeneration; Shichman and Hodges, 1968)`,
        substituted: `${eng(vTop, 'V')} = ${eng(i > 0 ? vgsAt(i) : vth2, 'V')} + ${eng(i, 'A')} × ${eng(r2, 'Ω')}`,
        value: i,
        unit: 'A',
        devices: [x.o.device, r2Name],
      }));
      push(() => ({
        quantity: `IOUT(${x.o.device})/IREF at large drops`,
        formula: 'R1/R2: the ratio the source resistors set once their drops are much larger than the overdrive (' + RAZAVI + ')',
        substituted: `${eng(r1, 'Ω')}/${eng(r2, 'Ω')}`,
        value: r1 / r2,
        unit: '',
        devices: [x.o.device, r1Name, r2Name],
      }));
    }
    return { stack: vTop, vControl: vgs1, iRef: iref, iout, edge };
  }

  /** ", VSB = …" for a MOS step when the body effect applies. */
  private bulkText(vsb: number): string {
    return Math.abs(vsb) > 1e-12 ? ` at VSB = ${eng(vsb, 'V')}` : '';
  }
}

const idIndex = new WeakMap<Structure[], Map<string, Structure>>();

/** The structures of one analysis by id, indexed once per array (a chain of N mirror-fed mirrors would otherwise search N times). */
function structuresById(list: Structure[]): Map<string, Structure> {
  let m = idIndex.get(list);
  if (!m || m.size !== list.length) idIndex.set(list, (m = new Map(list.map((x) => [x.id, x]))));
  return m;
}

/** The root of a function that rises with its argument, on [0, hi] (the bracket is widened when g(hi) < 0), by bisection. */
function solveRising(g: (x: number) => number, hi0: number): number {
  let lo = 0;
  let hi = Number.isFinite(hi0) && hi0 > 0 ? hi0 : 1e-3;
  if (g(lo) >= 0) return 0;
  for (let n = 0; n < 60 && g(hi) < 0; n++) hi *= 2;
  if (g(hi) < 0) return hi;
  for (let n = 0; n < 200 && hi - lo > 1e-15 * hi; n++) {
    const mid = 0.5 * (lo + hi);
    if (g(mid) > 0) hi = mid;
    else lo = mid;
  }
  return 0.5 * (lo + hi);
}

function positiveOr(v: number, fallback: number): number {
  return Number.isFinite(v) && v > 0 ? v : fallback;
}
