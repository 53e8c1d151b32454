// The recognition context every kind's recogniser matches against: unclaimed transistors by node, in name order, and shared topology patterns.

import type { Circuit, Resistor } from '../circuit';
import { railsByIndex } from './rails';
import { topologyOf, type Topology, type Transistor } from './topology';
import type { Rail, StructureKind, StructureOutput, StructureRole, Technology } from './types';

/** A structure as a recogniser finds it, before the reference branch is classified. */
/**
 * A mirror's members: its reference, the reference's twins and its output devices, in that order. Filled by `push`:
 * a list spread from V8's own `map` has another layout once the recogniser is optimised, and the recogniser was
 * compiled again for it.
 */
export function mirrorMembers(reference: Transistor, twins: readonly Transistor[], outputs: readonly Transistor[]): Draft['members'] {
  const members: Draft['members'] = [{ t: reference, role: 'reference' }];
  for (const t of twins) members.push({ t, role: 'reference' });
  for (const t of outputs) members.push({ t, role: 'output' });
  return members;
}

export interface Draft {
  kind: StructureKind;
  reference: Transistor;
  /** Node where the reference current enters. */
  refNode: number;
  members: { t: Transistor; role: StructureRole }[];
  outputs: StructureOutput[];
  /** Degenerated mirror: the reference's emitter resistor. */
  refDegeneration?: { resistor: string; ohms: number };
  /** Resistors, diodes and sources of the structure beyond its feed, with what each does (left out of the feed). */
  parts?: Record<string, string>;
  /** Kind-specific numbers read from the topology and models (e.g. a ΔVBE cell's area ratio). */
  params?: Record<string, number>;
  /** Voltages the structure produces (their values are filled by the analysis). */
  voltages?: { name: string; description: string; node: string; from?: string }[];
}

/** What `Matcher.diodeOutputs` finds on a diode-connected reference. */
export interface DiodeOutputs {
  readonly twins: Transistor[];
  readonly outputs: StructureOutput[];
  readonly devices: Transistor[];
}

/**
 * The transistors of one circuit as recognisers see them: indexed by control and common node,
 * in natural name order, with the devices earlier (more specific) kinds have claimed left out.
 * Terminal names are the bipolar ones; for MOSFETs read drain for collector, gate for base and
 * source for emitter.
 */
export class Matcher {
  readonly topo: Topology;
  readonly rails: Map<number, Rail>;
  /** 1 at a transistor's `nameIndex` once a draft holds a device of that name. */
  private readonly claimed: Uint8Array;
  /** Position of each transistor (by `index`) in natural name order. */
  private readonly rank: Int32Array;
  /** Every transistor, in natural name order. */
  readonly ordered: Transistor[];
  /** The diode-connected transistors (output on the control node) and the others, each in natural name order. */
  private readonly diodeConnected: Transistor[];
  private readonly notDiodeConnected: Transistor[];

  constructor(readonly circuit: Circuit) {
    this.topo = topologyOf(circuit);
    this.rails = railsByIndex(circuit);
    this.ordered = inNameOrder(this.topo.transistors);
    this.claimed = new Uint8Array(this.topo.transistors.length);
    this.rank = new Int32Array(this.topo.transistors.length);
    this.ordered.forEach((t, i) => (this.rank[t.index] = i));
    this.diodeConnected = this.ordered.filter((t) => t.out === t.ctrl);
    this.notDiodeConnected = this.ordered.filter((t) => t.out !== t.ctrl);
  }

  /** The transistors a kind's recogniser is tried on, in natural name order (claimed ones included). */
  seeds(kind: 'diode-connected' | 'not-diode-connected'): readonly Transistor[] {
    return kind === 'diode-connected' ? this.diodeConnected : this.notDiodeConnected;
  }

  /** Marks a draft's devices as taken, so later (less specific) kinds do not match them again. */
  claim(d: Draft): void {
    for (const m of d.members) this.claimed[m.t.nameIndex] = 1;
  }

  isClaimed(t: Transistor): boolean {
    return this.claimed[t.nameIndex] === 1;
  }

  private byRank = (a: Transistor, b: Transistor): number => this.rank[a.index] - this.rank[b.index];

  /** Unclaimed transistors of one technology drawn from `pool` (an index list) that satisfy `pred`, in name order. */
  candidates(tech: Technology, pred: (t: Transistor) => boolean, exclude: readonly Transistor[], pool: Transistor[] | undefined): Transistor[] {
    const out: Transistor[] = [];
    if (!pool) return out;
    for (let k = 0; k < pool.length; k++) {
      const t = pool[k];
      if (!this.isClaimed(t) && t.tech === tech && !exclude.includes(t) && pred(t)) out.push(t);
    }
    return out.length > 1 ? out.sort(this.byRank) : out;
  }


  /**
   * Whether some unclaimed transistor of `d`'s technology besides `d` has its control terminal on `d`'s control node A,
   * its output off A and its common terminal off `d`'s: the devices a degenerated (Widlar-type) output is drawn from.
   * Asked before any list is made, so a kind that needs such an output turns down a seed without one at the cost of a
   * short loop (most seeds of a large circuit are turned down by every kind but one).
   */
  hasOffsetOutput(d: Transistor): boolean {
    const pool = this.onCtrl(d.ctrl);
    if (!pool) return false;
    for (let k = 0; k < pool.length; k++) {
      const t = pool[k];
      if (t !== d && t.tech === d.tech && t.out !== d.ctrl && t.common !== d.common && !this.isClaimed(t)) return true;
    }
    return false;
  }

  /** Transistors whose control terminal is on `node` (claimed ones included). */
  onCtrl(node: number): Transistor[] | undefined {
    return this.topo.byCtrl.get(node);
  }

  /** Transistors whose common terminal is on `node` (claimed ones included). */
  onCommon(node: number): Transistor[] | undefined {
    return this.topo.byCommon.get(node);
  }

  nodeName(n: number): string {
    return this.topo.nodeName(n);
  }

  /** The resistor from `o`'s emitter to node `e`, when the emitter node carries only that resistor and `o`. */
  degeneration(o: Transistor, e: number): Resistor | undefined {
    const sole = this.topo.soleOther(o.common, (el) => el === o.element);
    if (!sole) return undefined;
    const el = sole.element;
    if (el.kind !== 'R') return undefined;
    const other = el.nodes[0] === o.common ? el.nodes[1] : el.nodes[0];
    return other === e && Number.isFinite(el.resistance) && el.resistance > 0 ? el : undefined;
  }

  /**
   * The outputs on a diode-connected reference D (collector = base = A, emitter on E): paralleled
   * diode-connected twins on A with emitters on E, then every other device with its base on A whose
   * emitter is on E (plain output, ratioed by geometry) or reaches E through exactly one resistor
   * R2 and nothing else (degenerated, Widlar-type).
   */
  diodeOutputs(d: Transistor): DiodeOutputs {
    const a = d.ctrl;
    const e = d.common;
    // One pass over the devices on A sorts them into twins (output on A, emitter on E) and output candidates (output
    // elsewhere), each in name order: the lists `candidates` would give for the two, without a closure or list apiece.
    const twins: Transistor[] = [];
    const others: Transistor[] = [];
    const pool = this.onCtrl(a) ?? [];
    for (let k = 0; k < pool.length; k++) {
      const t = pool[k];
      if (t === d || t.tech !== d.tech || this.isClaimed(t)) continue;
      if (t.out !== a) others.push(t);
      else if (t.common === e) twins.push(t);
    }
    if (twins.length > 1) twins.sort(this.byRank);
    if (others.length > 1) others.sort(this.byRank);
    const refScale = d.scale + twins.reduce((s, t) => s + t.scale, 0);
    const outputs: StructureOutput[] = [];
    const devices: Transistor[] = [];
    for (const o of others) {
      if (o.common === e) {
        outputs.push({ device: o.name, node: this.nodeName(o.out), ratio: o.scale / refScale });
        devices.push(o);
        continue;
      }
      const r2 = this.degeneration(o, e);
      if (r2) {
        outputs.push({ device: o.name, node: this.nodeName(o.out), ratio: o.scale / refScale, degeneration: { resistor: r2.name, ohms: r2.resistance } });
        devices.push(o);
      }
    }
    return { twins, outputs, devices };
  }

  /**
   * The lower pairs stacked mirrors are built on: D diode-connected (collector = base = B, emitter
   * on the rail) and each partner N (base on B, emitter on D's emitter, collector on its own node C).
   */
  lowerPartners(d: Transistor): readonly Transistor[] {
    const b = d.ctrl;
    return this.candidates(d.tech, (t) => t.ctrl === b && t.common === d.common && t.out !== b && t.out !== t.ctrl, [d], this.onCtrl(b));
  }
}

// One collator for every comparison: building the locale data per call dominated recognition time.
const NAME_ORDER = new Intl.Collator('en', { numeric: true, sensitivity: 'base' });

/** Natural order of device names (Q2 before Q10), case-insensitive. */
export function compareNames(a: string, b: string): number {
  return NAME_ORDER.compare(a, b);
}

/** A name of ASCII letters and digits only, short enough that no digit run reaches the collator's own limits. */
const PLAIN_NAME = /^[A-Za-z0-9]{1,64}$/;

/**
 * The transistors sorted by `compareNames`. Two plain names (`PLAIN_NAME`: most device names of a large netlist) are
 * compared by `comparePlainNames`, which gives the collator's answer for them at a fraction of its cost; any other
 * pair goes to the collator. The sort is stable, so names the collator holds equal keep their order either way.
 */
function inNameOrder(transistors: readonly Transistor[]): Transistor[] {
  // By `index`, a transistor's position in its topology's list.
  const plain = new Uint8Array(transistors.length);
  for (let i = 0; i < transistors.length; i++) plain[transistors[i].index] = PLAIN_NAME.test(transistors[i].name) ? 1 : 0;
  return transistors.slice().sort((a, b) => (plain[a.index] & plain[b.index] ? comparePlainNames(a.name, b.name) : compareNames(a.name, b.name)));
}

function isDigit(c: number): boolean {
  return c >= 48 && c <= 57;
}

/**
 * The collator's order (`compareNames`) for two names of ASCII letters and digits: letters case-insensitively in
 * alphabetical order, digits before letters, a run of digits by its numeric value (leading zeros ignored, so Q01 and
 * Q1 are equal), and a name before any longer name it begins. `test/unit/structures/name-order.test.ts` compares it
 * with the collator.
 */
export function comparePlainNames(a: string, b: string): number {
  let i = 0;
  let j = 0;
  while (i < a.length && j < b.length) {
    const ca = a.charCodeAt(i);
    const cb = b.charCodeAt(j);
    const da = isDigit(ca);
    const db = isDigit(cb);
    if (da && db) {
      let si = i;
      while (si < a.length && a.charCodeAt(si) === 48) si++;
      let sj = j;
      while (sj < b.length && b.charCodeAt(sj) === 48) sj++;
      let ei = si;
      while (ei < a.length && isDigit(a.charCodeAt(ei))) ei++;
      let ej = sj;
      while (ej < b.length && isDigit(b.charCodeAt(ej))) ej++;
      // Without leading zeros, the longer run is the larger number; runs of one length compare digit by digit.
      if (ei - si !== ej - sj) return ei - si < ej - sj ? -1 : 1;
      for (let k = 0; k < ei - si; k++) {
        const x = a.charCodeAt(si + k);
        const y = b.charCodeAt(sj + k);
        if (x !== y) return x < y ? -1 : 1;
      }
      i = ei;
      j = ej;
      continue;
    }
    if (da !== db) return da ? -1 : 1;
    // ASCII letters: setting bit 5 gives the lower-case letter.
    const la = ca | 32;
    const lb = cb | 32;
    if (la !== lb) return la < lb ? -1 : 1;
    i++;
    j++;
  }
  if (i < a.length) return 1;
  if (j < b.length) return -1;
  return 0;
}
