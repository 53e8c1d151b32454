// The simple current mirror: a diode-connected reference and one or more outputs on its control node, ratioed by geometry.

import { eng, sig } from '../format';
import { earlyFactor, lambdaFactor, mosWidlarOutput, simpleMirrorGain, thresholdWithBody, widlarOutput } from '../formulas';
import { GRAY, RAZAVI, type Chain, type ChainResult, type Hand, type OutputParams } from '../hand';
import type { KindModule } from '../kind';
import { mirrorMembers, type Draft, type Matcher } from '../match';
import type { Transistor } from '../topology';
import type { Structure } from '../types';
import { commonEmitterRo, geometricRatio } from './common';
import { nameTable } from '../../names';

/**
 * A diode-connected reference D (collector = base = A, emitter on E) and every other device with its
 * base on A whose emitter is on E (ratioed by geometry) or reaches E through one resistor (a Widlar
 * output inside a simple mirror). Further diode-connected devices on A with emitters on E are
 * paralleled reference devices. No output, no structure; when every output is degenerated the
 * Widlar source claims it first (see `widlar-source.ts`).
 * ```
 *   IREF→A
 *   D: c=b=A, e=E        O: c=out, b=A, e=E        O (Widlar): c=out, b=A, e=X;  R2 from X to E
 * ```
 */
export function recogniseDiodeMirror(m: Matcher, d: Transistor, kind: 'simple-mirror' | 'widlar-source'): Draft | undefined {
  // Every Widlar output has its emitter off the reference's: without a device that could be one, no list is made.
  if (kind === 'widlar-source' && !m.hasOffsetOutput(d)) return undefined;
  const { twins, outputs, devices } = m.diodeOutputs(d);
  if (outputs.length === 0) return undefined;
  const allDegenerated = outputs.every((o) => o.degeneration);
  // The Widlar source is the more specific kind: every output degenerated. A mixed one stays a simple mirror.
  if (allDegenerated !== (kind === 'widlar-source')) return undefined;
  return {
    kind,
    reference: d,
    refNode: d.ctrl,
    members: mirrorMembers(d, twins, devices),
    outputs,
  };
}

/**
 * The hand analysis of a diode-connected reference with plain and Widlar-degenerated outputs.
 * Bipolar: IOUT = m·IREF/(1 + (1 + Σm)/β) for the plain outputs (Gray et al., ch. 4), the Widlar
 * equation for the degenerated ones, with the Early factor when the output voltage is known. MOS:
 * the (W/L) ratio with λ, and the square-law Widlar equation (Razavi, ch. 5).
 */
export function analyseDiodeMirror(h: Hand, iref: number, c: Chain): ChainResult {
  const iout: Record<string, number> = nameTable();
  const edge: Record<string, number> = nameTable();
  const ref = h.dev(h.s.reference.device);
  const outs = h.outputs();
  const beta = ref.beta;
  // Nearly every mirror has no Widlar output: its outputs are then the plain ones, with no lists filtered from them.
  const mixed = outs.some(isDegenerated);
  const simple = mixed ? outs.filter((x) => !x.o.degeneration) : outs;
  const widlar = mixed ? outs.filter(isDegenerated) : NO_OUTPUTS;
  if (h.bipolar) {
    let sumSimple = 0;
    for (let k = 0; k < simple.length; k++) sumSimple += simple[k].o.ratio;
    let ic1 = iref / (1 + (1 + sumSimple) / beta);
    // The Widlar outputs' base currents also come out of IREF; a few passes settle IC1 (tables only when there are some).
    const wout: Record<string, number> = widlar.length > 0 ? nameTable() : NO_WIDLAR;
    const wEarly: Record<string, number> = widlar.length > 0 ? nameTable() : NO_WIDLAR;
    for (let pass = 0; pass < (widlar.length > 0 ? 8 : 1); pass++) {
      let ibW = 0;
      const vbe1Now = h.vbe(ref, ic1);
      for (const x of widlar) {
        // Early effect of the output at its own VCE (emitter lifted by IE·R2) against the reference's VCE = VBE.
        const ie = ((wout[x.o.device] ?? 0) * (x.p.beta + 1)) / x.p.beta;
        const vce = h.outputVds(x.p.t, ie * x.o.degeneration!.ohms);
        wEarly[x.o.device] = vce !== undefined ? earlyFactor(vce, vbe1Now, x.p.va) : 1;
        const mEff = x.o.ratio * wEarly[x.o.device];
        wout[x.o.device] = widlarOutput({ iin: ic1, r2: x.o.degeneration!.ohms, nVt: x.p.nfVt, m: mEff, k: (x.p.beta + 1) / x.p.beta });
        ibW += wout[x.o.device] / x.p.beta;
      }
      ic1 = Math.max(iref - ibW, 0) / (1 + (1 + sumSimple) / beta);
    }
    const vbe1 = c.junction('', ref, ic1, 0);
    for (const x of simple) {
      const vce = h.outputVds(x.p.t);
      const early = vce !== undefined ? earlyFactor(vce, vbe1, x.p.va) : 1;
      const base = simpleMirrorGain(beta, x.o.ratio, sumSimple) * iref;
      iout[x.o.device] = base * early;
      edge[x.o.device] = vbe1;
      c.push(() => ({
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
      c.push(() => ({
        quantity: `IOUT(${x.o.device})`,
        formula: `NF·VT·ln(m·IC1/IOUT) = IOUT·(1 + 1/β)·R2 (Widlar, IEEE Trans. Circuit Theory, 1965, with the output base current added to R2${wEarly[x.o.device] !== 1 ? '; m × (1 + (VCE2 − VBE)/VA) for the Early effect' : ''})`,
        substituted: `${sig(x.p.nfVt, 4)} V × ln(${sig(x.o.ratio * (wEarly[x.o.device] ?? 1), 5)} × ${eng(ic1, 'A')}/IOUT) = IOUT × ${sig((x.p.beta + 1) / x.p.beta, 4)} × ${eng(x.o.degeneration!.ohms, 'Ω')}`,
        value: i,
        unit: 'A',
        devices: [x.o.device, x.o.degeneration!.resistor],
      }));
    }
    return { stack: vbe1, vControl: vbe1, iRef: ic1, iout, edge };
  }
  const vsb = h.vsbBase(ref);
  const vgs1 = c.junction('', ref, iref, vsb);
  const vth1 = thresholdWithBody(ref.vto, ref.gamma, ref.phi, vsb);
  for (const x of simple) {
    const vds = h.outputVds(x.p.t);
    const clm = vds !== undefined ? lambdaFactor(x.p.lambda, vds, vgs1) : 1;
    iout[x.o.device] = x.o.ratio * iref * clm;
    edge[x.o.device] = vgs1 - vth1;
    c.push(() => ({
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
    c.push(() => ({
      quantity: `IOUT(${x.o.device})`,
      formula: 'sqrt(2·IREF/β1) = sqrt(2·IOUT/β2) + IOUT·R2, β = KP·W/L·M, body effect neglected (square law; Razavi, ch. 5)',
      substituted: `sqrt(2 × ${eng(iref, 'A')}/${eng(ref.kBeta, 'A/V²')}) = sqrt(2·IOUT/${eng(x.p.kBeta, 'A/V²')}) + IOUT × ${eng(x.o.degeneration!.ohms, 'Ω')}`,
      value: i,
      unit: 'A',
      devices: [x.o.device, x.o.degeneration!.resistor],
    }));
  }
  return { stack: vgs1, vControl: vgs1, iRef: iref, iout, edge };
}

function isDegenerated(x: OutputParams): boolean {
  return !!x.o.degeneration;
}

/** The Widlar outputs of a mirror without any. */
const NO_OUTPUTS: readonly OutputParams[] = Object.freeze([]);

/** The Widlar tables of a mirror without Widlar outputs: never written, since nothing iterates over them. */
const NO_WIDLAR: Readonly<Record<string, number>> = Object.freeze(nameTable<number>());

/**
 * The reference-chain voltage in closed form when no output is degenerated (the common case, asked
 * for at every trial current of the IREF solve): VBE at IC1 = IREF/(1 + (1 + Σm)/β), or VGS at IREF.
 */
export function diodeMirrorStack(h: Hand, iref: number): number | undefined {
  // Σm of the outputs, or NaN when one is degenerated (no closed form): a loop over a few outputs, cheaper than a table
  // per structure to keep it in.
  const sum = ratioSum(h.s.outputs);
  if (Number.isNaN(sum)) return undefined;
  const ref = h.dev(h.s.reference.device);
  if (h.bipolar) return h.vbe(ref, iref / (1 + (1 + sum) / ref.beta));
  return h.vgs(ref, iref, h.vsbBase(ref));
}

/** Σm of a mirror's outputs, NaN when one of them is degenerated. */
function ratioSum(outputs: Structure['outputs']): number {
  let sum = 0;
  for (let k = 0; k < outputs.length; k++) {
    if (outputs[k].degeneration) return NaN;
    sum += outputs[k].ratio;
  }
  return sum;
}

export const simpleMirror: KindModule = {
  id: 'simple-mirror',
  name: 'simple current mirror',
  outputName: 'mirror output',
  summary: 'A diode-connected reference and one or more outputs on its control node, ratioed by area, `M=` or W/L (an output with an emitter resistor among plain ones is a Widlar output of it).',
  technologies: ['npn', 'pnp', 'nmos', 'pmos'],
  seeds: 'diode-connected',
  recognise: (m, d) => recogniseDiodeMirror(m, d, 'simple-mirror'),
  referenceJunctions: 1,
  parallelReference: true,
  analyse: analyseDiodeMirror,
  stackAt: diodeMirrorStack,
  outputResistance: (_c, o, out) => commonEmitterRo(o, out),
  ratio: (c, o) => geometricRatio(c, o, simpleMirror.name, (m, sumM) => `IOUT ≈ ${m}·IREF/(1 + ${sig(1 + sumM)}/β)`),
  earlyInFormula: true,
  simplifications: (s) =>
    s.outputs.some((o) => o.degeneration) ? 'the Widlar equation neglects the reference base currents and the Early effect' : 'the simplifications of the hand formula',
};
