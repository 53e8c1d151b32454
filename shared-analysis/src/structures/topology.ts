// A polarity-neutral view of a circuit's transistors and node connections, shared by recognition, estimation and measurement.

import { int32Column, uint8Column } from '../columns';
import { elaboratedNamesOf, isAsciiName, type Bjt, type Circuit, type ElaboratedNames, type Element, type Jfet, type Mosfet } from '../circuit';
import { isBipolar, polaritySign, technologyOfModel, TECHNOLOGIES } from './technology';
import type { Technology } from './types';
import { trimmed } from '../arrays';
import { lowerCase, upperCase } from '../names';

export { isBipolar, polaritySign };

/**
 * One transistor seen through the three terminals a mirror cares about: the output
 * terminal (collector/drain), the control terminal (base/gate) and the common terminal
 * (emitter/source). `scale` is the geometry factor that sets its share of a mirror's
 * current: area × M for a BJT or a JFET, (W/L) × M for a MOSFET.
 */
export interface Transistor {
  name: string;
  element: Bjt | Mosfet | Jfet;
  tech: Technology;
  out: number;
  ctrl: number;
  common: number;
  /** MOS bulk node; undefined for a BJT. */
  bulk?: number;
  scale: number;
  /** Position in its topology's `transistors` (-1 outside one). */
  index: number;
  /** `index` of the first transistor of this name in its topology (devices that share a name share it). */
  nameIndex: number;
}

/** The transistor view of an element, or undefined for anything else (or a device whose model kind does not fit). */
export function asTransistor(e: Element): Transistor | undefined {
  if (e.kind !== 'Q' && e.kind !== 'M' && e.kind !== 'J') return undefined;
  const tech = technologyOfModel(e.model?.kind ?? '');
  if (!tech || TECHNOLOGIES[tech].letter !== e.kind) return undefined;
  if (e.kind === 'M') {
    const wl = positive(e.w, 1) / positive(e.l, 1);
    // A subnormal length (L=1e-320) makes W/L infinite: no ratio to reason with.
    if (!Number.isFinite(wl * positive(e.m, 1))) return undefined;
    return { name: e.name, element: e, tech, out: e.nodes[0], ctrl: e.nodes[1], common: e.nodes[2], bulk: e.nodes[3], scale: wl * positive(e.m, 1), index: -1, nameIndex: -1 };
  }
  const scale = positive(e.area, 1) * positive(e.m, 1);
  // A geometry that overflows (AREA=1e300 M=1e300) gives no ratio to reason with.
  if (!Number.isFinite(scale)) return undefined;
  return { name: e.name, element: e, tech, out: e.nodes[0], ctrl: e.nodes[1], common: e.nodes[2], bulk: undefined, scale, index: -1, nameIndex: -1 };
}

function positive(v: number, fallback: number): number {
  return Number.isFinite(v) && v > 0 ? v : fallback;
}

/** A connection of an element to a node: which element and which of its node slots. */
export interface Attachment {
  element: Element;
  slot: number;
}

const cache = new WeakMap<Circuit, Topology>();

/**
 * The topology of a circuit, built once per Circuit object and reused by every later call
 * (recognition, each estimate, each corner's measurement). Circuits are not mutated after
 * elaboration, so the cache never goes stale.
 */
export function topologyOf(circuit: Circuit): Topology {
  let t = cache.get(circuit);
  if (!t) cache.set(circuit, (t = new Topology(circuit)));
  return t;
}

/**
 * Makes `next`'s topology from `previous`'s, when `previous`'s is built, for a circuit that differs from it only in
 * values that are no part of a topology (resistances, places in the text): the same nodes and, element by element,
 * the same name, kind, nodes, model kind and geometry. The incidence and the name tables are shared; the transistor
 * views are made again for `next`'s elements (a value edit's circuit: `ValueEdit`), or shared too when every
 * transistor is the same element object (a value edit that moved no offset).
 */
export function followTopology(previous: Circuit, next: Circuit): void {
  const t = cache.get(previous);
  // A view that sees through a package's lead resistance depends on that resistance's value (`seePackageLinks`): a
  // circuit with one is indexed afresh.
  if (t && !cache.has(next) && !t.seesPackageLinks) cache.set(next, new Topology(next, t));
}

/** What a topology shares with one that follows it: everything indexed by position, nothing holding an element. */
interface SharedIndex {
  rowStart: Int32Array;
  rowElement: Int32Array;
  rowSlot: Uint8Array;
  nodeIndex: NodeIndex;
  elementIndex: ElementIndex;
  /** Per transistor, its element's index in `circuit.elements`. */
  transistorElement: Int32Array;
  /** Per element, its transistor's index in `transistors`, or -1; made only when every element has its own name. */
  elementTransistor: Int32Array | undefined;
}

/** Transistor name -> the transistor (the last of that name), read as a `Map` is. */
export interface TransistorNames extends Iterable<[string, Transistor]> {
  get(name: string): Transistor | undefined;
  has(name: string): boolean;
}

/**
 * The transistors by name of a circuit whose every element has its own name, read through the element index: no
 * table of its own (a map of 50,000 names at 100,000 elements), and no look-up while the views are made.
 */
class UniqueTransistorNames implements TransistorNames {
  constructor(
    private readonly transistors: readonly Transistor[],
    private readonly elementIndex: ReadonlyMap<string, number>,
    private readonly elementTransistor: Int32Array,
  ) {}

  get(name: string): Transistor | undefined {
    const k = this.elementIndex.get(name);
    if (k === undefined) return undefined;
    const i = this.elementTransistor[k]!;
    return i < 0 ? undefined : this.transistors[i];
  }

  has(name: string): boolean {
    return this.get(name) !== undefined;
  }

  /** In the order a map filled from the transistors in order lists them (each name once: the names are unique). */
  *[Symbol.iterator](): Iterator<[string, Transistor]> {
    for (const t of this.transistors) yield [t.name, t];
  }
}

/**
 * The largest series resistance read as a package's lead or bond resistance (`Topology.seePackageLinks`): a few ohms is
 * what such links are; a resistor above it is a circuit element (an emitter resistor sets a current).
 */
const PACKAGE_LINK_OHMS = 10;

/** Node-to-element incidence and the transistor views of one circuit. */
export class Topology {
  readonly transistors: Transistor[];
  readonly byName: TransistorNames;
  /** The names of a circuit with elements of the same name, as a map (see `UniqueTransistorNames` otherwise). */
  private names: Map<string, Transistor> | undefined;
  /** Transistors by control (base/gate) node and by common (emitter/source) node. */
  readonly byCtrl: Map<number, Transistor[]>;
  readonly byCommon: Map<number, Transistor[]>;
  /**
   * The incidence as compressed rows: node n's connections are the (element index, slot) pairs at
   * [rowStart[n], rowStart[n + 1]), in element order and then slot order, except where a package's lead is seen
   * through (`seePackageLinks`: the transistor's terminal takes the lead's place in the far node's row); readers scan
   * a row, none relies on its order. `at` makes the list of
   * attachments of a node when it is first asked for: most nodes of a large circuit never are.
   */
  private readonly rowStart: Int32Array;
  private readonly rowElement: Int32Array;
  private readonly rowSlot: Uint8Array;
  /** `at` lists made so far, by node (a packed array of every node: written in any order, it stays an array). */
  private readonly atLists: (Attachment[] | undefined)[] = [];
  /** Connections to node numbers outside `circuit.nodes` (the elaborator makes none), as lists. */
  private readonly strayAttached = new Map<number, Attachment[]>();
  /**
   * `conducting` lists made so far of nodes with KEPT_CONDUCTING_FROM connections or more, by node (as `atLists`);
   * callers must not mutate them. A node with fewer gets a new list at every call: kept, the lists of the small nodes
   * of the 100,000-element sink array were 6 MB of small objects the analysis held to its end (copied by the young
   * collections and marked by every full one), for lists a few reads of the compressed rows make again.
   */
  private readonly conductingLists: (Attachment[] | undefined)[] = [];
  /** `conducting` lists of node numbers outside `circuit.nodes`. */
  private readonly strayConducting = new Map<number, Attachment[]>();
  /** Node name -> index in `circuit.nodes` (the last node of the name). */
  readonly nodeIndex: ReadonlyMap<string, number>;
  /** Element name -> element (the last of that name), read through `elementIndex`. */
  readonly elementByName: { get(name: string): Element | undefined; has(name: string): boolean } = {
    get: (name) => {
      const k = this.elementIndex.get(name);
      return k === undefined ? undefined : this.circuit.elements[k];
    },
    has: (name) => this.elementIndex.has(name),
  };
  /** Element name -> index in `circuit.elements` (the last element of that name, as `elementByName`), for reading a solved point by index. */
  readonly elementIndex: ReadonlyMap<string, number>;
  private readonly transistorElement: Int32Array;
  private readonly elementTransistor: Int32Array | undefined;
  /** See `nodesOwnNames`. */
  private ownNodeNames: boolean | undefined = undefined;
  /** Whether a transistor terminal sits on a package's series link, seen through or not by its value (`seePackageLinks`). */
  seesPackageLinks = false;

  /** `from`: the topology of a circuit this one differs from only in values (see `followTopology`). */
  constructor(
    readonly circuit: Circuit,
    from?: Topology,
  ) {
    const nodeCount = circuit.nodes.length;
    for (let i = 0; i < nodeCount; i++) {
      this.atLists.push(undefined);
      this.conductingLists.push(undefined);
    }
    // A topology with connections outside `circuit.nodes` keeps them in per-node lists of its own elements: built afresh.
    const followed = from !== undefined && from.strayAttached.size === 0 ? from : undefined;
    // The views hold elements: shared with `followed` when every transistor is the same element object (a value edit
    // that moved no offset shares them), made again otherwise. Nothing writes into a view or these tables once built.
    const views = followed?.viewsHold(circuit.elements) ? followed : undefined;
    this.transistors = views ? views.transistors : [];
    this.byCtrl = views ? views.byCtrl : new Map();
    this.byCommon = views ? views.byCommon : new Map();
    // Whether every element has its own name: known before the views are made (followed: the same names).
    const unique = followed ? followed.elementTransistor !== undefined : undefined;
    this.names = views ? views.names : unique === false ? new Map() : undefined;
    const shared = followed ? followed.index() : this.build();
    this.rowStart = shared.rowStart;
    this.rowElement = shared.rowElement;
    this.rowSlot = shared.rowSlot;
    // The name indices check their answers against the lists of this circuit (the same names in the same places as the
    // followed one's): they hold no list of the circuit followed.
    this.nodeIndex = followed ? shared.nodeIndex.following(circuit.nodes) : shared.nodeIndex;
    this.elementIndex = followed ? shared.elementIndex.following(circuit.elements) : shared.elementIndex;
    this.transistorElement = shared.transistorElement;
    this.elementTransistor = shared.elementTransistor;
    this.byName = views ? views.byName : this.names ?? new UniqueTransistorNames(this.transistors, this.elementIndex, shared.elementTransistor!);
    if (followed && !views) this.follow(followed);
    if (!views) {
      trimLists(this.byCtrl);
      trimLists(this.byCommon);
    }
  }

  /** Whether each transistor view holds the very element object `elements` has in its place. */
  private viewsHold(elements: readonly Element[]): boolean {
    for (let i = 0; i < this.transistors.length; i++) if (elements[this.transistorElement[i]!] !== this.transistors[i]!.element) return false;
    return true;
  }

  private index(): SharedIndex {
    const { rowStart, rowElement, rowSlot, transistorElement, elementTransistor } = this;
    return { rowStart, rowElement, rowSlot, nodeIndex: this.nodeIndex as NodeIndex, elementIndex: this.elementIndex as ElementIndex, transistorElement, elementTransistor };
  }

  /** The transistor views and the name table made again for this circuit's elements, the rest shared with `from`. */
  private follow(from: Topology): void {
    const elements = this.circuit.elements;
    for (let i = 0; i < from.transistors.length; i++) {
      const old = from.transistors[i];
      // Written out field by field (the order `asTransistor` gives): a spread of 10,000 views cost several times more.
      const element = elements[this.transistorElement[i]] as Transistor['element'];
      const t: Transistor = { name: old.name, element, tech: old.tech, out: old.out, ctrl: old.ctrl, common: old.common, bulk: old.bulk, scale: old.scale, index: old.index, nameIndex: old.nameIndex };
      this.transistors.push(t);
      this.names?.set(t.name, t);
      push(this.byCtrl, t.ctrl, t);
      push(this.byCommon, t.common, t);
    }
  }

  private build(): SharedIndex {
    // One loop per function: a function run once with several long loops is compiled again for each loop it enters
    // (on-stack replacement), and the code after a loop is met without type feedback.
    const circuit = this.circuit;
    const nodeCount = circuit.nodes.length;
    const names = elaboratedNamesOf(circuit);
    const nodeIndex = new NodeIndex(circuit.nodes, names);
    const elementIndex = new ElementIndex(circuit.elements, names);
    const rowStart = int32Column(nodeCount + 1);
    const connections = this.countConnections(rowStart);
    const elementTransistor = elementIndex.size === circuit.elements.length ? int32Column(circuit.elements.length).fill(-1) : undefined;
    // A circuit with elements of the same name keeps its transistors by name in a map of their own.
    if (!elementTransistor) this.names = new Map();
    const transistorElement = this.addTransistors(elementTransistor);
    for (let n = 0; n < nodeCount; n++) rowStart[n + 1] += rowStart[n];
    const rowElement = int32Column(connections);
    const rowSlot = uint8Column(connections);
    fillRows(circuit.elements, nodeCount, rowStart, rowElement, rowSlot);
    if (this.seePackageLinks(transistorElement, rowStart, rowElement, rowSlot)) this.indexViewsAgain();
    return { rowStart, rowElement, rowSlot, nodeIndex, elementIndex, transistorElement, elementTransistor };
  }

  /**
   * A discrete transistor's model is often shipped as a subcircuit: the die's transistor with a resistor or inductor in
   * series with its terminals (lead and bond resistance, lead inductance) on nodes of its own inside the instance. Such a
   * link hides the transistor's wiring from recognition (a wrapped reference no longer looks diode-connected, two
   * wrapped outputs share no base node). Here each link is seen through: in an instance holding exactly one transistor
   * (a package, not a circuit cell, whose emitter resistor would be a design's degeneration), where the transistor's
   * terminal node lies inside the instance and holds nothing but that terminal and one inductor or resistor of at most
   * PACKAGE_LINK_OHMS of the same instance (capacitors aside), the view takes the link's far node for that terminal,
   * and the far node's row lists the transistor's terminal in the link's place. The solve and every figure read from it
   * keep the real circuit: the views only decide which structures are there and which node voltages describe them
   * (across a lead resistance the difference is the terminal current times a few ohms). Returns whether a view changed.
   */
  private seePackageLinks(transistorElement: Int32Array, rowStart: Int32Array, rowElement: Int32Array, rowSlot: Uint8Array): boolean {
    const elements = this.circuit.elements;
    let changed = false;
    // Transistors per instance (by name prefix): only an instance with one is a package.
    let perInstance: Map<string, number> | undefined;
    for (let i = 0; i < this.transistors.length; i++) {
      const dot = this.transistors[i].name.lastIndexOf('.');
      if (dot < 0) continue;
      const prefix = this.transistors[i].name.slice(0, dot + 1);
      perInstance ??= new Map();
      perInstance.set(prefix, (perInstance.get(prefix) ?? 0) + 1);
    }
    if (!perInstance) return false;
    for (let i = 0; i < this.transistors.length; i++) {
      const t = this.transistors[i];
      const dot = t.name.lastIndexOf('.');
      if (dot < 0) continue;
      const prefix = t.name.slice(0, dot + 1);
      if (perInstance.get(prefix) !== 1) continue;
      const k = transistorElement[i];
      for (let slot = 0; slot < 3; slot++) {
        const n = t.element.nodes[slot];
        if (n === undefined || n <= 0 || !isNodeOf(n, this.circuit.nodes.length) || !this.circuit.nodes[n].startsWith(prefix)) continue;
        // The node's other attachment, capacitors aside: exactly one, a two-terminal resistor or inductor of the instance.
        let link = -1;
        let own = 0;
        let other = 0;
        for (let j = rowStart[n]; j < rowStart[n + 1]; j++) {
          const e = elements[rowElement[j]];
          if (rowElement[j] === k) own++;
          else if (e.kind !== 'C') {
            other++;
            link = rowElement[j];
          }
        }
        if (own !== 1 || other !== 1) continue;
        const l = elements[link];
        if ((l.kind !== 'R' && l.kind !== 'L') || l.nodes.length !== 2 || !l.name.startsWith(prefix)) continue;
        // A link whose reading depends on its value: the topology is not followed across value edits (`followTopology`).
        this.seesPackageLinks = true;
        if (l.kind === 'R' && !(l.resistance >= 0 && l.resistance <= PACKAGE_LINK_OHMS)) continue;
        const far = l.nodes[0] === n ? l.nodes[1] : l.nodes[0];
        if (far === n || !isNodeOf(far, this.circuit.nodes.length)) continue;
        const farSlot = l.nodes[0] === n ? 1 : 0;
        for (let j = rowStart[far]; j < rowStart[far + 1]; j++) {
          if (rowElement[j] !== link || rowSlot[j] !== farSlot) continue;
          rowElement[j] = k;
          rowSlot[j] = slot;
          break;
        }
        if (slot === 0) t.out = far;
        else if (slot === 1) t.ctrl = far;
        else t.common = far;
        changed = true;
      }
    }
    return changed;
  }

  /** The by-control and by-common lists made again after views changed their nodes (`seePackageLinks`). */
  private indexViewsAgain(): void {
    this.byCtrl.clear();
    this.byCommon.clear();
    for (const t of this.transistors) {
      push(this.byCtrl, t.ctrl, t);
      push(this.byCommon, t.common, t);
    }
  }

  /** Each node's connection count into `rowStart[n + 1]` (connections to stray node numbers listed apart); the count of the others. */
  private countConnections(rowStart: Int32Array): number {
    const elements = this.circuit.elements;
    const nodeCount = this.circuit.nodes.length;
    let connections = 0;
    for (let k = 0; k < elements.length; k++) {
      const e = elements[k];
      const slots = incidentSlots(e);
      for (let s = 0; s < slots; s++) {
        const n = e.nodes[s];
        if (isNodeOf(n, nodeCount)) {
          rowStart[n + 1]++;
          connections++;
        } else push(this.strayAttached, n, { element: e, slot: s });
      }
    }
    return connections;
  }

  /**
   * The transistor views, by control and common node (and by name into `names` when it is made); per transistor, its
   * element's index, and into `elementTransistor` (when every element has its own name) each element's transistor.
   */
  private addTransistors(elementTransistor: Int32Array | undefined): Int32Array {
    const elements = this.circuit.elements;
    const names = this.names;
    const transistorElement: number[] = [];
    for (let k = 0; k < elements.length; k++) {
      const t = asTransistor(elements[k]);
      if (!t) continue;
      t.index = this.transistors.length;
      // With every name its own, no transistor before this one has its name.
      t.nameIndex = names ? (names.get(t.name)?.nameIndex ?? t.index) : t.index;
      this.transistors.push(t);
      transistorElement.push(k);
      if (names) names.set(t.name, t);
      else elementTransistor![k] = t.index;
      push(this.byCtrl, t.ctrl, t);
      push(this.byCommon, t.common, t);
    }
    return Int32Array.from(transistorElement);
  }

  /**
   * The transistor view of element `k` of the circuit: what `byName.get` of its name gives, read by index when every
   * element has its own name (no look-up in a table of every name).
   */
  transistorOfElement(k: number): Transistor | undefined {
    if (!this.elementTransistor) return this.byName.get(this.circuit.elements[k]!.name);
    const i = this.elementTransistor[k];
    return i === undefined || i < 0 ? undefined : this.transistors[i];
  }

  /**
   * What `byName.get(name)` gives, read from `known` (the transistor recognition found for the name, kept with its
   * structure: `recognisedTransistors`) when it is this topology's own view of that name and every element has its own
   * name: then it is the one transistor of the name, and no table of every name is read. Looked up otherwise.
   */
  transistorNamed(name: string, known: Transistor | undefined): Transistor | undefined {
    return this.holds(known, name) ? known : this.byName.get(name);
  }

  /** What `elementIndex.get(name)` gives, read through `known` as `transistorNamed` reads it. */
  elementNamed(name: string, known: Transistor | undefined): number | undefined {
    return this.holds(known, name) ? this.transistorElement[known.index] : this.elementIndex.get(name);
  }

  /**
   * What `elementByName.get(name)` gives, read at element index `hint` (where recognition found it: `recognisedFeed`)
   * when the element there has this name and every element has its own name. Looked up otherwise.
   */
  elementNamedAt(name: string, hint: number): Element | undefined {
    if (hint >= 0 && this.elementTransistor !== undefined) {
      const el = this.circuit.elements[hint];
      if (el !== undefined && el.name === name) return el;
    }
    return this.elementByName.get(name);
  }

  /**
   * What `nodeIndex.get(name)` gives, read at node index `hint` (where recognition found it) when the node there has
   * this name and every node has its own name. Looked up otherwise.
   */
  nodeNamed(name: string, hint: number): number | undefined {
    if (hint >= 0 && this.circuit.nodes[hint] === name && this.nodesOwnNames()) return hint;
    return this.nodeIndex.get(name);
  }

  /** Whether every node has its own name (worked out at the first question). */
  private nodesOwnNames(): boolean {
    return (this.ownNodeNames ??= this.nodeIndex.size === this.circuit.nodes.length);
  }

  /** The index of element `el` among the connections of `node`, or -1 (a scan of that node's connections). */
  elementOn(node: number, el: Element): number {
    if (!this.isNode(node)) return -1;
    const elements = this.circuit.elements;
    for (let j = this.rowStart[node]; j < this.rowStart[node + 1]; j++) if (elements[this.rowElement[j]] === el) return this.rowElement[j];
    return -1;
  }

  /** Whether `t` is this topology's view of `name` in a circuit whose every element has its own name. */
  private holds(t: Transistor | undefined, name: string): t is Transistor {
    return t !== undefined && this.elementTransistor !== undefined && t.name === name && this.transistors[t.index] === t;
  }

  /** Whether `n` is an index into `circuit.nodes`. */
  private isNode(n: number): boolean {
    return Number.isInteger(n) && n >= 0 && n < this.circuit.nodes.length;
  }

  /** Everything connected to a node, capacitors included (callers drop what they do not want). Shared list: do not mutate. */
  at(node: number): Attachment[] {
    if (!this.isNode(node)) return this.strayAttached.get(node) ?? [];
    let list = this.atLists[node];
    if (!list) {
      list = [];
      for (let j = this.rowStart[node]; j < this.rowStart[node + 1]; j++) list.push({ element: this.circuit.elements[this.rowElement[j]], slot: this.rowSlot[j] });
      this.atLists[node] = list;
    }
    return list;
  }

  /** The DC-relevant connections of a node: capacitors (open at DC), MOS gates/bulks and the sensing inputs of E and G sources (no DC current) left out. Shared list: do not mutate. */
  conducting(node: number): Attachment[] {
    if (!this.isNode(node)) {
      let stray = this.strayConducting.get(node);
      if (!stray) this.strayConducting.set(node, (stray = this.at(node).filter((a) => conducts(a.element, a.slot))));
      return stray;
    }
    const start = this.rowStart[node];
    const end = this.rowStart[node + 1];
    if (end - start < KEPT_CONDUCTING_FROM) return this.conductingRow(start, end);
    let list = this.conductingLists[node];
    // Kept with the topology for the whole analysis: a list of its own length.
    if (!list) this.conductingLists[node] = list = trimmed(this.conductingRow(start, end));
    return list;
  }


  /** The DC-relevant connections at [start, end) of the compressed rows (a node's `at` list is made only for a caller that wants every connection). */
  private conductingRow(start: number, end: number): Attachment[] {
    const list: Attachment[] = [];
    for (let j = start; j < end; j++) {
      const element = this.circuit.elements[this.rowElement[j]];
      const slot = this.rowSlot[j];
      if (conducts(element, slot)) list.push({ element, slot });
    }
    return list;
  }

  /**
   * The one DC-relevant connection of `node` besides the elements in `except`, or undefined when
   * there are none or several. Stops at the second one, so asking about a rail with thousands of
   * connections costs no more than asking about a two-element node. The attachment is made for the caller.
   */
  soleOther(node: number, except: (e: Element) => boolean): Attachment | undefined {
    if (!this.isNode(node)) {
      let found: Attachment | undefined;
      for (const a of this.conducting(node)) {
        if (except(a.element)) continue;
        if (found) return undefined;
        found = a;
      }
      return found;
    }
    // Straight from the compressed rows, as `conducting` lists them: asking about a rail must not make the list of its
    // every connection (the ground of a 20,000-element array has 10,000), which nothing else may want.
    const elements = this.circuit.elements;
    let at = -1;
    for (let j = this.rowStart[node]; j < this.rowStart[node + 1]; j++) {
      const element = elements[this.rowElement[j]];
      if (!conducts(element, this.rowSlot[j]) || except(element)) continue;
      if (at >= 0) return undefined;
      at = j;
    }
    return at < 0 ? undefined : { element: elements[this.rowElement[at]], slot: this.rowSlot[at] };
  }

  nodeName(i: number): string {
    return this.circuit.nodes[i] ?? String(i);
  }
}

/**
 * Connections from which a node's `conducting` list is kept with the topology (a rail's, which may hold thousands);
 * below it the list is made again at each call, from at most this many rows.
 */
const KEPT_CONDUCTING_FROM = 16;

/** Whether `n` is an index into a list of `nodeCount` nodes. */
function isNodeOf(n: number, nodeCount: number): boolean {
  return Number.isInteger(n) && n >= 0 && n < nodeCount;
}

/**
 * Name -> index in a list, answering as a map filled from the list in order does (the last index of a name). A circuit
 * the elaborator made comes with its tables of names (`elaboratedNamesOf`), in which every name is its own: a name is
 * looked up there and the answer checked against the list, and the map of every name (about 40–70 ms for the 100,000
 * element names of a 100k-element circuit, and as many kept entries) is made only for a question those tables cannot
 * answer (a name not in them, or not in their form; a circuit made by other code). Iterating reads that map.
 */
/** `NameIndex.keyed`: no element or node has the name. */
const ABSENT = -1;
/** `NameIndex.keyed`: the elaborator's tables cannot say. */
const UNKNOWN = -2;

abstract class NameIndex implements ReadonlyMap<string, number> {
  /** Every name -> its last index, once a question needed it (shared with the indices that follow this one). */
  protected every: { map: Map<string, number> | undefined };

  constructor(every?: { map: Map<string, number> | undefined }) {
    this.every = every ?? { map: undefined };
  }

  /** The list's length. */
  protected abstract count(): number;
  /** The name at index `i`. */
  protected abstract nameAt(i: number): string;
  /** The index of `name` from the elaborator's tables, checked against the list; ABSENT when it is in no place, UNKNOWN when they cannot say. */
  protected abstract keyed(name: string): number;
  /** Whether every name of the list is its own (known without the map). */
  protected abstract distinct(): boolean;

  private all(): Map<string, number> {
    let map = this.every.map;
    if (!map) {
      map = new Map<string, number>();
      const n = this.count();
      for (let i = 0; i < n; i++) map.set(this.nameAt(i), i);
      this.every.map = map;
    }
    return map;
  }

  get(name: string): number | undefined {
    const k = this.keyed(name);
    return k >= 0 ? k : k === ABSENT ? undefined : this.all().get(name);
  }

  has(name: string): boolean {
    return this.get(name) !== undefined;
  }

  get size(): number {
    return this.distinct() ? this.count() : this.all().size;
  }

  forEach(each: (value: number, key: string, map: ReadonlyMap<string, number>) => void, thisArg?: unknown): void {
    this.all().forEach((v, k) => each.call(thisArg, v, k, this));
  }

  entries(): MapIterator<[string, number]> {
    return this.all().entries();
  }

  keys(): MapIterator<string> {
    return this.all().keys();
  }

  values(): MapIterator<number> {
    return this.all().values();
  }

  [Symbol.iterator](): MapIterator<[string, number]> {
    return this.all()[Symbol.iterator]();
  }
}

/** Node name -> index in `circuit.nodes` (see `NameIndex`); the elaborator keys nodes by their lower-case names. */
class NodeIndex extends NameIndex {
  constructor(
    private readonly nodes: readonly string[],
    private readonly names: ElaboratedNames | undefined,
    every?: { map: Map<string, number> | undefined },
  ) {
    super(every);
  }

  /** The same index over the node list of a circuit with the same names in the same places. */
  following(nodes: readonly string[]): NodeIndex {
    return new NodeIndex(nodes, this.names, this.every);
  }

  protected count(): number {
    return this.nodes.length;
  }

  protected nameAt(i: number): string {
    return this.nodes[i]!;
  }

  protected distinct(): boolean {
    return this.names?.nodeKeys !== undefined;
  }

  protected keyed(name: string): number {
    const keys = this.names?.nodeKeys;
    if (!keys || !isAsciiName(name)) return UNKNOWN;
    // Node names are mostly written in lower case: such a name is its own key.
    const k = keys.get(name);
    if (k !== undefined && this.nodes[k] === name) return k;
    // An ASCII node's key is its name in lower case: a node of this name would be found there.
    const lower = lowerCase(name);
    const l = lower === name ? undefined : keys.get(lower);
    return l !== undefined && this.nodes[l] === name ? l : ABSENT;
  }
}

/** Element name -> index in `circuit.elements` (see `NameIndex`); the elaborator keys elements by `elementNameKey`. */
class ElementIndex extends NameIndex {
  constructor(
    private readonly elements: readonly Element[],
    private readonly names: ElaboratedNames | undefined,
    every?: { map: Map<string, number> | undefined },
  ) {
    super(every);
  }

  /** The same index over the elements of a circuit with the same names in the same places. */
  following(elements: readonly Element[]): ElementIndex {
    return new ElementIndex(elements, this.names, this.every);
  }

  protected count(): number {
    return this.elements.length;
  }

  protected nameAt(i: number): string {
    return this.elements[i]!.name;
  }

  protected distinct(): boolean {
    return this.names !== undefined;
  }

  protected keyed(name: string): number {
    // An ASCII name's key is its upper case (`elementNameKey`), and every element's name has its place: an element of
    // this name would be found there. Any other name is left to the map.
    if (!this.names || !isAsciiName(name)) return UNKNOWN;
    const place = this.names.elementKeys.get(upperCase(name));
    if (place === undefined) return ABSENT;
    const k = this.names.elementAt[place]!;
    return k >= 0 && this.elements[k]?.name === name ? k : ABSENT;
  }
}

/** Each connection to a node of the circuit at its place in the compressed rows, in element and then slot order. */
function fillRows(elements: readonly Element[], nodeCount: number, rowStart: Int32Array, rowElement: Int32Array, rowSlot: Uint8Array): void {
  const next = rowStart.slice(0, nodeCount);
  for (let k = 0; k < elements.length; k++) {
    const e = elements[k];
    const slots = incidentSlots(e);
    for (let s = 0; s < slots; s++) {
      const n = e.nodes[s];
      if (!isNodeOf(n, nodeCount)) continue;
      rowElement[next[n]] = k;
      rowSlot[next[n]++] = s;
    }
  }
}

/** Whether an element's connection in node slot `slot` carries DC current: capacitors (open at DC), MOS gates and bulks and the sensing inputs of E and G sources do not. */
function conducts(element: Element, slot: number): boolean {
  return element.kind !== 'C' && !(element.kind === 'M' && (slot === 1 || slot === 3)) && !((element.kind === 'E' || element.kind === 'G') && slot >= 2);
}

/** The node slots of an element that carry DC current: a BJT's optional substrate node carries none, so it is left out of the incidence. */
function incidentSlots(e: Element): number {
  return e.kind === 'Q' ? Math.min(3, e.nodes.length) : e.nodes.length;
}

/** Gives each list of `m` that grew by `push` a copy of its own length (the topology keeps them for the whole analysis). */
function trimLists<K, V>(m: Map<K, V[]>): void {
  // forEach: a for-of over a map makes an entry list per step in code not yet optimised (this runs once per topology).
  m.forEach((list, k) => {
    if (list.length > 1) m.set(k, trimmed(list));
  });
}

function push<K, V>(m: Map<K, V[]>, k: K, v: V): void {
  const list = m.get(k);
  if (list) list.push(v);
  else m.set(k, [v]);
}
