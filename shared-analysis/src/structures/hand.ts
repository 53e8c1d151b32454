// The shared hand-analysis context a structure kind computes with: device parameters at temperature, junction and square-law voltages, rails, recorded steps.

import { MODEL_DEFAULTS, type Circuit, type Model } from '../circuit';
import { bjtBetaAt, bjtTemperatureFactors } from '../devices/bjt';
import { jfetTemperature } from '../devices/jfet';
import { mosTemperature } from '../devices/mosfet';
import { eng, sig } from './format';
import { diodeMosVgs, isAtTemperature, thermalVolts, thresholdWithBody, vbeAt } from './formulas';
import { railsByIndex } from './rails';
import { technologyOfModel } from './technology';
import { isBipolar, polaritySign, topologyOf, type Topology, type Transistor } from './topology';
import type { EstimateStep, Structure, StructureRole } from './types';
import { recognisedTransistor, roleOf } from './recognised';
import { cardTnomC } from '../devices/physics';

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
  /**
   * Device -> its operating collector current (e.g. solved), so a bipolar device's β is the
   * model's β at that current (`bjtBetaAt`: IKF, ISE and XTB included). Without it β is BF at temperature.
   */
  deviceCurrents?: Record<string, number>;
  /** Solved node voltages (name -> volts), for a voltage the hand analysis cannot derive (e.g. an amplifier's reference input). */
  nodeVolts?: (name: string) => number | undefined;
  /** Set false to skip formatting the worked steps (`Estimate.steps` stays empty); the numbers are the same. */
  recordSteps?: boolean;
}

/** The parameters of one device at the analysis temperature, in the structure's own polarity. */
export interface DeviceParams {
  t: Transistor;
  model: Model;
  /** Bipolar: effective IS at temperature (× area × M). */
  isEff: number;
  nfVt: number;
  beta: number;
  /** The collector current β was evaluated at (bipolar, when the model's β depends on current). */
  betaAtCurrent?: number;
  va: number;
  /**
   * Square-law constant k of ID = k/2·(VGS − VTO)²: MOS KP·W/L·M; JFET 2·BETA·area·M (the model's
   * ID = BETA·(VGS − VTO)², so IDSS = k/2·VTO²). With own-polarity VTO (a JFET's pinch-off voltage VP), λ, γ, φ.
   */
  kBeta: number;
  vto: number;
  lambda: number;
  gamma: number;
  phi: number;
}

/** What a kind's analysis returns for one IREF (the steps go into the {@link Chain}). */
export interface ChainResult {
  /** Voltage of the reference node above (NPN/NMOS) or below (PNP/PMOS) the common rail. */
  stack: number;
  /** VBE/VGS of the reference device. */
  vControl: number;
  /** Reference device current. */
  iRef: number;
  iout: Record<string, number>;
  /** Output device -> output-node edge voltage relative to the common rail (own polarity). */
  edge: Record<string, number>;
}

/** One output of the structure with its device parameters. */
export interface OutputParams {
  o: Structure['outputs'][number];
  p: DeviceParams;
}

/** Source names the formula steps cite. */
export const GRAY = 'Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4';
export const RAZAVI = 'Razavi, Design of Analog CMOS Integrated Circuits, ch. 5';
export const SQUARE_LAW = 'square law, Shichman and Hodges, IEEE JSSC, 1968';

/**
 * The steps of one evaluation of a structure at one IREF. `final` marks the evaluation whose
 * results the estimate keeps (the IREF solve evaluates the chain dozens of times per structure
 * before it); steps are formatted only on the final evaluation, and not even then when the
 * caller asked for none (`EstimateAt.recordSteps`).
 */
export class Chain {
  readonly steps: EstimateStep[] = [];

  constructor(
    private readonly h: Hand,
    readonly final: boolean,
    private readonly format = final,
  ) {}

  push(x: () => EstimateStep): void {
    if (this.format) this.steps.push(x());
  }

  /** VBE (junction law) or VGS (square law) of `p` at current `i`, with its step. */
  junction(label: string, p: DeviceParams, i: number, vsb: number): number {
    const h = this.h;
    if (h.bipolar) {
      const v = h.vbe(p, i);
      this.push(() => ({
        quantity: `VBE(${p.t.name})`,
        formula: 'NF·VT·ln(IC/IS(T) + 1), IS scaled by area × M (junction law)',
        substituted: `${sig(p.nfVt / h.vt, 3)} × ${eng(h.vt, 'V', 4)} × ln(${eng(i, 'A')}/${sig(p.isEff, 3)} A + 1)${label}`,
        value: v,
        unit: 'V',
        devices: [p.t.name],
      }));
      return v;
    }
    const v = h.vgs(p, i, vsb);
    const vth = thresholdWithBody(p.vto, p.gamma, p.phi, vsb);
    if (p.t.element.kind === 'J') {
      this.push(() => ({
        quantity: `VGS(${p.t.name})`,
        formula: `VP + sqrt(ID/(BETA·area·M)), VP the pinch-off voltage (the model's VTO) (${SQUARE_LAW}, JFET form)`,
        substituted: `${eng(p.vto, 'V')} + sqrt(${eng(i, 'A')}/${eng(p.kBeta / 2, 'A/V²')})${label}`,
        value: v,
        unit: 'V',
        devices: [p.t.name],
      }));
      return v;
    }
    this.push(() => ({
      quantity: `VGS(${p.t.name})`,
      formula: `VTH + sqrt(2·ID/(KP·W/L·M·(1 + λ·VGS))) (${SQUARE_LAW})`,
      substituted: `${eng(vth, 'V')} + sqrt(2 × ${eng(i, 'A')}/${eng(p.kBeta, 'A/V²')})${label}`,
      value: v,
      unit: 'V',
      devices: [p.t.name],
    }));
    return v;
  }
}

/**
 * One structure's hand-analysis context: its devices' parameters at the analysis temperature
 * (and beta corner), the rail potentials (with supply-corner overrides), and the junction and
 * square-law voltages every kind computes with. Parameters are read once per device.
 */
export class Hand {
  readonly topo: Topology;
  readonly sign: 1 | -1;
  readonly bipolar: boolean;
  readonly vt: number;
  /** Rail potentials by node index: the circuit's (shared by every structure of it), or a copy with the supply corner's overrides. */
  readonly railVolts: ReadonlyMap<number, number>;
  /**
   * Each device's parameters once read, at its position in the structure's device list (found by `===` among a few
   * names); a name outside the list (a feeding device) in `otherParams`. Nearly every structure has two to six devices:
   * a table per structure cost more than the records it held.
   */
  private readonly params: (DeviceParams | undefined)[] = [];
  private otherParams: Map<string, DeviceParams> | undefined = undefined;
  private memoTable: Map<string, number> | undefined = undefined;
  private common: { v: number | undefined } | null = null;

  constructor(
    readonly circuit: Circuit,
    readonly s: Structure,
    readonly at: EstimateAt,
    /** The kind's own rule for where the structure's currents return (default: lower diode's or reference's emitter). */
    private readonly commonOf: ((h: Hand) => number | undefined) | undefined,
    /** Paralleled diode-connected twins share the reference's current (simple, Widlar and degenerated kinds). */
    private readonly parallelReference: boolean,
  ) {
    this.topo = topologyOf(circuit);
    this.sign = polaritySign(s.technology);
    this.bipolar = isBipolar(s.technology);
    this.vt = thermalVolts(at.temperatureC);
    this.railVolts = at.railVolts ? railVoltsWith(circuit, this.topo, at.railVolts) : railVoltsOf(circuit);
  }

  /** Per-structure numbers a kind keeps between evaluations at trial currents (e.g. a Newton start); made on first use. */
  get memo(): Map<string, number> {
    return (this.memoTable ??= new Map<string, number>());
  }

  /** The device's parameters at the analysis conditions (throws for a name that is not a transistor of the circuit). */
  dev(name: string): DeviceParams {
    const at = this.s.devices.indexOf(name);
    const known = at >= 0 ? this.params[at] : this.otherParams?.get(name);
    if (known) return known;
    const t = this.topo.transistorNamed(name, recognisedTransistor(this.s, at));
    if (!t) throw new Error(`structure device ${name} is not in the circuit`);
    const model = t.element.model;
    const f = this.factorsOf(model, t.element.kind);
    let p: DeviceParams;
    if (t.element.kind === 'Q') {
      const beta = bipolarBeta(model, f, t.scale, this.vt, this.at, name);
      p = {
        t,
        model,
        isEff: f.perUnit * t.scale,
        nfVt: f.nfVt,
        beta: beta.value,
        betaAtCurrent: beta.current,
        va: f.va,
        kBeta: 0,
        vto: 0,
        lambda: 0,
        gamma: 0,
        phi: 0.6,
      };
    } else {
      p = { t, model, isEff: 0, nfVt: this.vt, beta: Infinity, va: Infinity, kBeta: f.perUnit * t.scale, vto: f.vto, lambda: f.lambda, gamma: f.gamma, phi: f.phi };
    }
    // Paralleled diode-connected twins of the reference share its current: the reference then
    // behaves as one device of the summed geometry.
    if (name === this.s.reference.device && this.parallelReference) {
      const total = this.referenceScale();
      if (total > t.scale) {
        p.isEff *= total / t.scale;
        p.kBeta *= total / t.scale;
      }
    }
    if (at >= 0) this.params[at] = p;
    else (this.otherParams ??= new Map()).set(name, p);
    return p;
  }

  /** The summed scale (area or W/L × M) of the structure's devices in the reference role. */
  private referenceScale(): number {
    const { devices } = this.s;
    let total = 0;
    for (let k = 0; k < devices.length; k++) if (roleOf(this.s, devices[k]) === 'reference') total += this.transistor(devices[k])?.scale ?? 0;
    return total;
  }

  /** What `dev` takes from a model alone at this analysis's conditions: worked out once per model and conditions, for every structure. */
  private factorsOf(model: Model, letter: Transistor['element']['kind']): ModelFactors {
    const known = modelFactors.get(model);
    const betaScale = this.at.betaScale;
    // The card's own TNOM when it gives one (the solver's devices read it the same way).
    const tnomC = cardTnomC(model.params, this.circuit.tnomC);
    if (known && known.temperatureC === this.at.temperatureC && known.tnomC === tnomC && known.betaScale === betaScale && known.sign === this.sign) return known;
    const f = factorsAt(model, letter, this.at, tnomC, this.vt, this.sign);
    modelFactors.set(model, f);
    return f;
  }

  /** The structure's devices with one role, in structure order. */
  role(r: StructureRole): Transistor[] {
    return this.s.devices.filter((d) => roleOf(this.s, d) === r).map((d) => this.transistor(d)!).filter(Boolean);
  }

  refT(): Transistor {
    return this.transistor(this.s.reference.device)!;
  }

  /**
   * The transistor `topo.byName.get(name)` gives, read through the one recognition found when `name` is a device of
   * the structure (see `Topology.transistorNamed`): no look-up of the name.
   */
  transistor(name: string): Transistor | undefined {
    return this.topo.transistorNamed(name, recognisedTransistor(this.s, this.s.devices.indexOf(name)));
  }

  /** The reference and each output with their parameters. */
  outputs(): OutputParams[] {
    // Made at its length (it is read and dropped): `mapList` grows a list and copies it to keep.
    const outputs = this.s.outputs;
    const out: OutputParams[] = new Array(outputs.length);
    for (let k = 0; k < outputs.length; k++) out[k] = { o: outputs[k], p: this.dev(outputs[k].device) };
    return out;
  }

  /** The node every current of the structure returns to. */
  commonNode(): number | undefined {
    if (this.commonOf) return this.commonOf(this);
    const s = this.s;
    // The first lower diode of the structure (as `role('lower-diode')[0]`), else the reference.
    for (const d of s.devices) {
      const t = roleOf(s, d) === 'lower-diode' ? this.transistor(d) : undefined;
      if (t) return t.common;
    }
    return this.refT().common;
  }

  /** Potential of the common node, when it is a rail (looked up once: the IREF solve asks at every trial current). */
  commonVolts(): number | undefined {
    if (this.common === null) {
      const node = this.commonNode();
      this.common = { v: node === undefined ? undefined : this.railVolts.get(node) };
    }
    return this.common.v;
  }

  vbe(p: DeviceParams, ic: number): number {
    return vbeAt(ic, p.isEff, p.nfVt);
  }

  vgs(p: DeviceParams, id: number, vsb: number): number {
    const vth = thresholdWithBody(p.vto, p.gamma, p.phi, vsb);
    return diodeMosVgs(id, p.kBeta, vth, p.lambda);
  }

  /** VGS of a saturated MOSFET carrying `id` whose VDS is a function of its own VGS (square law with λ, fixed point). */
  vgsWithVds(p: DeviceParams, id: number, vsb: number, vdsOf: (vgs: number) => number): number {
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

  /** Source-to-bulk voltage of a MOS device whose source sits on the common rail (0 for a BJT or an unknown bulk). */
  vsbBase(p: DeviceParams): number {
    const bulk = p.t.bulk;
    const vc = this.commonVolts();
    if (bulk === undefined || vc === undefined) return 0;
    const vb = this.railVolts.get(bulk);
    return vb === undefined ? 0 : this.sign * (vc - vb);
  }

  /** VCE/VDS of an output from its given output-node voltage, less an emitter offset; undefined without one. */
  outputVds(o: Transistor, emitterOffset = 0): number | undefined {
    const v = this.at.outputVolts?.[o.name];
    const vc = this.commonVolts();
    if (v === undefined || vc === undefined || !Number.isFinite(v)) return undefined;
    return this.sign * (v - vc) - emitterOffset;
  }

  /**
   * Current drawn from `node` (sitting `vAbove` beyond the common rail, own polarity) by
   * elements outside the structure: resistors to a rail and current sources.
   */
  pullDown(node: number, vAbove: number): number {
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

  /**
   * Current driven into `node` (sitting `vAbove` beyond the common rail, own polarity) by resistors to a
   * rail and current sources outside the structure and its parts, e.g. a start-up resistor; negative
   * when they draw current out. `except` names further elements to leave out (e.g. another structure's devices).
   */
  injection(node: number, vAbove: number, except: Set<string> = new Set()): { amps: number; elements: string[] } {
    const vc = this.commonVolts();
    if (vc === undefined) return { amps: 0, elements: [] };
    const vNode = vc + this.sign * vAbove;
    const skip = new Set([...this.s.devices, ...Object.keys(this.s.parts ?? {}), ...except]);
    let sum = 0;
    const elements: string[] = [];
    for (const a of this.topo.conducting(node)) {
      const el = a.element;
      if (skip.has(el.name)) continue;
      if (el.kind === 'R' && el.resistance > 0) {
        const other = el.nodes[0] === node ? el.nodes[1] : el.nodes[0];
        const vo = this.railVolts.get(other);
        if (vo === undefined) continue;
        sum += (this.sign * (vo - vNode)) / el.resistance;
        elements.push(el.name);
      } else if (el.kind === 'I') {
        const dc = this.at.sourceValues?.[el.name] ?? el.dc;
        sum += this.sign * (el.nodes[1] === node ? dc : -dc);
        elements.push(el.name);
      }
    }
    return { amps: sum, elements };
  }

  /** ", at VSB = …" for a MOS step when the body effect applies. */
  bulkText(vsb: number): string {
    return Math.abs(vsb) > 1e-12 ? ` at VSB = ${eng(vsb, 'V')}` : '';
  }
}

/**
 * What a transistor's hand-analysis parameters take from its model alone at one set of conditions (temperature,
 * nominal temperature, beta corner, the structure's polarity): a device's own are these times its geometry. The
 * junction temperature law, β's temperature factor and the MOS and JFET threshold and gain at temperature are
 * then evaluated once per model instead of once per device (10,000 devices of one model in a large array).
 */
interface ModelFactors {
  readonly temperatureC: number;
  readonly tnomC: number;
  readonly betaScale: number | undefined;
  readonly sign: 1 | -1;
  /** Per unit of geometry: bipolar IS at temperature; MOS KP at temperature; JFET 2·BETA at temperature. */
  readonly perUnit: number;
  /** Bipolar NF·VT. */
  readonly nfVt: number;
  /** Bipolar BF at temperature and beta corner, and whether the model's β depends on current instead (IKF, IKR or ISE given). */
  readonly beta: number;
  readonly currentBeta: boolean;
  /** Bipolar temperature factor of ISE's leakage. */
  readonly leakage: number;
  /** Bipolar VAF (Infinity when not positive). */
  readonly va: number;
  /** MOS and JFET threshold (own polarity for MOS), λ, γ and φ. */
  readonly vto: number;
  readonly lambda: number;
  readonly gamma: number;
  readonly phi: number;
}

/** Each model's factors at the conditions they were last asked at (one analysis asks at one set). */
const modelFactors = new WeakMap<Model, ModelFactors>();

/** A model's parameter `k`, or the default of its kind (0 when it has none). */
function modelReader(model: Model): (k: string) => number {
  const kind = technologyOfModel(model.kind) ?? 'npn';
  return (k: string) => {
    const v = model.params[k];
    return Number.isFinite(v) || v === Infinity ? v : MODEL_DEFAULTS[kind][k] ?? 0;
  };
}

function factorsAt(model: Model, letter: Transistor['element']['kind'], at: EstimateAt, tnomC: number, vt: number, sign: 1 | -1): ModelFactors {
  const get = modelReader(model);
  // Every field in one order whatever the kind, so `dev` reads objects of one layout.
  const f = { temperatureC: at.temperatureC, tnomC, betaScale: at.betaScale, sign, perUnit: 0, nfVt: vt, beta: Infinity, currentBeta: false, leakage: 1, va: Infinity, vto: 0, lambda: 0, gamma: 0, phi: 0.6 };
  if (letter === 'Q') {
    f.perUnit = isAtTemperature(positiveOr(get('IS'), 1e-16), at.temperatureC, tnomC, get('XTI'), get('EG'));
    f.nfVt = positiveOr(get('NF'), 1) * vt;
    const temp = bjtTemperatureFactors(at.temperatureC, tnomC, get('XTB'));
    f.beta = positiveOr(get('BF'), 100) * temp.beta * positiveOr(at.betaScale ?? 1, 1);
    f.leakage = temp.leakage;
    f.currentBeta = CURRENT_BETA_PARAMETERS.some((k) => model.given.includes(k));
    const va = get('VAF');
    f.va = va > 0 ? va : Infinity;
  } else if (letter === 'J') {
    // VTO keeps the device's own sense for both channel types (docs/DEVICE-MODELS.md): no sign flip.
    const temp = jfetTemperature(get('VTO'), get('VTOTC'), get('BETATCE'), at.temperatureC, tnomC);
    f.perUnit = 2 * positiveOr(get('BETA'), 1e-4) * temp.betaFactor;
    f.vto = temp.vto;
    f.lambda = Math.max(get('LAMBDA'), 0);
  } else {
    const temp = mosTemperature(sign * get('VTO'), get('BEX'), get('TCV'), at.temperatureC, tnomC);
    f.perUnit = positiveOr(get('KP'), 2e-5) * temp.kpFactor;
    f.vto = temp.vto;
    f.lambda = Math.max(get('LAMBDA'), 0);
    f.gamma = Math.max(get('GAMMA'), 0);
    f.phi = positiveOr(get('PHI'), 0.6);
  }
  return f;
}

const railVoltsCache = new WeakMap<Circuit, ReadonlyMap<number, number>>();

/** The circuit's rail potentials by node index, made once per Circuit object and shared (read only). */
function railVoltsOf(circuit: Circuit): ReadonlyMap<number, number> {
  let m = railVoltsCache.get(circuit);
  if (!m) {
    const own = new Map<number, number>();
    for (const [i, r] of railsByIndex(circuit)) own.set(i, r.volts);
    railVoltsCache.set(circuit, (m = own));
  }
  return m;
}

/** The circuit's rail potentials with `overrides` (node name → volts; a name that is no node, or a value that is not finite, is left out). */
function railVoltsWith(circuit: Circuit, topo: Topology, overrides: Record<string, number>): ReadonlyMap<number, number> {
  const m = new Map(railVoltsOf(circuit));
  for (const [name, v] of Object.entries(overrides)) {
    const i = topo.nodeIndex.get(name);
    if (i !== undefined && Number.isFinite(v)) m.set(i, v);
  }
  return m;
}

/** The root of a function that rises with its argument, on [0, hi] (the bracket is widened when g(hi) < 0), by bisection. */
export function solveRising(g: (x: number) => number, hi0: number): number {
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

export function positiveOr(v: number, fallback: number): number {
  return Number.isFinite(v) && v > 0 ? v : fallback;
}

/** The model parameters that make β depend on the collector current. */
const CURRENT_BETA_PARAMETERS: readonly string[] = ['IKF', 'IKR', 'ISE'];

/**
 * The β a hand analysis uses for a bipolar device (docs/DEVICE-MODELS.md): BF·(T/Tnom)^XTB times
 * the beta corner's scale, and — when the model's β depends on current (IKF, IKR or ISE given)
 * and the device's operating current is known — the model's IC/IB at that current.
 */
function bipolarBeta(model: Model, f: ModelFactors, scale: number, vt: number, at: EstimateAt, name: string): { value: number; current?: number } {
  const bf = f.beta;
  const current = at.deviceCurrents?.[name];
  if (!f.currentBeta || current === undefined || !(Math.abs(current) > 0)) return { value: bf };
  const get = modelReader(model);
  const isT = f.perUnit;
  const is = positiveOr(get('IS'), 1e-16);
  const ratio = isT / is;
  const ne = positiveOr(get('NE'), 1.5);
  const value = bjtBetaAt(
    {
      is: isT * scale,
      bf,
      br: positiveOr(get('BR'), 1),
      nf: positiveOr(get('NF'), 1),
      nr: positiveOr(get('NR'), 1),
      vaf: Infinity,
      var: get('VAR') > 0 ? get('VAR') : Infinity,
      ikf: get('IKF') > 0 ? get('IKF') * scale : Infinity,
      ise: Math.max(get('ISE'), 0) * scale * f.leakage * Math.pow(ratio, 1 / ne),
      ne,
      m: 1,
      vt,
      gmin: 0,
    },
    Math.abs(current),
  );
  return { value, current: Math.abs(current) };
}
