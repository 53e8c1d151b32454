// Recognises current mirrors and their reference branches from a circuit's topology and models alone.

import type { Circuit, Element, Resistor } from '../circuit';
import { railsByIndex } from './rails';
import { topologyOf, type Topology, type Transistor } from './topology';
import type { ReferenceBranch, Rail, Structure, StructureKind, StructureOutput, StructureRole } from './types';

/**
 * Finds every bias structure in a flattened circuit, once per subcircuit instance.
 *
 * Reads topology and model kinds only, never an operating point, so structures are
 * found even when the circuit does not solve. Each structure comes back with id, kind,
 * technology, devices, roles, reference branch and outputs (with their intended
 * geometric ratio); the analysis records (headroom, compliance, output resistance,
 * corners) are empty until `analyseStructures` fills them.
 *
 * Terminal names below are the bipolar ones; for MOSFETs read drain for collector,
 * gate for base and source for emitter. All devices of one structure share a
 * technology (NPN, PNP, NMOS or PMOS). "Diode-connected" means the collector node is
 * the base node.
 *
 * Larger patterns are matched first and claim their devices, so a Wilson mirror is
 * not also reported as the simple mirror inside it:
 * cascode, improved Wilson, Wilson (see {@link matchStacked}), then the base-current
 * helper mirror ({@link matchHelper}), then degenerated mirrors ({@link matchDegenerated}),
 * then simple mirrors and Widlar sources ({@link matchSimple}). Look-alikes that are not mirrors (two devices sharing a base
 * with no diode-connected one, a differential pair, a lone diode-connected device)
 * match none of the patterns.
 */
export function recogniseStructures(circuit: Circuit): Structure[] {
  const r = new Recogniser(circuit);
  return r.run();
}

interface Draft {
  kind: StructureKind;
  reference: Transistor;
  /** Node where the reference current enters. */
  refNode: number;
  members: { t: Transistor; role: StructureRole }[];
  outputs: StructureOutput[];
  /** Degenerated mirror: the reference's emitter resistor. */
  refDegeneration?: { resistor: string; ohms: number };
}

class Recogniser {
  private readonly topo: Topology;
  private readonly rails: Map<number, Rail>;
  private readonly claimed = new Set<string>();
  /** Position of each transistor in natural name order. */
  private readonly rank = new Map<Transistor, number>();

  constructor(private readonly circuit: Circuit) {
    this.topo = topologyOf(circuit);
    this.rails = railsByIndex(circuit);
  }

  run(): Structure[] {
    const all = this.ordered();
    const diodes = all.filter((t) => t.out === t.ctrl);
    const drafts: Draft[] = [];
    const take = (d: Draft | undefined) => {
      if (!d) return;
      for (const m of d.members) this.claimed.add(m.t.name);
      drafts.push(d);
    };
    for (const d of diodes) if (!this.claimed.has(d.name)) take(this.matchStacked(d));
    for (const t of all) if (!this.claimed.has(t.name) && t.out !== t.ctrl) take(this.matchHelper(t));
    for (const d of diodes) if (!this.claimed.has(d.name)) take(this.matchDegenerated(d) ?? this.matchSimple(d));

    const structures = drafts.map((d) => this.toStructure(d));
    const owner = new Map<string, Structure>();
    for (const s of structures) for (const o of s.outputs) owner.set(o.device, s);
    structures.forEach((s, i) => (s.reference = this.referenceBranch(drafts[i], s, owner)));
    return structures;
  }

  /** Transistors in natural name order; the collator runs once per circuit, later sorts compare ranks. */
  private ordered(): Transistor[] {
    const all = [...this.topo.transistors].sort((a, b) => compareNames(a.name, b.name));
    all.forEach((t, i) => this.rank.set(t, i));
    return all;
  }

  private byRank = (a: Transistor, b: Transistor): number => (this.rank.get(a) ?? 0) - (this.rank.get(b) ?? 0);

  private free(t: Transistor, tech: Transistor['tech']): boolean {
    return !this.claimed.has(t.name) && t.tech === tech;
  }

  /** Unclaimed transistors of one technology drawn from `pool` (an index list) that satisfy `pred`, in name order. */
  private candidates(tech: Transistor['tech'], pred: (t: Transistor) => boolean, exclude: Transistor[], pool: Transistor[] | undefined): Transistor[] {
    if (!pool) return [];
    const out = pool.filter((t) => this.free(t, tech) && !exclude.includes(t) && pred(t));
    return out.length > 1 ? out.sort(this.byRank) : out;
  }

  private onCtrl(node: number): Transistor[] | undefined {
    return this.topo.byCtrl.get(node);
  }

  private onCommon(node: number): Transistor[] | undefined {
    return this.topo.byCommon.get(node);
  }

  /**
   * Stacked mirrors built on a lower pair: D diode-connected (collector = base = node B,
   * emitter on the rail) and its partner N (base on B, emitter on the rail, collector on
   * node C). IREF enters node A; O is the output. Arrows are collector ← base ties.
   *
   * ```
   * Cascode mirror              Improved Wilson             Wilson
   *  IREF→A          IOUT        IREF→A         IOUT         IREF→A        IOUT
   *       │           │               │           │               │          │
   *   T: c=b=A ─ base A: O        T: c=b=A ─ base A: O        N: c=A    base A: O
   *      e=B        e=C              e=C        e=B            b=B         e=B
   *   D: c=b=B ─ base B: N        N: c=C, b=B   D: c=b=B      e=rail    D: c=b=B
   *      e=rail     c=C, e=rail      e=rail        e=rail                 e=rail
   * ```
   * Cascode: the reference side stacks two diode-connected devices (T on D); the output O
   * sits on N. Improved Wilson: O's emitter is on D's node B and the diode-connected T
   * balances N's collector voltage; both bases on A. Wilson: no T; N's collector is A and
   * drives O's base, O's emitter feeds D.
   */
  private matchStacked(d: Transistor): Draft | undefined {
    const b = d.ctrl;
    const partners = this.candidates(d.tech, (t) => t.ctrl === b && t.common === d.common && t.out !== b && t.out !== t.ctrl, [d], this.onCtrl(b));
    for (const n of partners) {
      const c = n.out;
      // Cascode: top diode T on B.
      const tops = this.candidates(d.tech, (t) => t.out === t.ctrl && t.common === b && t.ctrl !== c, [d, n], this.onCommon(b));
      for (const top of tops) {
        const a = top.ctrl;
        const outs = this.candidates(d.tech, (t) => t.ctrl === a && t.common === c && t.out !== a, [d, n, top], this.onCtrl(a));
        if (outs.length > 0) {
          const o = outs[0];
          return {
            kind: 'cascode-mirror',
            reference: top,
            refNode: a,
            members: [
              { t: top, role: 'reference' },
              { t: d, role: 'lower-diode' },
              { t: n, role: 'lower-partner' },
              { t: o, role: 'output' },
            ],
            outputs: [{ device: o.name, node: this.topo.nodeName(o.out), ratio: n.scale / d.scale }],
          };
        }
      }
      // Outputs whose emitter sits on the lower diode's node.
      const uppers = this.candidates(d.tech, (t) => t.common === b && t.out !== t.ctrl, [d, n], this.onCommon(b));
      for (const o of uppers) {
        const a = o.ctrl;
        const balancing = this.candidates(d.tech, (t) => t.out === t.ctrl && t.ctrl === a && t.common === c, [d, n, o], this.onCtrl(a));
        if (balancing.length > 0 && a !== c) {
          const t4 = balancing[0];
          return {
            kind: 'improved-wilson-mirror',
            reference: t4,
            refNode: a,
            members: [
              { t: t4, role: 'reference' },
              { t: n, role: 'lower-partner' },
              { t: d, role: 'lower-diode' },
              { t: o, role: 'output' },
            ],
            outputs: [{ device: o.name, node: this.topo.nodeName(o.out), ratio: d.scale / n.scale }],
          };
        }
        if (a === c && o.out !== c) {
          return {
            kind: 'wilson-mirror',
            reference: n,
            refNode: c,
            members: [
              { t: n, role: 'reference' },
              { t: d, role: 'lower-diode' },
              { t: o, role: 'output' },
            ],
            outputs: [{ device: o.name, node: this.topo.nodeName(o.out), ratio: d.scale / n.scale }],
          };
        }
      }
    }
    return undefined;
  }

  /**
   * Mirror with a base-current helper: the reference R is not diode-connected; its
   * collector A drives the base of a follower H whose emitter supplies the shared base
   * node B and whose collector sits on a rail.
   * ```
   *   IREF→A                       rail
   *        │                         │
   *   R: c=A, b=B, e=E      H: c=rail, b=A, e=B      O: c=out, b=B, e=E   (one or more O)
   * ```
   * Node B must carry no diode-connected device (that would be a Wilson-like stack). A MOS
   * helper also needs something on B that conducts at DC (a resistor or current source
   * pulling B towards the rail), since gates draw no current to bias the follower.
   */
  private matchHelper(r: Transistor): Draft | undefined {
    const a = r.out;
    const b = r.ctrl;
    if (a === b) return undefined;
    const helpers = this.candidates(r.tech, (t) => t.ctrl === a && t.common === b && t.out !== a && this.rails.has(t.out), [r], this.onCtrl(a));
    if (helpers.length === 0) return undefined;
    const diodeOnB = (this.onCtrl(b) ?? []).some((t) => t.tech === r.tech && t.out === b);
    if (diodeOnB) return undefined;
    const h = helpers[0];
    // MOS gates draw no DC current: without a pull-down on B the follower's bias is undefined.
    if (r.element.kind === 'M' && this.topo.conducting(b).filter((x) => x.element !== h.element).length === 0) return undefined;
    const outs = this.candidates(r.tech, (t) => t.ctrl === b && t.common === r.common && t.out !== b && t.out !== a, [r, h], this.onCtrl(b));
    if (outs.length === 0) return undefined;
    return {
      kind: 'helper-mirror',
      reference: r,
      refNode: a,
      members: [{ t: r, role: 'reference' }, { t: h, role: 'helper' }, ...outs.map((t) => ({ t, role: 'output' as const }))],
      outputs: outs.map((t) => ({ device: t.name, node: this.topo.nodeName(t.out), ratio: t.scale / r.scale })),
    };
  }

  /**
   * Simple mirror and Widlar source on a diode-connected reference D (collector = base = A,
   * emitter on E). Every other device with its base on A is an output when its emitter is
   * on E (simple, ratioed by geometry) or reaches E through exactly one resistor R2 and
   * nothing else (Widlar). The kind is `widlar-source` when every output is degenerated and
   * `simple-mirror` otherwise (the degenerated outputs of a mixed one carry `degeneration`).
   * Further diode-connected devices on A with emitters on E are paralleled reference
   * devices. No output, no structure.
   * ```
   *   IREF→A
   *   D: c=b=A, e=E        O: c=out, b=A, e=E        O (Widlar): c=out, b=A, e=X;  R2 from X to E
   * ```
   */
  private matchSimple(d: Transistor): Draft | undefined {
    const a = d.ctrl;
    const e = d.common;
    const twins = this.candidates(d.tech, (t) => t.out === a && t.ctrl === a && t.common === e, [d], this.onCtrl(a));
    const refScale = d.scale + twins.reduce((s, t) => s + t.scale, 0);
    const outputs: StructureOutput[] = [];
    const outDevices: Transistor[] = [];
    for (const o of this.candidates(d.tech, (t) => t.ctrl === a && t.out !== a, [d, ...twins], this.onCtrl(a))) {
      if (o.common === e) {
        outputs.push({ device: o.name, node: this.topo.nodeName(o.out), ratio: o.scale / refScale });
        outDevices.push(o);
        continue;
      }
      const r2 = this.degeneration(o, e);
      if (r2) {
        outputs.push({
          device: o.name,
          node: this.topo.nodeName(o.out),
          ratio: o.scale / refScale,
          degeneration: { resistor: r2.name, ohms: r2.resistance },
        });
        outDevices.push(o);
      }
    }
    if (outputs.length === 0) return undefined;
    return {
      // A reference with both plain and degenerated outputs stays a simple mirror; each Widlar output carries its `degeneration`.
      kind: outputs.every((o) => o.degeneration) ? 'widlar-source' : 'simple-mirror',
      reference: d,
      refNode: a,
      members: [
        { t: d, role: 'reference' },
        ...twins.map((t) => ({ t, role: 'reference' as const })),
        ...outDevices.map((t) => ({ t, role: 'output' as const })),
      ],
      outputs,
    };
  }

  /**
   * Degenerated mirror on a diode-connected reference D (collector = base = A) whose emitter
   * node X1 carries only D (and paralleled twins) and one resistor R1 to a common node E.
   * Every other device with its base on A whose emitter reaches E through exactly one
   * resistor R2 of its own is an output. The resistors set the ratio (about R1/R2 at large
   * drops), so the kind is its own; outputs with their emitter straight on E or on X1 do not
   * belong to it. No degenerated output, no structure (the reference is then tried as a
   * simple mirror on X1).
   * ```
   *   IREF→A
   *   D: c=b=A, e=X1;  R1 from X1 to E        O: c=out, b=A, e=X2;  R2 from X2 to E
   * ```
   */
  private matchDegenerated(d: Transistor): Draft | undefined {
    const a = d.ctrl;
    const x1 = d.common;
    if (x1 === a) return undefined;
    const twins = this.candidates(d.tech, (t) => t.out === a && t.ctrl === a && t.common === x1, [d], this.onCtrl(a));
    const own = new Set<Element>([d.element, ...twins.map((t) => t.element)]);
    const sole = this.topo.soleOther(x1, (el) => own.has(el));
    if (!sole || sole.element.kind !== 'R') return undefined;
    const r1 = sole.element;
    if (!(Number.isFinite(r1.resistance) && r1.resistance > 0)) return undefined;
    const e = r1.nodes[0] === x1 ? r1.nodes[1] : r1.nodes[0];
    if (e === x1 || e === a) return undefined;
    const refScale = d.scale + twins.reduce((sum, t) => sum + t.scale, 0);
    const outputs: StructureOutput[] = [];
    const outDevices: Transistor[] = [];
    for (const o of this.candidates(d.tech, (t) => t.ctrl === a && t.out !== a && t.common !== x1 && t.common !== e, [d, ...twins], this.onCtrl(a))) {
      const r2 = this.degeneration(o, e);
      if (!r2 || r2 === r1) continue;
      outputs.push({ device: o.name, node: this.topo.nodeName(o.out), ratio: o.scale / refScale, degeneration: { resistor: r2.name, ohms: r2.resistance } });
      outDevices.push(o);
    }
    if (outputs.length === 0) return undefined;
    return {
      kind: 'degenerated-mirror',
      reference: d,
      refNode: a,
      members: [
        { t: d, role: 'reference' },
        ...twins.map((t) => ({ t, role: 'reference' as const })),
        ...outDevices.map((t) => ({ t, role: 'output' as const })),
      ],
      outputs,
      refDegeneration: { resistor: r1.name, ohms: r1.resistance },
    };
  }

  /** The resistor from `o`'s emitter to node `e`, when the emitter node carries only that resistor and `o`. */
  private degeneration(o: Transistor, e: number): Resistor | undefined {
    const sole = this.topo.soleOther(o.common, (el) => el === o.element);
    if (!sole) return undefined;
    const el = sole.element;
    if (el.kind !== 'R') return undefined;
    const other = el.nodes[0] === o.common ? el.nodes[1] : el.nodes[0];
    return other === e && Number.isFinite(el.resistance) && el.resistance > 0 ? el : undefined;
  }

  private toStructure(d: Draft): Structure {
    const devices = d.members.map((m) => m.t.name);
    const roles: Record<string, StructureRole> = {};
    for (const m of d.members) roles[m.t.name] = m.role;
    return {
      id: `${d.kind}:${d.reference.name}`,
      kind: d.kind,
      technology: d.reference.tech,
      devices,
      roles,
      reference: { device: d.reference.name, node: this.topo.nodeName(d.refNode), feed: 'other', elements: [], ...(d.refDegeneration ? { degeneration: d.refDegeneration } : {}) },
      outputs: d.outputs,
      instance: instancePrefix(devices),
      headroom: {},
      compliance: {},
      outputResistance: {},
      corners: [],
    };
  }

  /**
   * Classifies what drives the reference node: a chain of series resistors from a rail, a
   * current source, another structure's output, or something else. Control terminals of
   * devices outside the structure (base-current loads) and capacitors do not count as feeds.
   */
  private referenceBranch(d: Draft, s: Structure, owner: Map<string, Structure>): ReferenceBranch {
    const base: ReferenceBranch = { ...s.reference, feed: 'other', elements: [] };
    const members = new Set(s.devices);
    const feeds = this.topo
      .conducting(d.refNode)
      .filter((a) => !members.has(a.element.name))
      .filter((a) => !(a.element.kind === 'Q' && a.slot === 1));
    if (feeds.length !== 1) return base;
    const { element: el, slot } = feeds[0];
    if (el.kind === 'I') return { ...base, feed: 'current-source', elements: [el.name] };
    if ((el.kind === 'Q' || el.kind === 'M') && slot === 0) {
      const from = owner.get(el.name);
      if (from && from !== s) return { ...base, feed: 'mirror-output', elements: [el.name], fedBy: from.id };
      return base;
    }
    if (el.kind !== 'R') return base;
    // Follow a chain of series resistors until a rail.
    const chain: string[] = [];
    const seen = new Set<number>([d.refNode]);
    let r: Resistor = el;
    let node = d.refNode;
    for (;;) {
      chain.push(r.name);
      const next = r.nodes[0] === node ? r.nodes[1] : r.nodes[0];
      const rail = this.rails.get(next);
      if (rail) return { ...base, feed: 'resistor', elements: chain, rail };
      if (seen.has(next)) return base;
      seen.add(next);
      const onward = this.topo.conducting(next).filter((a) => a.element !== r);
      if (onward.length !== 1 || onward[0].element.kind !== 'R') return base;
      r = onward[0].element as Resistor;
      node = next;
    }
  }
}

/** The hierarchical instance prefix (`X1.`, `X1.X2.`) shared by every device name, or '' at top level. */
export function instancePrefix(names: string[]): string {
  // Top-level devices (no dot in any name) are the common case: skip the splitting.
  if (names.every((n) => n.indexOf('.') < 0)) return '';
  let common: string[] | undefined;
  for (const n of names) {
    const parts = n.split('.').slice(0, -1);
    if (!common) common = parts;
    else {
      let i = 0;
      while (i < common.length && i < parts.length && common[i].toLowerCase() === parts[i].toLowerCase()) i++;
      common = common.slice(0, i);
    }
  }
  return common && common.length > 0 ? common.join('.') + '.' : '';
}

// One collator for every comparison: building the locale data per call dominated recognition time.
const NAME_ORDER = new Intl.Collator('en', { numeric: true, sensitivity: 'base' });

/** Natural order of device names (Q2 before Q10), case-insensitive. */
function compareNames(a: string, b: string): number {
  return NAME_ORDER.compare(a, b);
}
