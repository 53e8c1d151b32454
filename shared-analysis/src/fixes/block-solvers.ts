// Prepared solvers for sizing blocks, one per block shape: the cells of an array (blocks equal but for their names) share one.

import type { Circuit } from '../circuit';
import { nameTable } from '../names';
import { DcSolver, type DcSolveResult } from '../solve/dc';
import { entriesOf, lazyPoint, pointVectors, type EntryTable, type PointVectors } from '../solve/point';
import type { DeviceRecord, OperatingPoint, SolveOptions } from '../solve/types';

/** What a sizing solves on: a prepared solver of the block, or one shared with an equal block under its names. */
export interface BlockSolver {
  solve(options?: SolveOptions): DcSolveResult;
  /** Number of the solver's unknowns (length of a result's `x`), the same for every block of a shape. */
  readonly unknownCount: number;
}

/** A number per object (0 for none), so objects can be told apart by identity inside a string key. */
const objectIds = new WeakMap<object, number>();
let objectCount = 0;

export function objectId(o: object | undefined): number {
  if (!o) return 0;
  let id = objectIds.get(o);
  if (id === undefined) objectIds.set(o, (id = ++objectCount));
  return id;
}

/**
 * Element kinds a shared solver may stand for: their solve depends on their nodes, their model and
 * their numbers only. Kinds that name another element (a current-controlled switch or source, a
 * behavioural source's inputs) are solved on a block's own solver.
 */
const SHAREABLE_KINDS = new Set(['R', 'C', 'L', 'V', 'I', 'D', 'Q', 'M', 'J', 'S']);

/**
 * A key equal for two blocks of one circuit exactly when they differ in nothing but names and
 * text positions: the same elements in the same order, on the same renumbered nodes, with the same
 * model objects and the same value in every other field (`-0` told from `0`). Undefined when a block
 * holds an element whose fields the key cannot compare, or a name written twice (letter case ignored).
 */
export function blockShape(block: Circuit): string | undefined {
  const parts: string[] = [String(block.nodes.length)];
  const names = new Set<string>();
  for (const el of block.elements) {
    if (!SHAREABLE_KINDS.has(el.kind)) return undefined;
    const lower = el.name.toLowerCase();
    if (names.has(lower)) return undefined;
    names.add(lower);
    const fields = el as unknown as Record<string, unknown>;
    for (const key of Object.keys(fields).sort()) {
      if (key === 'name' || key === 'origin') continue;
      const v = fields[key];
      if (key === 'nodes' && Array.isArray(v)) parts.push(`nodes=${v.join(',')}`);
      else if (key === 'model' && typeof v === 'object' && v !== null) parts.push(`model=#${objectId(v)}`);
      else if (typeof v === 'number') parts.push(`${key}=${Object.is(v, -0) ? '-0' : String(v)}`);
      else if (typeof v === 'string' || typeof v === 'boolean' || v === undefined) parts.push(`${key}=${typeof v}:${String(v)}`);
      else return undefined;
    }
    parts.push('|');
  }
  return parts.join(';');
}

/** Per circuit: the first block of each shape and its prepared solver. */
const byShape = new WeakMap<Circuit, Map<string, { block: Circuit; solver: DcSolver }>>();

/**
 * A prepared solver for `block`, a block of `circuit`: the solver of the first block of the same
 * shape (`blockShape`) when there was one, answering under this block's names, else a new one. A
 * solver's layout, ordering and symbolic factorisation cost more than the few solves a target makes
 * on it, so an array's thousand targets build one per distinct cell instead of one each.
 */
export function blockSolver(circuit: Circuit, block: Circuit): BlockSolver {
  const shape = blockShape(block);
  if (shape === undefined) return new DcSolver(block);
  let shapes = byShape.get(circuit);
  if (!shapes) byShape.set(circuit, (shapes = new Map()));
  const first = shapes.get(shape);
  if (!first) {
    const solver = new DcSolver(block);
    shapes.set(shape, { block, solver });
    return solver;
  }
  return first.block === block ? first.solver : renamedSolver(first.solver, first.block, block);
}

/**
 * `solver`, prepared for `first`, answering for `block`, which differs from `first` only in its
 * names: resistance overrides are passed under `first`'s names, and each operating point comes back
 * keyed by `block`'s node and element names (its vectors are the same, indexed alike). The findings
 * of a solve are `first`'s (sizing reads only their codes). Options that name sources or models,
 * which a shared solver would read under the other block's names, go to a solver of `block` itself.
 */
function renamedSolver(solver: DcSolver, first: Circuit, block: Circuit): BlockSolver {
  const firstName = new Map<string, string>();
  const blockName = new Map<string, string>();
  block.elements.forEach((el, i) => {
    firstName.set(el.name.toLowerCase(), first.elements[i].name);
    blockName.set(first.elements[i].name, el.name);
  });
  let own: DcSolver | undefined;
  return {
    unknownCount: solver.unknownCount,
    solve: (options = {}) => {
      if (options.sourceValues !== undefined || options.deviceParameters !== undefined) return (own ??= new DcSolver(block)).solve(options);
      const asked = options.resistances;
      let resistances: Record<string, number> | undefined;
      if (asked) {
        resistances = nameTable();
        for (const name of Object.keys(asked)) resistances[firstName.get(name.toLowerCase()) ?? name] = asked[name];
      }
      const result = solver.solve(asked ? { ...options, resistances } : options);
      return { ...result, op: renamedPoint(result.op, first, block, blockName) };
    },
  };
}

/** `op`, a point of `first`, under the names of `block` (equal to `first` but for names); `blockName` maps `first`'s element names to `block`'s. */
function renamedPoint(op: OperatingPoint, first: Circuit, block: Circuit, blockName: Map<string, string>): OperatingPoint {
  const v = pointVectors(op);
  if (!v) throw new Error('a solver result without its vectors');
  const renamed = new RenamedVectors(v, block, blockName);
  const point = lazyPoint(op, renamed, () => renamed.tables());
  if (op.tiedNodes) point.tiedNodes = op.tiedNodes.map((name) => block.nodes[first.nodes.indexOf(name)] ?? name);
  return point;
}

/**
 * A shared solver's vectors read under another block's names: by index they are the same (the blocks are equal but
 * for names), so those readers pass through; the entries and tables carry `block`'s names. Methods of a class rather
 * than closures per point: sizing renames a point at every solve on a shared solver.
 */
class RenamedVectors implements PointVectors {
  readonly volts: Float64Array;

  constructor(
    private readonly v: PointVectors,
    private readonly block: Circuit,
    private readonly blockName: Map<string, string>,
  ) {
    this.volts = v.volts;
  }

  record(e: number): DeviceRecord | undefined {
    return this.v.record(e);
  }

  type(e: number): DeviceRecord['type'] | undefined {
    return this.v.type(e);
  }

  value(e: number, quantity: string): number | undefined {
    return this.v.value(e, quantity);
  }

  quantity(e: number, q: number): number | undefined {
    return this.v.quantity(e, q);
  }

  quantityOrZero(e: number, q: number): number {
    return this.v.quantityOrZero(e, q);
  }

  region(e: number): string | undefined {
    return this.v.region(e);
  }

  nodeEntries(): Iterable<[string, number]> {
    return entriesOf(this.nodeTable());
  }

  deviceEntries(): Iterable<[string, DeviceRecord]> {
    return entriesOf(this.deviceTable());
  }

  nodeTable(): EntryTable<number> {
    const { block, volts } = this;
    return { count: block.nodes.length, name: (i) => block.nodes[i], value: (i) => volts[i] };
  }

  deviceTable(): EntryTable<DeviceRecord> {
    const table = this.v.deviceTable();
    const blockName = this.blockName;
    return {
      count: table.count,
      name: (k) => {
        const name = table.name(k);
        return blockName.get(name) ?? name;
      },
      value: (k) => table.value(k),
    };
  }

  tables(): { nodes: Record<string, number>; devices: Record<string, DeviceRecord> } {
    const nodes: Record<string, number> = nameTable();
    for (const [name, volts] of this.nodeEntries()) nodes[name] = volts;
    const devices: Record<string, DeviceRecord> = nameTable();
    for (const [name, record] of this.deviceEntries()) devices[name] = record;
    return { nodes, devices };
  }
}
