// Hand analysis of one recognised structure: IREF from its feed, solved self-consistently with the reference chain, then the kind's own output formulas.

import type { Circuit, CurrentSource } from '../circuit';
import { kindOf } from './catalogue';
import { eng, sig } from './format';
import { Chain, GRAY, Hand, RAZAVI, SQUARE_LAW, type ChainResult, type EstimateAt } from './hand';
import { TECHNOLOGIES } from './technology';
import type { KindModule } from './kind';
import type { Estimate, EstimateStep, Structure } from './types';
import { pushAll } from '../arrays';
import { nameTable } from '../names';
import { recognisedFeed, recognisedRailNode, recognisedRefNode } from './recognised';
import { cardTnomC } from '../devices/physics';

export type { EstimateAt } from './hand';

/** Turn-on voltage per stacked junction below which a bipolar reference counts as starved: about one VBE(on) (common practice; Horowitz and Hill, 3rd ed., ch. 2: 0.6–0.7 V at 1 mA). */
export const STARVED_VBE = 0.6;
/** The 0.7 V shortcut designers use for VBE (common practice). */
export const SHORTCUT_VBE = 0.7;

/**
 * The hand analysis of one structure alone (no operating point). IREF comes from the feed:
 * resistor chain (V+ − V− − Σ VBE)/R solved together with each stacked device's VBE (or VGS)
 * at its own current, a current source's value, or the feeding structure's estimated output.
 * Outputs follow the formula of the structure's kind (its module in `kinds/`); every step is recorded.
 */
export function estimateStructure(circuit: Circuit, s: Structure, at: EstimateAt): Estimate {
  return new HandAnalysis(circuit, s, at, 0).run();
}

/** Whether every name is a transistor of the circuit. */
function allTransistors(h: Hand, names: readonly string[]): boolean {
  for (let k = 0; k < names.length; k++) if (h.transistor(names[k]) === undefined) return false;
  return true;
}

/** "V+ − V−" of a resistor-fed reference with its numbers: the rail and the common node, the higher first. */
/** Whether every output device of `s` is a transistor of the circuit. */
function allOutputsKnown(h: Hand, s: Structure): boolean {
  for (let k = 0; k < s.outputs.length; k++) if (h.transistor(s.outputs[k].device) === undefined) return false;
  return true;
}

/** A junction or gate voltage step (`VBE(Q1)`, `VGS(M1)`), listed before the others. */
function isVoltage(x: EstimateStep): boolean {
  return x.quantity.startsWith('V');
}

function supplyText(sign: 1 | -1, vRail: number, vCommon: number): string {
  return sign > 0 ? `${eng(vRail, 'V')} − ${eng(vCommon, 'V')}` : `${eng(vCommon, 'V')} − ${eng(vRail, 'V')}`;
}

/** The state of the structure at one IREF, with the steps of that evaluation. */
interface ChainState {
  r: ChainResult;
  steps: EstimateStep[];
}

class HandAnalysis {
  private readonly kind: KindModule;
  private readonly h: Hand;

  constructor(
    private readonly circuit: Circuit,
    private readonly s: Structure,
    private readonly at: EstimateAt,
    private readonly depth: number,
  ) {
    this.kind = kindOf(s.kind);
    this.h = new Hand(circuit, s, at, this.kind.commonNode, this.kind.parallelReference ?? false);
  }

  run(): Estimate {
    const { h, kind, s } = this;
    const steps: EstimateStep[] = [];
    // Each step is formatted only when steps are recorded; the numbers never depend on them.
    const record = this.at.recordSteps ?? true;
    // A structure built elsewhere (or edited) without its devices or roles has nothing to compute from.
    const complete =
      allTransistors(h, s.devices) &&
      h.transistor(s.reference.device) !== undefined &&
      (s.outputs.length > 0 || kind.voltageOnly === true) &&
      allOutputsKnown(h, s) &&
      (kind.requiredRoles === undefined || kind.requiredRoles.every((r) => h.role(r).length > 0)) &&
      (kind.complete?.(h) ?? true);
    if (!complete) {
      return { iref: 0, iout: Object.fromEntries(s.outputs.map((o) => [o.device, 0])), vControl: 0, steps, irefFrom: 'unknown' };
    }
    if (record) {
      steps.push({
        quantity: 'VT',
        formula: 'k·T/q (k = 1.380649e-23 J/K, q = 1.602176634e-19 C, exact, SI 2019)',
        substituted: `k × ${sig(this.at.temperatureC + 273.15, 5)} K / q`,
        value: h.vt,
        unit: 'V',
      });
      steps.push(...this.betaSteps()); // bounded: one step per device of the structure
    }
    const feed = s.reference;
    let iref = 0;
    let irefFrom: Estimate['irefFrom'] = 'unknown';
    let starved = false;
    let supply: Estimate['supply'];
    let irefShortcut: number | undefined;
    const vCommon = h.commonVolts();
    const nStack = kind.referenceJunctions;

    // The IREF step of a feed other than a resistor chain, shown before the chain's VBE/VGS steps.
    let irefStep: (() => EstimateStep) | undefined;
    let resistorFed: { ohms: number; available: number; vRail: number; vCommon: number } | undefined;

    if (kind.ownReference) {
      irefFrom = 'own-equation';
      const own = new Chain(h, true, record);
      iref = kind.ownReference(h, own);
      pushAll(steps, own.steps);
    } else if (feed.feed === 'resistor' && feed.rail && vCommon !== undefined) {
      irefFrom = 'resistor';
      let ohms = 0;
      // Each resistor and the rail where recognition found them, when they are still there (no look-up by name).
      for (let k = 0; k < feed.elements.length; k++) {
        const el = h.topo.elementNamedAt(feed.elements[k], recognisedFeed(s, k));
        ohms += el && el.kind === 'R' && el.resistance > 0 ? el.resistance : 0;
      }
      const railNode = h.topo.nodeNamed(feed.rail.node, recognisedRailNode(s));
      const vRail = (railNode !== undefined ? h.railVolts.get(railNode) : undefined) ?? feed.rail.volts;
      const available = h.sign * (vRail - vCommon);
      const needed = h.bipolar ? nStack * STARVED_VBE : this.chain(0, false).r.stack;
      supply = { available, needed };
      if (!(ohms > 0) || available <= needed) starved = true;
      if (ohms > 0 && available > 0) iref = this.solveResistorFed(available, ohms);
      if (!h.bipolar && available <= needed) iref = 0;
      resistorFed = { ohms, available, vRail, vCommon };
    } else if (feed.feed === 'current-source') {
      irefFrom = 'current-source';
      const src = h.topo.elementNamedAt(feed.elements[0], recognisedFeed(s, 0)) as CurrentSource | undefined;
      const refNode = h.topo.nodeNamed(feed.node, recognisedRefNode(s));
      if (src && refNode !== undefined) {
        const dc = this.at.sourceValues?.[src.name] ?? src.dc;
        // dc flows from plus through the source to minus: into the node when the node is `minus`.
        const into = src.nodes[1] === refNode ? dc : -dc;
        iref = Math.max(h.sign * into, 0);
        if (!(h.sign * into > 0)) starved = true;
        const value = iref;
        irefStep = () => ({
          quantity: 'IREF',
          formula: 'the current source value',
          substituted: `${src.name} = ${eng(Math.abs(dc), 'A')}${h.sign * into > 0 ? '' : ' (flows the wrong way for this reference)'}`,
          value,
          unit: 'A',
        });
      }
    } else if (feed.feed === 'mirror-output' && this.loopWithoutEquation()) {
      // Mirrors feeding each other round with no kind that sets the current: their ratios balance at any current
      // (or only at zero), so the hand formulas cannot give IREF; say so rather than fall to 0 A.
      const loop = this.loopWithoutEquation()!;
      if (this.at.irefGiven !== undefined && Number.isFinite(this.at.irefGiven)) {
        irefFrom = 'given';
        iref = Math.abs(this.at.irefGiven);
      }
      const given = irefFrom === 'given';
      const value = iref;
      irefStep = () => ({
        quantity: 'IREF',
        formula: `set by the self-biased loop ${loop.join(' → ')}: each mirror's formula only passes the current on, so no hand formula fixes its value (the loop balances wherever the product of its ratios is 1, or only at zero)${given ? '; taken from the operating point' : ''}`,
        substituted: given ? eng(value, 'A') : 'not determined by hand',
        value,
        unit: 'A',
      });
    } else if (feed.feed === 'mirror-output') {
      irefFrom = 'mirror-output';
      const value = (iref = this.feedingOutput());
      irefStep = () => ({
        quantity: 'IREF',
        formula: "the feeding structure's estimated output current",
        substituted: `${feed.elements[0]} of ${feed.fedBy ?? '?'} = ${eng(value, 'A')}`,
        value,
        unit: 'A',
      });
    } else if (this.at.irefGiven !== undefined && Number.isFinite(this.at.irefGiven)) {
      irefFrom = 'given';
      const value = (iref = Math.abs(this.at.irefGiven));
      irefStep = () => ({ quantity: 'IREF', formula: 'taken from the operating point (the feed is not a resistor chain, current source or mirror output)', substituted: eng(value, 'A'), value, unit: 'A' });
    }

    const { r: st, steps: chainSteps } = this.chain(iref, true, record);
    if (resistorFed) {
      const { ohms, available } = resistorFed;
      // "V+ − V−" with numbers, and the other texts of these steps, are written only when a step is.
      const { vRail, vCommon: vLow } = resistorFed;
      if (record) {
        const vName = h.bipolar ? 'VBE' : 'VGS';
        const stackFormula = kind.stackFormula?.(h, vName) ?? (nStack > 1 ? `${nStack} stacked ${vName}` : vName);
        pushAll(steps, chainSteps.filter(isVoltage));
        steps.push({
          quantity: 'IREF',
          formula: `(V+ − V− − ${stackFormula})/R, solved together with the device law (${h.bipolar ? GRAY : RAZAVI})`,
          substituted: `(${supplyText(h.sign, vRail, vLow)} − ${eng(st.stack, 'V')})/${eng(ohms, 'Ω')}`,
          value: iref,
          unit: 'A',
        });
      }
      if (h.bipolar && ohms > 0) {
        const shortcut = kind.shortcut?.(h, { available, ohms, supplyText: supplyText(h.sign, vRail, vLow) });
        irefShortcut = shortcut ? shortcut.value : Math.max((available - nStack * SHORTCUT_VBE) / ohms, 0);
        if (record)
          steps.push(
            shortcut ?? {
              quantity: 'IREF (0.7 V shortcut)',
              formula: `(V+ − V− − ${nStack} × 0.7 V)/R (common practice)`,
              substituted: `(${supplyText(h.sign, vRail, vLow)} − ${eng(nStack * SHORTCUT_VBE, 'V')})/${eng(ohms, 'Ω')}`,
              value: irefShortcut,
              unit: 'A',
            },
          );
      }
    } else {
      if (irefStep && record) steps.push(irefStep());
      if (record) pushAll(steps, chainSteps.filter(isVoltage));
    }
    if (record) pushAll(steps, chainSteps.filter((x) => !isVoltage(x)));
    let voltages: Record<string, number> | undefined;
    let voltageTempco: Record<string, number> | undefined;
    if (kind.voltages) {
      const vc = new Chain(h, true, record);
      const got = kind.voltages(h, st, vc);
      voltages = nameTable();
      for (const [k, v] of Object.entries(got)) {
        voltages[k] = v.volts;
        if (v.tempcoPpmPerC !== undefined && Number.isFinite(v.tempcoPpmPerC)) (voltageTempco ??= nameTable())[k] = v.tempcoPpmPerC;
      }
      pushAll(steps, vc.steps);
    }
    const outputEdge: Record<string, number> = nameTable();
    if (vCommon !== undefined) {
      // `in` lists the table's names in Object.entries' order (no table here inherits enumerable names), without a pair per name.
      for (const k in st.edge) {
        const v = st.edge[k];
        outputEdge[k] = vCommon + h.sign * v;
        if (record) steps.push(this.edgeStep(k, v, vCommon, outputEdge[k]));
      }
    }
    const estimate: Estimate = {
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
    // Added only when there are some, after the others (the order the JSON shows).
    if (voltages) estimate.voltages = voltages;
    if (voltageTempco) estimate.voltageTempco = voltageTempco;
    return estimate;
  }

  /** The step of the output-node voltage `value` at the edge of output `k`'s active region, `v` beyond the common rail `vCommon`. */
  private edgeStep(k: string, v: number, vCommon: number, value: number): EstimateStep {
    const { h, s } = this;
    const node = s.outputs.find((o) => o.device === k)?.node ?? k;
    const cmp = h.sign > 0 ? '≥' : '≤';
    return {
      quantity: `Compliance edge V(${node})`,
      formula: h.bipolar
        ? `V(${node}) ${cmp} V(base of ${k}): the VBC = 0 edge of forward-active (stricter than the textbook VCE(sat) ≈ 0.2 V)`
        : TECHNOLOGIES[s.technology].family === 'jfet'
          ? `V(${node}) ${cmp} V(gate of ${k}) ${h.sign > 0 ? '−' : '+'} VP: the edge of saturation, VDS = VGS − VP with VP the pinch-off voltage (${SQUARE_LAW}, JFET form)`
          : `V(${node}) ${cmp} V(source) ${h.sign > 0 ? '+' : '−'} VOV of ${k}, i.e. V(gate) ${h.sign > 0 ? '− VTH' : '+ |VTH|'}: the edge of saturation (${RAZAVI})`,
      substituted: `${eng(vCommon, 'V')} ${h.sign > 0 ? '+' : '−'} ${eng(v, 'V')}`,
      value,
      unit: 'V',
      devices: [k],
    };
  }

  /**
   * One step per bipolar device whose β is not simply BF: the model's β at the device's operating
   * current (IKF, ISE) or at temperature (XTB), as docs/DEVICE-MODELS.md defines it.
   */
  private betaSteps(): EstimateStep[] {
    const { h, s } = this;
    if (!h.bipolar) return [];
    const out: EstimateStep[] = [];
    for (const d of s.devices) {
      if (h.transistor(d) === undefined) continue;
      const p = h.dev(d);
      const xtb = p.model.given.includes('XTB') && this.at.temperatureC !== cardTnomC(p.model.params, this.circuit.tnomC);
      if (p.betaAtCurrent === undefined && !xtb) continue;
      out.push({
        quantity: `β(${d})`,
        formula:
          p.betaAtCurrent !== undefined
            ? "the model's IC/IB at the device's operating current (Gummel–Poon: high injection IKF, leakage ISE and temperature XTB included)"
            : 'BF·(T/Tnom)^XTB (temperature scaling of β)',
        substituted: p.betaAtCurrent !== undefined ? `IC = ${eng(p.betaAtCurrent, 'A')} at ${sig(this.at.temperatureC, 4)} °C` : `BF = ${sig(p.model.params['BF'] ?? 100, 4)}, T = ${sig(this.at.temperatureC + 273.15, 5)} K`,
        value: p.beta,
        unit: '',
        devices: [d],
      });
    }
    return out;
  }

  /** The structure at one IREF through its kind's analysis; `final` for the evaluation kept, `format` to write its steps. */
  private chain(iref: number, final: boolean, format = final): ChainState {
    const c = new Chain(this.h, final, format);
    return { r: this.kind.analyse(this.h, iref, c), steps: c.steps };
  }

  /** The ids round a loop of feeds back to this structure when no structure on it sets the current by its own equation. */
  private loopWithoutEquation(): string[] | undefined {
    if (!this.at.structures) return undefined;
    const byId = structuresById(this.at.structures);
    const ids: string[] = [this.s.id];
    let cur: Structure | undefined = this.s;
    for (let n = 0; n <= this.at.structures.length && cur; n++) {
      const next: Structure | undefined = cur.reference.fedBy !== undefined ? byId.get(cur.reference.fedBy) : undefined;
      if (!next || kindOf(next.kind).ownReference) return undefined;
      if (next === this.s) return [...ids, this.s.id];
      if (ids.includes(next.id)) return undefined;
      ids.push(next.id);
      cur = next;
    }
    return undefined;
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
    let lo = Math.log(hi0 * 1e-18);
    let hi = Math.log(hi0);
    let flo = this.resistorFedResidual(lo, available, ohms);
    let fhi = this.resistorFedResidual(hi, available, ohms);
    if (flo >= 0) return 0;
    if (fhi <= 0) return hi0;
    // Residuals are in volts: 1e-12 of the supply is far below any printed digit.
    const tol = 1e-12 * Math.max(available, 1e-3);
    let side = 0;
    for (let n = 0; n < 200 && hi - lo > 1e-13; n++) {
      let u = hi - (fhi * (hi - lo)) / (fhi - flo);
      if (!(u > lo && u < hi)) u = 0.5 * (lo + hi);
      const fu = this.resistorFedResidual(u, available, ohms);
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

  /** IREF·R + stack(IREF) − available at IREF = e^u, volts: the residual `solveResistorFed` drives to zero. */
  private resistorFedResidual(u: number, available: number, ohms: number): number {
    const i = Math.exp(u);
    return i * ohms + this.stackAt(i) - available;
  }

  /** The reference-chain voltage at one IREF without recording steps: the kind's closed form when it has one. */
  private stackAt(iref: number): number {
    return this.kind.stackAt?.(this.h, iref) ?? this.chain(iref, false).r.stack;
  }
}

const idIndex = new WeakMap<Structure[], Map<string, Structure>>();

/** The structures of one analysis by id, indexed once per array (a chain of N mirror-fed mirrors would otherwise search N times). */
function structuresById(list: Structure[]): Map<string, Structure> {
  let m = idIndex.get(list);
  if (!m || m.size !== list.length) idIndex.set(list, (m = new Map(list.map((x) => [x.id, x]))));
  return m;
}
