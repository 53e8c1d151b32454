// Invented circuits for the catalogue's newer kinds, in each technology: self-biased loops and their variants.

import type { Circuit } from '../../../../shared-analysis/src/circuit';
import type { Technology } from '../../../../shared-analysis/src/structures/types';
import { CircuitBuilder } from '../build';

/** Options of a self-biased loop. */
export interface LoopOptions {
  /** Technology of the core pair; the closing mirror has the other polarity. */
  core: Technology;
  /** Family of the closing mirror: bipolar or MOS (default: the core's). */
  closing?: 'bjt' | 'mos';
  /** Density ratio of the core's output: area (BJT) or W (MOS) multiple of the reference. */
  n?: number;
  /** The loop resistor, Ω. */
  r?: number;
  /** A start-up resistor from the far rail into the core's reference node, Ω. */
  startup?: number;
  supply?: number;
  /** Build the bandgap output branch: a further closing-mirror output into R2 on a diode-connected core device. */
  bandgap?: { r2: number };
  temperatureC?: number;
}

/**
 * The loop: core Q1 (diode-connected, node n1) and Q2 (output, emitter/source through R to the
 * core's rail, collector/drain on node p); closing mirror P1 (diode-connected on p) and P2 (drives n1).
 * An NPN/NMOS core sits on ground with the closing mirror on VCC; a PNP/PMOS core hangs from VCC.
 * Device names: Q* and P* for bipolar devices, M* for MOS (MQ1, MQ2, MP1, MP2).
 */
export function selfBiasedLoop(o: LoopOptions): { circuit: Circuit; names: { q1: string; q2: string; p1: string; p2: string; r: string; q3: string } } {
  const b = new CircuitBuilder();
  if (o.temperatureC !== undefined) b.temperatureC = o.temperatureC;
  const up = o.core === 'npn' || o.core === 'nmos';
  const coreBjt = o.core === 'npn' || o.core === 'pnp';
  const closingBjt = (o.closing ?? (coreBjt ? 'bjt' : 'mos')) === 'bjt';
  b.v('VCC', 'vcc', '0', o.supply ?? 5);
  b.model('qn', 'npn', { BF: 100 }).model('qp', 'pnp', { BF: 50 });
  b.model('mn', 'nmos', { KP: 100e-6, VTO: 0.5 }).model('mp', 'pmos', { KP: 40e-6, VTO: -0.6 });
  const coreRail = up ? '0' : 'vcc';
  const farRail = up ? 'vcc' : '0';
  const n = o.n ?? (coreBjt ? 8 : 4);
  const q = (name: string, c: string, base: string, e: string, tech: 'n' | 'p', scale = 1) =>
    b.q(name, c, base, e, tech === 'n' ? 'qn' : 'qp', { area: scale });
  const m = (name: string, d: string, g: string, s: string, tech: 'n' | 'p', scale = 1) =>
    b.mos(name, d, g, s, tech === 'n' ? '0' : 'vcc', tech === 'n' ? 'mn' : 'mp', { w: 10e-6 * scale, l: 1e-6 });
  const coreT: 'n' | 'p' = up ? 'n' : 'p';
  const closeT: 'n' | 'p' = up ? 'p' : 'n';
  const names = coreBjt ? { q1: 'Q1', q2: 'Q2', q3: 'Q3' } : { q1: 'MQ1', q2: 'MQ2', q3: 'MQ3' };
  const cl = closingBjt ? { p1: 'QP1', p2: 'QP2', p3: 'QP3' } : { p1: 'MP1', p2: 'MP2', p3: 'MP3' };
  const dev = coreBjt ? q : m;
  const cdev = closingBjt ? q : m;
  dev(names.q1, 'n1', 'n1', coreRail, coreT);
  dev(names.q2, 'p', 'n1', 'x2', coreT, n);
  b.r('R', 'x2', coreRail, o.r ?? (coreBjt ? 1e3 : 5e3));
  cdev(cl.p1, 'p', 'p', farRail, closeT);
  cdev(cl.p2, 'n1', 'p', farRail, closeT);
  if (o.startup) b.r('RSU', farRail, 'n1', o.startup);
  if (o.bandgap) {
    cdev(cl.p3, 'vbg', 'p', farRail, closeT);
    b.r('R2', 'vbg', 'y', o.bandgap.r2);
    dev(names.q3, 'y', 'y', coreRail, coreT);
  }
  return { circuit: b.build(), names: { ...names, ...cl, r: 'R' } };
}

/** A VBE (VGS) multiplier fed by a resistor from the far rail, R1 from collector to base, R2 from base to emitter. */
export function multiplier(tech: Technology, o: { r1?: number; r2?: number; feed?: number; temperatureC?: number } = {}): Circuit {
  const b = new CircuitBuilder();
  if (o.temperatureC !== undefined) b.temperatureC = o.temperatureC;
  const up = tech === 'npn' || tech === 'nmos';
  const bip = tech === 'npn' || tech === 'pnp';
  b.v('VCC', 'vcc', '0', 10);
  b.model('dev', tech, bip ? { BF: 120 } : { KP: 100e-6, VTO: up ? 0.5 : -0.5 });
  const rail = up ? '0' : 'vcc';
  const far = up ? 'vcc' : '0';
  if (bip) b.q('Q1', 'c', 'b', rail, 'dev');
  else b.mos('Q1', 'c', 'b', rail, rail, 'dev', { w: 20e-6, l: 1e-6 });
  b.r('R1', 'c', 'b', o.r1 ?? (bip ? 2.2e3 : 100e3));
  b.r('R2', 'b', rail, o.r2 ?? (bip ? 1e3 : 100e3));
  b.r('RF', far, 'c', o.feed ?? (bip ? 4.7e3 : 47e3));
  return b.build();
}

/** A wide-swing cascode mirror with its cascode-bias branch; `biasW` sets the bias device's width (smaller: higher VGC). */
export function wideSwing(tech: 'nmos' | 'pmos', o: { biasW?: number; ratio?: number; lambda?: number } = {}): Circuit {
  const b = new CircuitBuilder();
  const up = tech === 'nmos';
  b.v('VDD', 'vdd', '0', 3.3);
  b.model('dev', tech, { KP: up ? 200e-6 : 80e-6, VTO: up ? 0.45 : -0.5, LAMBDA: o.lambda ?? 0.05, GAMMA: 0.4 });
  const rail = up ? '0' : 'vdd';
  const far = up ? 'vdd' : '0';
  const w = 10e-6;
  const m = (name: string, d: string, g: string, s: string, width = w) => b.mos(name, d, g, s, rail, 'dev', { w: width, l: 1e-6 });
  // Current sources from the far rail into the reference and bias nodes (flowing into the node for NMOS, out of it for PMOS).
  if (up) b.i('IREF', far, 'a', 50e-6).i('IB', far, 'gc', 50e-6);
  else b.i('IREF', 'a', far, 50e-6).i('IB', 'gc', far, 50e-6);
  m('M1', 'x1', 'a', rail);
  m('M3', 'a', 'gc', 'x1');
  m('M2', 'x2', 'a', rail, w * (o.ratio ?? 1));
  m('M4', 'out', 'gc', 'x2', w * (o.ratio ?? 1));
  m('M5', 'gc', 'gc', rail, o.biasW ?? 1.5e-6);
  b.r('RL', far, 'out', 20e3 / (o.ratio ?? 1));
  return b.build();
}
