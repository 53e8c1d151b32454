// Self-biased loops: the Widlar-type core whose output current comes back to its own reference through a mirror of the other polarity.

import type { Resistor } from '../circuit';
import type { Hand } from './hand';
import type { Matcher } from './match';
import { polaritySign, type Topology, type Transistor } from './topology';
import type { Structure } from './types';

/** The mirror that closes a self-biased loop. */
export interface ClosingMirror {
  /** Its diode-connected device, on the core output's collector (drain). */
  reference: Transistor;
  /** Its output that drives the core's reference node. */
  output: Transistor;
  /** Its other outputs (devices of its technology with their control on the same node and their common on the same rail). */
  others: Transistor[];
}

/**
 * The mirror of the opposite polarity whose diode-connected reference sits on node `from` and one of
 * whose outputs drives node `to`: the path by which a core's output current returns to its own
 * reference. Either family closes the loop (a PNP or a PMOS mirror over an NPN core).
 */
export function closingMirror(topo: Topology, from: number, to: number, core: Transistor): ClosingMirror | undefined {
  const sign = polaritySign(core.tech);
  for (const p of topo.byCtrl.get(from) ?? []) {
    if (p.out !== from || polaritySign(p.tech) === sign) continue;
    const mates = (topo.byCtrl.get(from) ?? []).filter((t) => t !== p && t.tech === p.tech && t.common === p.common && t.out !== from);
    const output = mates.find((t) => t.out === to);
    if (output) return { reference: p, output, others: mates.filter((t) => t !== output) };
  }
  return undefined;
}

/** A self-biased Widlar-type core: the diode-connected reference, the degenerated output, its resistor and the mirror that closes the loop. */
export interface LoopCore {
  reference: Transistor;
  output: Transistor;
  resistor: Resistor;
  closing: ClosingMirror;
}

/**
 * The self-biased core on a diode-connected `d` (collector = base = A, emitter on E): an output O with
 * its base on A, its emitter reaching E through one resistor R, and its collector C on the reference
 * of a mirror of the other polarity that drives A.
 * ```
 *        closing mirror (other polarity): P c=b=C, PO c=A, b=C
 *   A ◄── PO                      C ◄── P (diode)
 *   D: c=b=A, e=E        O: c=C, b=A, e=X;  R from X to E
 * ```
 */
export function matchLoopCore(m: Matcher, d: Transistor): LoopCore | undefined {
  const a = d.ctrl;
  const e = d.common;
  if (d.out !== a || !m.hasOffsetOutput(d)) return undefined;
  for (const o of m.candidates(d.tech, (t) => t.ctrl === a && t.out !== a && t.common !== e, [d], m.onCtrl(a))) {
    const r = m.degeneration(o, e);
    if (!r) continue;
    const closing = closingMirror(m.topo, o.out, a, d);
    if (closing && !m.isClaimed(closing.reference) && !m.isClaimed(closing.output)) return { reference: d, output: o, resistor: r, closing };
  }
  return undefined;
}

/** The core of a recognised self-biased structure, found again from its devices (reference and first output). */
export function loopCoreOf(h: Hand): LoopCore | undefined {
  const ref = h.refT();
  const out = h.topo.byName.get(h.s.outputs[0]?.device ?? '');
  const rName = Object.entries(h.s.parts ?? {}).find(([, role]) => role === LOOP_RESISTOR)?.[0];
  const r = rName ? h.topo.elementByName.get(rName) : undefined;
  if (!ref || !out || !r || r.kind !== 'R') return undefined;
  const closing = closingMirror(h.topo, out.out, ref.ctrl, ref);
  return closing ? { reference: ref, output: out, resistor: r, closing } : undefined;
}

/** The `parts` role of the core's resistor. */
export const LOOP_RESISTOR = 'loop resistor (sets the current with the device ratio)';

/**
 * Current ratio of the closing mirror, I(output)/I(into its reference), with its base currents when it
 * is bipolar: K/(1 + (1 + ΣK)/β) over every output on its control node (Gray et al., ch. 4).
 */
export function closingGain(h: Hand, c: ClosingMirror): { gain: number; ratio: number; beta: number; sum: number } {
  const ratio = c.output.scale / c.reference.scale;
  const sum = ratio + c.others.reduce((a, t) => a + t.scale / c.reference.scale, 0);
  if (c.reference.element.kind !== 'Q') return { gain: ratio, ratio, beta: Infinity, sum };
  const bf = c.reference.element.model.params.BF;
  const beta = (Number.isFinite(bf) && bf > 0 ? bf : 100) * (h.at.betaScale && h.at.betaScale > 0 ? h.at.betaScale : 1);
  return { gain: ratio / (1 + (1 + sum) / beta), ratio, beta, sum };
}

/** The last list `feedLoops` was asked about for each topology, and its answer. */
const lastLoops = new WeakMap<Topology, { list: Structure[]; members: Structure[]; loops: Structure[][] }>();

/**
 * Loops of structures that feed each other round: each one's reference node is driven by an output of
 * the next (whatever else also drives it, e.g. a start-up resistor). Each loop once, in structure order.
 * The start-up check and the corner phase ask it of the same list in one analysis: the answer is kept
 * with the topology and given again while the list holds the same structures (a new list, or one whose
 * members changed, is searched afresh). The caller may change the returned list, not the loops in it.
 */
export function feedLoops(topo: Topology, structures: Structure[]): Structure[][] {
  const last = lastLoops.get(topo);
  if (last && last.list === structures && sameMembers(last.members, structures)) return last.loops.slice();
  const loops = searchFeedLoops(topo, structures);
  lastLoops.set(topo, { list: structures, members: structures.slice(), loops });
  return loops.slice();
}

/** Whether two lists hold the same structures in the same order. */
function sameMembers(a: readonly Structure[], b: readonly Structure[]): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/** `feedLoops` without the kept answer: a depth-first search from each structure over the drives between them. */
function searchFeedLoops(topo: Topology, structures: Structure[]): Structure[][] {
  const owner = new Map<string, Structure>();
  for (const s of structures) for (const o of s.outputs) owner.set(o.device, s);
  // Only the structures another one drives are listed: most are fed by a resistor or a source, and a structure
  // nothing drives is in no loop, so neither its drivers' set nor its search is made (25,000 of each at 100,000 elements).
  const next = new Map<Structure, Structure[]>();
  for (const s of structures) {
    const node = topo.nodeIndex.get(s.reference.node);
    if (node === undefined) continue;
    let drivers: Set<Structure> | undefined;
    for (const a of topo.conducting(node)) {
      const from = a.slot === 0 ? owner.get(a.element.name) : undefined;
      if (from && from !== s) (drivers ??= new Set<Structure>()).add(from);
    }
    if (drivers) next.set(s, [...drivers]);
  }
  const loops: Structure[][] = [];
  const inLoop = new Set<Structure>();
  // Depth-first search from each structure for a path back to it; structures already in a loop are skipped.
  for (const start of structures) {
    if (inLoop.has(start) || !next.has(start)) continue;
    const path: Structure[] = [start];
    const visited = new Set<Structure>([start]);
    const found = (function walk(cur: Structure): boolean {
      for (const n of next.get(cur) ?? []) {
        if (n === start) return true;
        if (visited.has(n) || inLoop.has(n) || path.length > 16) continue;
        visited.add(n);
        path.push(n);
        if (walk(n)) return true;
        path.pop();
      }
      return false;
    })(start);
    if (!found) continue;
    for (const x of path) inLoop.add(x);
    loops.push(path);
  }
  return loops;
}
