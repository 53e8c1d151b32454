// Modified nodal analysis layout: unknown numbering, the fixed sparsity pattern, linear stamps and the nonlinear devices bound to it.

import { float64Column, int32Column, uint8Column } from '../columns';
import type { Circuit, Element, Resistor } from '../circuit';
import type { DeviceKind, DeviceTable } from '../devices/device';
import type { ParamIssue } from '../devices/params';
import { DEVICE_KINDS, deviceKindOf } from '../devices/registry';
import type { SparsePattern } from './linear';

/** What an MNA unknown stands for, so a singular pivot or an unsettled update can be named. */
export type UnknownInfo =
  | { kind: 'node'; node: number }
  | { kind: 'internal'; element: number; label: string }
  | { kind: 'branch'; element: number };

/** An independent source's right-hand-side hook. */
export interface SourceHook {
  element: number;
  kind: 'V' | 'I';
  /** V: branch row. I: rows of the plus and minus nodes (−1 for ground). */
  rows: [number, number];
  /** DC value as written (finite; unusable values were replaced by 0 and reported). */
  nominal: number;
}

/** A problem with an element the layout could not use as given. */
export interface LayoutIssue {
  element: number;
  code: 'dc-unknown-control' | 'dc-bad-node' | 'dc-value-unusable' | 'dc-negative-resistance' | 'dc-zero-resistance';
  message: string;
}

/** How a linear element's record is computed from the solution. */
export type LinearReader =
  | { kind: 'conductance'; element: number; a: number; b: number; g: number }
  | { kind: 'branch'; element: number; a: number; b: number; branch: number }
  | { kind: 'open'; element: number; a: number; b: number }
  | { kind: 'source-current'; element: number; a: number; b: number; hook: number }
  | { kind: 'vccs'; element: number; a: number; b: number; cp: number; cn: number; gain: number }
  | { kind: 'cccs'; element: number; a: number; b: number; branch: number; gain: number };

/** Where a resistor's value sits in the matrix, so a per-solve override can change it without rebuilding the pattern. */
export type ResistorStamp =
  /** A conductance stamp: pattern positions of (a,a), (b,b), (a,b), (b,a) (−1 at ground) and the netlist conductance. */
  | { kind: 'conductance'; element: number; positions: readonly [number, number, number, number]; g: number }
  /** A 0 Ω resistor solved as a branch: the branch row's diagonal (registered at 0, so the row can become V(a) − V(b) − R·I = 0). */
  | { kind: 'short'; element: number; branch: number; diagonal: number };

/** `ResistorStamps` codes of a resistor's stamp (0: none). */
const CONDUCTANCE_STAMP = 1;
const SHORT_STAMP = 2;

/**
 * Every usable resistor's stamp, in columns indexed by element: a record per resistor in a map cost
 * about a tenth of the layout at 20,000 elements, and the solver reads only a few of them (overrides,
 * temperature coefficients). `get` makes a record when asked.
 */
export class ResistorStamps {
  private readonly kind: Uint8Array;
  /** Conductance stamps: the four positions of (a,a), (b,b), (a,b), (b,a). Shorts: the branch and its diagonal. */
  private readonly positions: Int32Array;
  /** The netlist conductance of each conductance stamp. */
  private readonly g: Float64Array;

  constructor(elementCount: number) {
    this.kind = uint8Column(elementCount);
    this.positions = int32Column(4 * elementCount);
    this.g = float64Column(elementCount);
  }

  /** Element i's stamp, made now; undefined when it has none. */
  get(i: number): ResistorStamp | undefined {
    const kind = this.kind[i];
    const p = this.positions;
    if (kind === CONDUCTANCE_STAMP) return { kind: 'conductance', element: i, positions: [p[4 * i], p[4 * i + 1], p[4 * i + 2], p[4 * i + 3]], g: this.g[i] };
    if (kind === SHORT_STAMP) return { kind: 'short', element: i, branch: p[4 * i], diagonal: p[4 * i + 1] };
    return undefined;
  }

  /** Whether element i has a stamp (a conductance or a short). */
  has(i: number): boolean {
    return this.kind[i] === CONDUCTANCE_STAMP || this.kind[i] === SHORT_STAMP;
  }

  /** Element i's netlist conductance when it is stamped as one, else undefined. */
  conductance(i: number): number | undefined {
    return this.kind[i] === CONDUCTANCE_STAMP ? this.g[i] : undefined;
  }

  /**
   * Element i's netlist conductance, 0 when it has no conductance stamp: what a conductance reader's `g` holds, read
   * from a typed array. Read from the readers, which have a layout per kind, the number was a heap object made per read.
   */
  conductanceOrZero(i: number): number {
    return this.g[i];
  }

  /** The diagonal of element i's branch row when it is stamped as a short, else −1. */
  shortDiagonal(i: number): number {
    return this.kind[i] === SHORT_STAMP ? this.positions[4 * i + 1] : -1;
  }

  setConductance(i: number, aa: number, bb: number, ab: number, ba: number, g: number): void {
    this.kind[i] = CONDUCTANCE_STAMP;
    this.positions[4 * i] = aa;
    this.positions[4 * i + 1] = bb;
    this.positions[4 * i + 2] = ab;
    this.positions[4 * i + 3] = ba;
    this.g[i] = g;
  }

  setShort(i: number, branch: number, diagonal: number): void {
    this.kind[i] = SHORT_STAMP;
    this.positions[4 * i] = branch;
    this.positions[4 * i + 1] = diagonal;
  }

  /** Adds what element i's conductance stamp changes by at `g` (against its netlist conductance) to `values`. */
  addDifference(i: number, g: number, values: Float64Array): void {
    const delta = g - this.g[i];
    const p = this.positions;
    if (p[4 * i] >= 0) values[p[4 * i]] += delta;
    if (p[4 * i + 1] >= 0) values[p[4 * i + 1]] += delta;
    if (p[4 * i + 2] >= 0) values[p[4 * i + 2]] -= delta;
    if (p[4 * i + 3] >= 0) values[p[4 * i + 3]] -= delta;
  }

  /** Makes `g` element i's netlist conductance (an edit of its value). */
  adopt(i: number, g: number): void {
    this.g[i] = g;
  }

  /** Position k (0..3: (a,a), (b,b), (a,b), (b,a)) of element i's conductance stamp, −1 at ground. */
  position(i: number, k: number): number {
    return this.positions[4 * i + k];
  }
}

/** Linear element letters the layout stamps itself; nonlinear ones come from the device registry. */
const LINEAR_KINDS = new Set<string>(['R', 'C', 'L', 'V', 'I', 'E', 'G', 'F', 'H']);

/** The instances of one kind collected while the layout is built, in element order. */
interface KindBuilder {
  kind: DeviceKind;
  elements: Element[];
  elementIndex: Int32List;
  terminals: Int32List;
  positions: Int32List;
}

/**
 * A kind's builder with its lists allocated at their final size (`count` instances), so they are
 * neither grown nor copied: at 100,000 elements the doubling and final copies of the position lists
 * allocated about 20 MB, and V8 starts a full collection each time such memory has grown enough.
 */
function kindBuilder(kind: DeviceKind, count: number): KindBuilder {
  const t = kind.terminalCount;
  return { kind, elements: [], elementIndex: new Int32List(count), terminals: new Int32List(count * t), positions: new Int32List(count * t * t) };
}

/** Every nonlinear instance in element order: its element index, its table (index into `tables`) and its row in that table. */
export interface DeviceOrder {
  element: Int32Array;
  table: Int32Array;
  instance: Int32Array;
}

/** `MnaLayout.unknownKind` codes. */
export const NODE_UNKNOWN = 0;
export const INTERNAL_UNKNOWN = 1;
export const BRANCH_UNKNOWN = 2;

/** The unknowns as they are numbered: kind code and owner (node or element) per unknown, in two growing lists. */
interface Numbering {
  kind: Int32List;
  owner: Int32List;
}

/** No internal nodes (shared, so a device without any allocates nothing). */
const NO_INTERNAL: number[] = [];

/** The MNA system for one circuit: built once, reused by every solve. */
export class MnaLayout {
  readonly size: number;
  /** Per unknown: a kind code (`NODE_UNKNOWN`, …) and its owner, the node of a node unknown and the element of the others. */
  readonly unknownKind: Uint8Array;
  readonly unknownOwner: Int32Array;
  readonly pattern: SparsePattern;
  /** Matrix values of every linear element, aligned with the pattern. */
  readonly linearValues: Float64Array;
  /** Pattern position of each node unknown's diagonal (for shunt conductances during gmin stepping). */
  readonly nodeDiagonals: Int32Array;
  readonly sources: SourceHook[] = [];
  /** One table per nonlinear kind present, in registry order. */
  readonly tables: DeviceTable[] = [];
  readonly deviceOrder: DeviceOrder;
  readonly readers: LinearReader[] = [];
  readonly paramIssues: ParamIssue[] = [];
  readonly layoutIssues: LayoutIssue[] = [];
  /** Element index -> branch-current unknown, for elements that have one. */
  readonly branchOfElement = new Map<number, number>();
  /** Elements skipped because they could not be stamped (bad nodes). */
  readonly skipped = new Set<number>();
  /** Where each resistor with a usable value has its resistance stamped. */
  readonly resistorStamps: ResistorStamps;

  private readonly entries: EntryIndex;
  private readonly rowsList: Int32List;
  private readonly colsList: Int32List;
  /** Each pattern entry's linear value, grown with the pattern. */
  private linearList: Float64Array;
  /** Unknown -> the label of an internal node (`Q1 collector`). */
  private readonly internalLabels = new Map<number, string>();
  /** Whether `nodeDiagonals` holds every node's diagonal position (see `entry`). */
  private diagonalsKnown = false;
  private unknownList: UnknownInfo[] | undefined;
  /** `bindDevice`'s scratch: per terminal, the first terminal on the same unknown. */
  private firstTerminal = new Int32Array(8);

  /** The circuit whose values the stamps hold (`adoptResistances` moves it to an edited copy of the same circuit). */
  circuit: Circuit;

  constructor(circuit: Circuit) {
    this.circuit = circuit;
    // A circuit always has ground, even if the node list arrived empty.
    const nodeCount = Math.max(1, circuit.nodes.length);
    const els = circuit.elements;
    const numbering: Numbering = { kind: new Int32List(), owner: new Int32List() };
    for (let i = 1; i < nodeCount; i++) this.addUnknown(numbering, NODE_UNKNOWN, i);
    const internalOf = this.numberInternalNodes(numbering, nodeCount);
    this.numberBranches(numbering);
    this.size = numbering.kind.length;
    this.unknownKind = Uint8Array.from(numbering.kind.toArray());
    this.unknownOwner = numbering.owner.toArray();
    this.resistorStamps = new ResistorStamps(els.length);
    // Room for the usual count of pattern entries (a diagonal per node, four per element), so the index rarely grows.
    const expected = nodeCount + 4 * els.length;
    this.rowsList = new Int32List(expected);
    this.colsList = new Int32List(expected);
    this.entries = new EntryIndex(expected, this.rowsList, this.colsList);
    this.linearList = float64Column(expected);

    // Node diagonals are always in the pattern so shunts can be added without changing it.
    this.nodeDiagonals = int32Column(nodeCount - 1);
    for (let i = 0; i < nodeCount - 1; i++) this.nodeDiagonals[i] = this.entry(i, i);
    this.diagonalsKnown = true;
    const builders = this.stampElements(internalOf);
    this.pattern = { n: this.size, rows: this.rowsList.toArray(), cols: this.colsList.toArray() };
    // A view, not a copy (see `Int32List.toArray`): the list is not written after this but through `linearValues`.
    this.linearValues = this.linearList.subarray(0, this.rowsList.length);
    this.deviceOrder = this.buildTables(builders, els.length);
  }

  /** What each MNA unknown stands for, listed when first asked. */
  get unknowns(): readonly UnknownInfo[] {
    return (this.unknownList ??= this.listUnknowns());
  }

  private listUnknowns(): UnknownInfo[] {
    const out: UnknownInfo[] = new Array(this.size);
    for (let k = 0; k < this.size; k++) {
      const owner = this.unknownOwner[k];
      const kind = this.unknownKind[k];
      out[k] = kind === NODE_UNKNOWN ? { kind: 'node', node: owner } : kind === INTERNAL_UNKNOWN ? { kind: 'internal', element: owner, label: this.internalLabels.get(k) ?? '' } : { kind: 'branch', element: owner };
    }
    return out;
  }

  private addUnknown(numbering: Numbering, kind: number, owner: number): number {
    numbering.kind.push(kind);
    numbering.owner.push(owner);
    return numbering.kind.length - 1;
  }

  /** Pass 1: checks every element's node indices (skipping the unusable ones) and numbers the internal nodes; element -> its internal unknowns. */
  private numberInternalNodes(numbering: Numbering, nodeCount: number): Map<number, number[]> {
    const internalOf = new Map<number, number[]>();
    const els = this.circuit.elements;
    for (let i = 0; i < els.length; i++) {
      const el = els[i];
      const kind = deviceKindOf(el.kind);
      if (!this.usable(el, i, kind, nodeCount) || !kind) continue;
      const labels = kind.internalNodes(el);
      if (labels.length === 0) continue;
      const ks: number[] = [];
      for (const label of labels) {
        const k = this.addUnknown(numbering, INTERNAL_UNKNOWN, i);
        this.internalLabels.set(k, `${el.name} ${label}`);
        ks.push(k);
      }
      internalOf.set(i, ks);
    }
    return internalOf;
  }

  /** Whether element i is of a known kind with the valid node indices it needs; if not, it is skipped with an issue. */
  private usable(el: Element, i: number, kind: DeviceKind | undefined, nodeCount: number): boolean {
    if (!kind && !LINEAR_KINDS.has(el.kind)) {
      this.skipped.add(i);
      this.layoutIssues.push({ element: i, code: 'dc-bad-node', message: `${el.name} is of a kind the solver does not know, so it is left out.` });
      return false;
    }
    const need = kind ? kind.nodeCount : el.kind === 'E' || el.kind === 'G' ? 4 : 2;
    let bad = el.nodes.length < need;
    for (let k = 0; k < need && !bad; k++) bad = !Number.isInteger(el.nodes[k]) || el.nodes[k] < 0 || el.nodes[k] >= nodeCount;
    if (!bad) return true;
    this.skipped.add(i);
    this.layoutIssues.push({
      element: i,
      code: 'dc-bad-node',
      message: `${el.name} does not have the ${need} valid node connections its kind needs, so the solver leaves it out.`,
    });
    return false;
  }

  /** The branch-current unknowns, in element order. */
  private numberBranches(numbering: Numbering): void {
    const els = this.circuit.elements;
    for (let i = 0; i < els.length; i++) {
      if (hasBranch(els[i]) && !this.skipped.has(i)) this.branchOfElement.set(i, this.addUnknown(numbering, BRANCH_UNKNOWN, i));
    }
  }

  /** Pass 2: the linear stamps, and every nonlinear instance's terminals and matrix slots, by kind. */
  private stampElements(internalOf: Map<number, number[]>): Map<DeviceKind, KindBuilder> {
    const els = this.circuit.elements;
    // Element index by lower-case name (the last element of a name written twice), built at the first
    // look-up: only current-controlled elements ask, and most circuits have none.
    let byName: Map<string, number> | undefined;
    const elementNamed = (name: string): number | undefined => {
      if (!byName) {
        const table = (byName = new Map<string, number>());
        els.forEach((el, i) => table.set(el.name.toLowerCase(), i));
      }
      return byName.get(name.toLowerCase());
    };
    const branchOf = (name: string): number => {
      const ci = elementNamed(name);
      return ci === undefined ? -1 : (this.branchOfElement.get(ci) ?? -1);
    };
    const builders = new Map<DeviceKind, KindBuilder>();
    const counts = this.countInstances();
    for (let i = 0; i < els.length; i++) {
      if (this.skipped.has(i)) continue;
      const el = els[i];
      const kind = deviceKindOf(el.kind);
      if (!kind) {
        this.stampLinear(el, i, elementNamed);
        continue;
      }
      let b = builders.get(kind);
      if (!b) builders.set(kind, (b = kindBuilder(kind, counts.get(kind)!)));
      this.bindDevice(b, el, i, kind.terminals(el, unknownOfNode, internalOf.get(i) ?? NO_INTERNAL, branchOf));
    }
    return builders;
  }

  /** The number of instances of each nonlinear kind that will be bound (the skipped elements left out). */
  private countInstances(): Map<DeviceKind, number> {
    const counts = new Map<DeviceKind, number>();
    const els = this.circuit.elements;
    for (let i = 0; i < els.length; i++) {
      const kind = deviceKindOf(els[i].kind);
      if (kind && !this.skipped.has(i)) counts.set(kind, (counts.get(kind) ?? 0) + 1);
    }
    return counts;
  }

  /** One linear element's stamps and its reader. */
  private stampLinear(el: Element, i: number, elementNamed: (name: string) => number | undefined): void {
    const a = unknownOfNode(el.nodes[0]);
    const b = unknownOfNode(el.nodes[1]);
    switch (el.kind) {
      case 'R':
        this.stampResistor(el, i, a, b);
        break;
      case 'C':
        this.readers.push({ kind: 'open', element: i, a, b });
        break;
      case 'L': {
        const k = this.branchOfElement.get(i)!;
        this.stampBranchIncidence(a, b, k);
        this.readers.push({ kind: 'branch', element: i, a, b, branch: k });
        break;
      }
      case 'V': {
        const k = this.branchOfElement.get(i)!;
        this.stampBranchIncidence(a, b, k);
        this.sources.push({ element: i, kind: 'V', rows: [k, -1], nominal: this.finiteValue(i, el.dc, 'DC value', 'V') });
        this.readers.push({ kind: 'branch', element: i, a, b, branch: k });
        break;
      }
      case 'I': {
        this.sources.push({ element: i, kind: 'I', rows: [a, b], nominal: this.finiteValue(i, el.dc, 'DC value', 'A') });
        this.readers.push({ kind: 'source-current', element: i, a, b, hook: this.sources.length - 1 });
        break;
      }
      case 'E': {
        const k = this.branchOfElement.get(i)!;
        const gain = this.finiteValue(i, el.gain, 'gain', '');
        this.stampBranchIncidence(a, b, k);
        this.add(k, unknownOfNode(el.nodes[2]), -gain);
        this.add(k, unknownOfNode(el.nodes[3]), gain);
        this.readers.push({ kind: 'branch', element: i, a, b, branch: k });
        break;
      }
      case 'G': {
        const gain = this.finiteValue(i, el.gain, 'gain', 'S');
        const cp = unknownOfNode(el.nodes[2]);
        const cn = unknownOfNode(el.nodes[3]);
        this.add(a, cp, gain);
        this.add(a, cn, -gain);
        this.add(b, cp, -gain);
        this.add(b, cn, gain);
        this.readers.push({ kind: 'vccs', element: i, a, b, cp, cn, gain });
        break;
      }
      case 'F':
      case 'H':
        this.stampCurrentControlled(el, i, a, b, elementNamed);
        break;
    }
  }

  private stampResistor(el: Resistor, i: number, a: number, b: number): void {
    const r = el.resistance;
    if (Number.isNaN(r)) {
      this.layoutIssues.push({
        element: i,
        code: 'dc-value-unusable',
        message: `The resistance of ${el.name} is not a number; the solver treats ${el.name} as an open circuit.`,
      });
      this.readers.push({ kind: 'open', element: i, a, b });
      return;
    }
    if (r === 0) {
      const k = this.branchOfElement.get(i)!;
      this.stampBranchIncidence(a, b, k);
      this.resistorStamps.setShort(i, k, this.entry(k, k));
      this.readers.push({ kind: 'branch', element: i, a, b, branch: k });
      this.layoutIssues.push({
        element: i,
        code: 'dc-zero-resistance',
        message: `${el.name} has zero resistance; the solver treats it as a short circuit and reports the current through it.`,
      });
      return;
    }
    if (r < 0) {
      this.layoutIssues.push({
        element: i,
        code: 'dc-negative-resistance',
        message: `${el.name} has a negative resistance (${r} Ω); the solver uses it as written, but no passive resistor behaves like this.`,
      });
    }
    const g = 1 / r; // an infinite resistance is an open circuit (g = 0)
    const aa = this.entry(a, a);
    const bb = this.entry(b, b);
    const ab = this.entry(a, b);
    const ba = this.entry(b, a);
    this.addAt(aa, g);
    this.addAt(bb, g);
    this.addAt(ab, -g);
    this.addAt(ba, -g);
    this.resistorStamps.setConductance(i, aa, bb, ab, ba, g);
    this.readers.push({ kind: 'conductance', element: i, a, b, g });
  }

  /** F (current-controlled current source) and H (current-controlled voltage source): the gain on the controlling branch current. */
  private stampCurrentControlled(el: Extract<Element, { kind: 'F' | 'H' }>, i: number, a: number, b: number, elementNamed: (name: string) => number | undefined): void {
    const gain = this.finiteValue(i, el.gain, 'gain', el.kind === 'H' ? 'Ω' : '');
    const ci = elementNamed(el.control);
    const ctrl = ci === undefined ? undefined : this.branchOfElement.get(ci);
    if (ctrl === undefined) {
      this.layoutIssues.push({
        element: i,
        code: 'dc-unknown-control',
        message:
          ci === undefined
            ? `${el.name} is controlled by the current of '${el.control}', which is not an element of this circuit; its gain is taken as 0.`
            : `${el.name} is controlled by the current of ${this.circuit.elements[ci].name}, whose current is not a circuit unknown (use a voltage source, inductor or controlled voltage source); its gain is taken as 0.`,
      });
    }
    if (el.kind === 'F') {
      if (ctrl !== undefined) {
        this.add(a, ctrl, gain);
        this.add(b, ctrl, -gain);
        this.readers.push({ kind: 'cccs', element: i, a, b, branch: ctrl, gain });
      } else {
        this.readers.push({ kind: 'open', element: i, a, b });
      }
      return;
    }
    const k = this.branchOfElement.get(i)!;
    this.stampBranchIncidence(a, b, k);
    if (ctrl !== undefined) this.add(k, ctrl, -gain);
    this.readers.push({ kind: 'branch', element: i, a, b, branch: k });
  }

  /** Builds one table per kind present (registry order) and the element-ordered index of every instance. */
  private buildTables(builders: Map<DeviceKind, KindBuilder>, elementCount: number): DeviceOrder {
    const tableOf = int32Column(elementCount).fill(-1);
    const rowOf = int32Column(elementCount);
    for (const kind of DEVICE_KINDS) {
      const b = builders.get(kind);
      if (!b) continue;
      const elementIndex = b.elementIndex.toArray();
      const table = kind.createTable(
        {
          count: b.elements.length,
          elements: b.elements,
          elementIndex,
          terminals: b.terminals.toArray(),
          positions: b.positions.toArray(),
        },
        this.paramIssues,
      );
      elementIndex.forEach((e, row) => {
        tableOf[e] = this.tables.length;
        rowOf[e] = row;
      });
      this.tables.push(table);
    }
    // Tables read their parameters kind by kind; report the problems in element order, as the netlist reads.
    if (this.tables.length > 1 && this.paramIssues.length > 1) {
      const indexOf = new Map<Element, number>();
      for (const b of builders.values()) b.elements.forEach((el, row) => indexOf.set(el, b.elementIndex.at(row)));
      this.paramIssues.sort((p, q) => (indexOf.get(p.element) ?? 0) - (indexOf.get(q.element) ?? 0));
    }
    const order: number[] = [];
    for (let e = 0; e < elementCount; e++) if (tableOf[e] >= 0) order.push(e);
    const element = Int32Array.from(order);
    return { element, table: element.map((e) => tableOf[e]), instance: element.map((e) => rowOf[e]) };
  }

  /** Human-readable name of unknown `k`: a node name, an internal node, or the element whose branch current it is. */
  describeUnknown(k: number): string {
    if (!(k >= 0 && k < this.size)) return `unknown ${k}`;
    const kind = this.unknownKind[k];
    if (kind === NODE_UNKNOWN) return `node ${this.circuit.nodes[this.unknownOwner[k]]}`;
    if (kind === INTERNAL_UNKNOWN) return this.internalLabels.get(k) ?? '';
    return `the current through ${this.circuit.elements[this.unknownOwner[k]].name}`;
  }

  private finiteValue(i: number, v: number, what: string, unit: string): number {
    if (Number.isFinite(v)) return v;
    const el = this.circuit.elements[i];
    this.layoutIssues.push({
      element: i,
      code: 'dc-value-unusable',
      message: `The ${what} of ${el.name} is ${String(v)}${unit ? ' ' + unit : ''}, which is not a finite number; the solver uses 0 instead.`,
    });
    return 0;
  }

  /**
   * Takes the values of `circuit`, an edited copy of this layout's circuit with the same nodes, elements, kinds
   * and models, where the resistors `changed` are the only elements whose values differ: the entries their
   * conductance stamps reach are summed again (`sumAgain`), and the pattern, every position and the order of
   * the unknowns stay. Each changed resistor must keep a finite positive resistance on both sides of the edit
   * (a move to 0 Ω, an open or a negative value changes the unknowns or the layout's findings); otherwise
   * nothing changes and the answer is false.
   */
  adoptResistances(circuit: Circuit, changed: readonly number[]): boolean {
    const usable = (r: number) => Number.isFinite(r) && r > 0;
    for (const i of changed) {
      const el = circuit.elements[i];
      const g = this.resistorStamps.conductance(i);
      if (el?.kind !== 'R' || g === undefined || !usable(el.resistance) || !usable(1 / g)) return false;
    }
    const conductances = new Map<number, number>();
    for (const i of changed) {
      const g = 1 / (circuit.elements[i] as Resistor).resistance;
      this.resistorStamps.adopt(i, g);
      conductances.set(i, g);
    }
    this.sumAgain(conductances);
    this.circuit = circuit;
    return true;
  }

  /**
   * Gives the edited resistors' readers their new conductances `changed` (element → g) and sums the node-to-node entries
   * they stamp again from zero, term by term in element order as the constructor did, so they are the very numbers a new
   * layout of the edited circuit would hold. Moving an entry by the difference of the old and new conductance rounds
   * otherwise, and a loop made singular by the edit would then keep a residue of one rounding, which the factorisation
   * cannot tell from a pivot (a cold analysis finds the loop singular). Node-to-node entries get terms from conductances
   * and voltage-controlled current sources only, each in the rows of its own two nodes.
   */
  private sumAgain(changed: Map<number, number>): void {
    const values = this.linearValues;
    const stamps = this.resistorStamps;
    const positions = new Set<number>();
    const row = uint8Column(this.size);
    for (const i of changed.keys()) {
      for (let k = 0; k < 4; k++) {
        const p = stamps.position(i, k);
        if (p < 0) continue;
        positions.add(p);
        values[p] = 0;
        row[this.rowsList.at(p)] = 1;
      }
    }
    const add = (p: number, v: number): void => {
      if (positions.has(p)) values[p] += v;
    };
    const at = (r: number, c: number): number => (r < 0 || c < 0 ? -1 : this.entries.get(r, c));
    for (const r of this.readers) {
      // Ground (−1) is never a row here.
      if (row[r.a] !== 1 && row[r.b] !== 1) continue;
      if (r.kind === 'conductance') {
        r.g = changed.get(r.element) ?? r.g;
        // With one node in a summed row, only that node's diagonal is summed (an entry between two nodes is summed only
        // when both are ends of edited resistors): the diagonal straight from `nodeDiagonals`, without a lookup, since a
        // rail's diagonal takes a term from every element on the rail.
        if (row[r.a] !== 1) values[this.nodeDiagonals[r.b]] += r.g;
        else if (row[r.b] !== 1) values[this.nodeDiagonals[r.a]] += r.g;
        else {
          add(stamps.position(r.element, 0), r.g);
          add(stamps.position(r.element, 1), r.g);
          add(stamps.position(r.element, 2), -r.g);
          add(stamps.position(r.element, 3), -r.g);
        }
      } else if (r.kind === 'vccs') {
        add(at(r.a, r.cp), r.gain);
        add(at(r.a, r.cn), -r.gain);
        add(at(r.b, r.cp), -r.gain);
        add(at(r.b, r.cn), r.gain);
      }
    }
  }

  /** Pattern position of (row, col), registering it on first use; −1 when either is ground. */
  private entry(row: number, col: number): number {
    if (row < 0 || col < 0) return -1;
    // A node's diagonal is registered first of all: its position is read, not looked up (two of a resistor's four
    // entries, and a rail's diagonal once for every element on the rail).
    if (row === col && this.diagonalsKnown && row < this.nodeDiagonals.length) return this.nodeDiagonals[row];
    let p = this.entries.get(row, col);
    if (p < 0) {
      p = this.rowsList.length;
      this.rowsList.push(row);
      this.colsList.push(col);
      this.entries.set(row, col, p);
      if (p === this.linearList.length) {
        const grown = float64Column(2 * p);
        grown.set(this.linearList);
        this.linearList = grown;
      }
    }
    return p;
  }

  private add(row: number, col: number, v: number): void {
    this.addAt(this.entry(row, col), v);
  }

  /** Adds v to the linear value at pattern position p (none at −1, ground). */
  private addAt(p: number, v: number): void {
    if (p >= 0) this.linearList[p] += v;
  }

  /** Branch current k leaves node a and enters node b; the branch row reads V(a) − V(b) (further terms added by the caller). */
  private stampBranchIncidence(a: number, b: number, k: number): void {
    this.add(a, k, 1);
    this.add(b, k, -1);
    this.add(k, a, 1);
    this.add(k, b, -1);
  }

  /** Adds one nonlinear instance: its terminals, and the pattern slot of every terminal pair (registered now, in element order). */
  private bindDevice(b: KindBuilder, el: Element, i: number, terminals: number[]): void {
    const nt = b.kind.terminalCount;
    b.elements.push(el);
    b.elementIndex.push(i);
    for (let r = 0; r < nt; r++) b.terminals.push(terminals[r]);
    // Terminals often share an unknown (an intrinsic node without its series resistance is the netlist
    // node): such a pair's slot is the one already found for the first terminal on that unknown.
    if (this.firstTerminal.length < nt) this.firstTerminal = new Int32Array(nt);
    const first = this.firstTerminal;
    for (let r = 0; r < nt; r++) first[r] = terminals.indexOf(terminals[r]);
    const base = b.positions.length;
    for (let r = 0; r < nt; r++) {
      for (let c = 0; c < nt; c++) {
        const known = first[r] < r || first[c] < c;
        b.positions.push(known ? b.positions.at(base + first[r] * nt + first[c]) : this.entry(terminals[r], terminals[c]));
      }
    }
  }
}

/**
 * (row, col) → pattern position, by open addressing over a typed array. A Map keyed by row·n + col
 * held a boxed number for every key past 2³⁰ (n above 32,768 unknowns) and cost about half of the
 * layout's time at 100,000 elements. A slot holds only the position: the row and column of a position
 * are the layout's own pattern lists (`rows`, `cols`), so the index does not keep them a second time
 * (two arrays of a million slots at 100,000 elements, which counted towards V8's next full collection).
 */
class EntryIndex {
  /** Position + 1 at each slot, 0 for an empty slot. */
  private slots: Int32Array;
  private count = 0;

  /** An index with room for `expected` entries before it grows (at most half its slots in use), over the pattern lists `rows` and `cols`. */
  constructor(
    expected: number,
    private readonly rows: Int32List,
    private readonly cols: Int32List,
  ) {
    let size = 1024;
    while (size < 2 * expected) size *= 2;
    this.slots = int32Column(size);
  }

  /** The position of (row, col), −1 when it has none. */
  get(row: number, col: number): number {
    const mask = this.slots.length - 1;
    for (let h = slotHash(row, col) & mask; ; h = (h + 1) & mask) {
      const p = this.slots[h];
      if (p === 0) return -1;
      if (this.rows.at(p - 1) === row && this.cols.at(p - 1) === col) return p - 1;
    }
  }

  /** Records the position of a (row, col) that has none yet; the pattern lists hold (row, col) at `position` already. */
  set(row: number, col: number, position: number): void {
    if (2 * (this.count + 1) > this.slots.length) this.grow();
    this.place(row, col, position + 1);
    this.count++;
  }

  private place(row: number, col: number, stored: number): void {
    const mask = this.slots.length - 1;
    let h = slotHash(row, col) & mask;
    while (this.slots[h] !== 0) h = (h + 1) & mask;
    this.slots[h] = stored;
  }

  private grow(): void {
    const { slots } = this;
    this.slots = int32Column(2 * slots.length);
    for (let h = 0; h < slots.length; h++) if (slots[h] !== 0) this.place(this.rows.at(slots[h] - 1), this.cols.at(slots[h] - 1), slots[h]);
  }
}

/** A well-mixed 32-bit hash of a pair of non-negative integers (multiplicative mixing, then a xor-shift). */
function slotHash(row: number, col: number): number {
  const h = Math.imul(row, 0x9e3779b1) ^ Math.imul(col + 0x7f4a7c15, 0x85ebca77);
  return (h ^ (h >>> 15)) >>> 0;
}

/** A list of 32-bit integers that grows by doubling: the layout's per-entry and per-terminal lists reach millions of entries. */
class Int32List {
  private data: Int32Array;
  length = 0;

  constructor(capacity = 1024) {
    this.data = int32Column(Math.max(1, capacity));
  }

  push(v: number): void {
    if (this.length === this.data.length) {
      const grown = int32Column(2 * this.length);
      grown.set(this.data);
      this.data = grown;
    }
    this.data[this.length++] = v;
  }

  at(k: number): number {
    return this.data[k];
  }

  /**
   * The entries, exactly `length` long: the list's own buffer when it is full, else a view of its first `length`
   * entries (the list is not pushed to after). A copy allocated the pattern's lists a second time (about 1.6 MB at
   * 100,000 elements), and typed-array memory, garbage or not, brings V8's next full collection nearer.
   */
  toArray(): Int32Array {
    return this.length === this.data.length ? this.data : this.data.subarray(0, this.length);
  }
}

/** The unknown of a netlist node (ground, node 0, has none: −1). */
function unknownOfNode(node: number): number {
  return node - 1;
}

/** Whether an element has a branch-current unknown. */
function hasBranch(el: Element): boolean {
  return el.kind === 'V' || el.kind === 'L' || el.kind === 'E' || el.kind === 'H' || (el.kind === 'R' && el.resistance === 0) || (el.kind === 'B' && el.output === 'V');
}
