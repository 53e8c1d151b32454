// Recognises bias structures from a circuit's topology and models alone, by trying each kind of the catalogue in order.

import type { Circuit, Resistor } from '../circuit';
import { KINDS } from './catalogue';
import { Matcher, type Draft } from './match';
import type { ReferenceBranch, Structure, StructureKind, StructureOutput, StructureRole } from './types';
import { isOnlyRatio } from './matching';
import { nameTable, own } from '../names';
import { mapList, trimmed } from '../arrays';
import type { Attachment, Transistor } from './topology';
import { keepFeed, RecognisedStructure } from './recognised';

/**
 * Finds every bias structure in a flattened circuit, once per subcircuit instance.
 *
 * Reads topology and model kinds only, never an operating point, so structures are
 * found even when the circuit does not solve. Each structure comes back with id, kind,
 * technology, devices, roles, reference branch and outputs (with their intended
 * geometric ratio); the analysis records (headroom, compliance, output resistance,
 * corners) are empty until `analyseStructures` fills them.
 *
 * The kinds of `catalogue.ts` are tried in their registry order, most specific first; each
 * kind's recogniser runs on every unclaimed transistor of its seed type in natural name
 * order, and a match claims its devices, so a Wilson mirror is not also reported as the
 * simple mirror inside it, and only on transistors of the technologies the kind lists. All
 * devices of one structure share a technology (NPN, PNP, NMOS, PMOS, N- or P-channel JFET). Look-alikes that are not mirrors (two devices sharing a base with no
 * diode-connected one, a differential pair, a lone diode-connected device) match no kind.
 */
export function recogniseStructures(circuit: Circuit): Structure[] {
  const m = new Matcher(circuit);
  const drafts: Draft[] = [];
  for (const kind of KINDS) {
    // Indexed: cold code allocates a result object per step of a for-of, and this loop takes every kind over every seed.
    const seeds = m.seeds(kind.seeds);
    for (let k = 0; k < seeds.length; k++) {
      const t = seeds[k];
      if (m.isClaimed(t) || !kind.technologies.includes(t.tech)) continue;
      const d = kind.recognise(m, t);
      if (!d) continue;
      m.claim(d);
      drafts.push(d);
    }
  }
  const structures = drafts.map((d) => toStructure(m, d));
  const owner = new OutputOwners(structures);
  structures.forEach((s, i) => (s.reference = referenceBranch(m, drafts[i], s, owner)));
  return structures;
}

/**
 * The structure each output device belongs to (the last one listing it), for a reference fed by another structure's
 * output. Indexed at the first question: in most circuits every reference is fed by resistors or sources, and the
 * index of every output name was made for nothing.
 */
class OutputOwners {
  private index: Map<string, Structure> | undefined;

  constructor(private readonly structures: readonly Structure[]) {}

  get(device: string): Structure | undefined {
    if (!this.index) {
      const index = new Map<string, Structure>();
      for (const s of this.structures) for (const o of s.outputs) index.set(o.device, s);
      this.index = index;
    }
    return this.index.get(device);
  }
}

function toStructure(m: Matcher, d: Draft): Structure {
  const devices = mapList(d.members, (x) => x.t.name);
  const roles: Record<string, StructureRole> = nameTable();
  for (const x of d.members) roles[x.t.name] = x.role;
  // Made with every member it starts with at once (a member added later goes to a second object; see `fedFrom`).
  const reference: ReferenceBranch = d.refDegeneration
    ? { device: d.reference.name, node: m.nodeName(d.refNode), feed: 'other', elements: NO_ELEMENTS, degeneration: d.refDegeneration }
    : { device: d.reference.name, node: m.nodeName(d.refNode), feed: 'other', elements: NO_ELEMENTS };
  // Every field is made at once (`RecognisedStructure`): a structure keeps one layout (V8's map) from recognition to the
  // report, where fields added one by one as the checks ran gave each structure a new layout at each step, and the code
  // that read structures was given up and compiled again for the next. The transistors go with it (not into its JSON):
  // the stages that read the structure then need no look-up of its devices.
  const s = new RecognisedStructure(memberTransistors(d), d.refNode, {
    id: idPrefix(d.kind) + d.reference.name,
    kind: d.kind,
    technology: d.reference.tech,
    devices,
    roles,
    reference,
    outputs: mapList(d.outputs, (o) => withIsRatio(m, d, o)),
    parts: d.parts,
    params: d.params,
    voltages: d.voltages?.map((v) => ({ ...v })),
    instance: instancePrefix(devices),
    // Empty until the checks give the structure its own tables (they replace these, never write into them).
    headroom: NO_FIGURES,
    compliance: NO_FIGURES as unknown as Structure['compliance'],
    outputResistance: NO_FIGURES,
  });
  return s as unknown as Structure;
}

/**
 * `${kind}:`, one string per kind for every structure of it: an id written as `${kind}:${name}` joined the kind and the
 * colon again for each structure, a joined string more kept with every id.
 */
function idPrefix(kind: StructureKind): string {
  let prefix = ID_PREFIXES.get(kind);
  if (prefix === undefined) ID_PREFIXES.set(kind, (prefix = `${kind}:`));
  return prefix;
}
const ID_PREFIXES = new Map<StructureKind, string>();

/** A table of no figures, shared by every structure recognition makes until its checks replace it. */
const NO_FIGURES: Record<string, number> = Object.freeze(nameTable<number>());

/** The feed elements of a reference branch fed by nothing recognised (a feed that is found gets a list of its own). */
const NO_ELEMENTS: string[] = Object.freeze([]) as unknown as string[];

/** The draft's member transistors in member order, in a list of their length. */
function memberTransistors(d: Draft): Transistor[] {
  const out = new Array<Transistor>(d.members.length);
  for (let k = 0; k < d.members.length; k++) out[k] = d.members[k].t;
  return out;
}

/**
 * A bipolar output whose model differs from the reference device's only in IS is ratioed by that
 * IS, as an emitter-area ratio would ratio it: the ratio is folded into the output's intended
 * ratio (and kept as `isRatio`), so every kind's formula carries it.
 */
function withIsRatio(m: Matcher, d: Draft, o: StructureOutput): StructureOutput {
  const t = m.topo.transistorNamed(o.device, memberNamed(d, o.device));
  if (!t || t.element.kind !== 'Q' || d.reference.element.kind !== 'Q' || t === d.reference) return o;
  const r = isOnlyRatio(t.element.model, d.reference.element.model);
  return r === undefined ? o : { ...o, ratio: o.ratio * r, isRatio: r };
}

/** The draft's member transistor of this name (the outputs are members), for `Topology.transistorNamed`. */
function memberNamed(d: Draft, name: string): Transistor | undefined {
  for (let k = 0; k < d.members.length; k++) if (d.members[k].t.name === name) return d.members[k].t;
  return undefined;
}

/**
 * Classifies what drives the reference node: a chain of series resistors from a rail, a
 * current source, another structure's output, or something else. Control terminals of
 * devices outside the structure (base-current loads) and capacitors do not count as feeds.
 */
function referenceBranch(m: Matcher, d: Draft, s: Structure, owner: OutputOwners): ReferenceBranch {
  // `toStructure` made the reference afresh, fed by 'other' with no elements: the answer when nothing better is found,
  // and otherwise filled in place (its feed and elements keep their place among its fields), or made again with the rail
  // or feeding structure after them (`fedFrom`).
  const base = s.reference;
  const feed = soleFeed(m, d.refNode, s);
  if (!feed) return base;
  const { element: el, slot } = feed;
  if (el.kind === 'I') {
    keepFeed(s, -1, [m.topo.elementOn(d.refNode, el)]);
    return fed(base, 'current-source', [el.name]);
  }
  if ((el.kind === 'Q' || el.kind === 'M' || el.kind === 'J') && slot === 0) {
    const from = owner.get(el.name);
    if (from && from !== s) return fedFrom(base, 'mirror-output', [el.name], 'fedBy', from.id);
    return base;
  }
  if (el.kind !== 'R') return base;
  // Follow a chain of series resistors until a rail (the nodes passed are remembered from the second resistor on).
  const chain: string[] = [];
  const at: number[] = [];
  let seen: Set<number> | undefined;
  let r: Resistor = el;
  let node = d.refNode;
  for (;;) {
    chain.push(r.name);
    at.push(m.topo.elementOn(node, r));
    const next = r.nodes[0] === node ? r.nodes[1] : r.nodes[0];
    const rail = m.rails.get(next);
    if (rail) {
      keepFeed(s, next, trimmed(at));
      return fedFrom(base, 'resistor', trimmed(chain), 'rail', rail);
    }
    seen ??= new Set<number>([d.refNode]);
    if (seen.has(next)) return base;
    seen.add(next);
    const onward = m.topo.conducting(next).filter((a) => a.element !== r);
    if (onward.length !== 1 || onward[0].element.kind !== 'R') return base;
    r = onward[0].element as Resistor;
    node = next;
  }
}

/**
 * `base` fed by `feed` through `elements`, with its rail (`rail`) or the structure whose output feeds it (`fedBy`): a
 * new branch, every member in the order the JSON shows them (the base's, then the rail or feeding structure), made at
 * once. Added to the base, the last member went to a second object of the branch's members (V8's store of members
 * added after an object is made): an object more per structure for the whole run.
 */
function fedFrom<K extends 'rail' | 'fedBy'>(base: ReferenceBranch, feed: ReferenceBranch['feed'], elements: string[], key: K, value: NonNullable<ReferenceBranch[K]>): ReferenceBranch {
  const { device, node, degeneration } = base;
  if (key === 'rail') {
    const rail = value as NonNullable<ReferenceBranch['rail']>;
    return degeneration === undefined ? { device, node, feed, elements, rail } : { device, node, feed, elements, degeneration, rail };
  }
  const fedBy = value as string;
  return degeneration === undefined ? { device, node, feed, elements, fedBy } : { device, node, feed, elements, degeneration, fedBy };
}

/** Sets what feeds a reference branch, in place. */
function fed(reference: ReferenceBranch, feed: ReferenceBranch['feed'], elements: string[]): ReferenceBranch {
  reference.feed = feed;
  reference.elements = elements;
  return reference;
}

/**
 * The one DC connection of the reference node that feeds it, or undefined when there are none or
 * several: the structure's devices and parts, control terminals of bipolar and JFET devices outside
 * it (base-current loads) and capacitors do not count.
 */
function soleFeed(m: Matcher, refNode: number, s: Structure): Attachment | undefined {
  let found: Attachment | undefined;
  for (const a of m.topo.conducting(refNode)) {
    const el = a.element;
    if (s.devices.includes(el.name) || own(s.parts, el.name) !== undefined) continue;
    if ((el.kind === 'Q' || el.kind === 'J') && a.slot === 1) continue;
    if (found) return undefined;
    found = a;
  }
  return found;
}

function hasDot(name: string): boolean {
  return name.indexOf('.') >= 0;
}

/** The hierarchical instance prefix (`X1.`, `X1.X2.`) shared by every device name, or '' at top level. */
export function instancePrefix(names: string[]): string {
  // Top-level devices (no dot in any name) are the common case: skip the splitting.
  if (!names.some(hasDot)) return '';
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
