// The engine's last step before an Analysis leaves it: every range lies inside its document and every
// number is finite. A producer that breaks either rule is a defect; this keeps the defect from reaching a
// host as a range past the end of a file, a `null` in JSON or "×Infinity" in a report, and says so in
// one finding instead.

import type { Finding, Span } from './types';
import { isOneOf } from './arrays';
import type { ParsedDocument } from './syntax/ast';

/** `span` inside a text of `length` characters: 0 ≤ start ≤ end ≤ length. */
export function clampSpan(span: Span, length: number): Span {
  const end = Math.min(Math.max(span.end, 0), length);
  const start = Math.min(Math.max(span.start, 0), end);
  return start === span.start && end === span.end ? span : { start, end };
}

/** Clamps the range of every finding, related location and fix edit to the document it names. */
export function clampFindingSpans(findings: Finding[], documents: Record<string, ParsedDocument>): void {
  const lengthOf = (uri: string): number | undefined => documents[uri]?.text.length;
  for (const f of findings) {
    const n = lengthOf(f.uri);
    if (n !== undefined) f.span = clampSpan(f.span, n);
    for (const r of f.related ?? []) {
      const m = lengthOf(r.uri);
      if (m !== undefined) r.span = clampSpan(r.span, m);
    }
    for (const fix of f.fixes ?? []) {
      for (const e of fix.edits) {
        const m = lengthOf(e.uri);
        if (m !== undefined) e.span = clampSpan(e.span, m);
      }
    }
  }
}

/** Most paths one `value-not-finite` finding names. */
const MAX_PATHS_NAMED = 5;

/**
 * The accessors of the engine's tables built on first read (an operating point's `nodes` and `devices`, a
 * structure's `corners`, a spread result's `sources`, an output's spread `contributors` and `sensitivities`:
 * solve/point.ts, structures/corner-columns.ts, variation/index.ts), each the one getter every holder of that
 * table shares, with the name it is defined under and, where a table can also be assigned through the same
 * accessor, whether a holder's table is still the one built from the engine's columns. The finiteness walk asks
 * for a property descriptor only under these names, and leaves such a table unread: it is finite by construction,
 * clamped where it is built, and reading it would build it for nothing. (Before, each holder was registered in a
 * WeakMap as it was made: about 75,000 entries at 100,000 elements, a tenth of a second of the run.)
 */
const lazyGetters = new Map<unknown, (holder: object) => boolean>();
const lazyNames: string[] = [];

const always = (): boolean => true;

/**
 * Registers `accessor` (defined under `name` on every holder of the table) as a table built on first read. With
 * `builtLazily`, a holder's table is left unread only while that says so (false once a value was assigned through
 * the accessor, which the walk then reads as any member); without it, always.
 */
export function registerLazyTable(name: string, accessor: PropertyDescriptor, builtLazily: (holder: object) => boolean = always): void {
  if (!accessor.get) throw new Error(`registerLazyTable: the accessor of \`${name}\` has no getter`);
  lazyGetters.set(accessor.get, builtLazily);
  if (!lazyNames.includes(name)) lazyNames.push(name);
}

/** Whether `record[key]` is a registered table still built on first read (one descriptor read, only under the registered names). */
function isLazyTable(record: object, key: string): boolean {
  if (!isOneOf(key, lazyNames)) return false;
  const get = Object.getOwnPropertyDescriptor(record, key)?.get;
  if (get === undefined) return false;
  const builtLazily = lazyGetters.get(get);
  return builtLazily !== undefined && builtLazily(record);
}

/**
 * Removes every number that is not finite from `value` (a property is deleted, an array element
 * dropped; typed arrays are left alone, they never leave as JSON, and so are the engine's tables built
 * on first read, registered with `registerLazyTable`) and
 * returns the paths removed. Linear in the size of the data (see `FiniteWalk`). A path is
 * written only for what is removed: the walk keeps the keys it is under, not their text.
 */
export function dropNonFinite(value: unknown, path: string, removed: string[], limits: WalkLimits = WALK_LIMITS): void {
  walkPart(newWalk(removed, limits), value, path);
}

/**
 * One walk over one or more parts. An object reached by a second path is walked again, which finds nothing: every
 * number the first walk of it met was removed then and named under that first path, and the walk writes nothing
 * else (the engine's records hold data; the only accessors among them are the registered tables, which the walk
 * does not read). What it must not do is enter an object it is inside of (a cycle): those are `open`, the objects being
 * walked, a handful deep. Remembering every container walked instead (a set of them, 250,000 at 100,000 elements)
 * cost about a third of the walk, far more than walking the few shared ones again (the file's spread outputs, which
 * the structures hold too). So that data shared very often (or nested very deep) cannot make the walk long, it
 * counts the members it reads, and past `limits.members` of them (or `limits.depth` objects deep) it remembers
 * every object it enters from then on and enters none twice: what it removes and names is the same either way.
 */
interface FiniteWalk {
  /** The paths of what was removed, in the order met. */
  readonly removed: string[];
  /** The keys the object being walked is under, from its part's root. */
  readonly keys: (string | number)[];
  /** The objects being walked, outermost first. */
  readonly open: object[];
  /** Members read so far (each object counts one more). */
  members: number;
  /** Once set: every object entered since it was made, and those open then. */
  seen: Set<object> | undefined;
  readonly limits: WalkLimits;
}

/** When a walk starts to remember the objects it enters (tests give small ones). */
export interface WalkLimits {
  /** Members read (each object counts one more). */
  readonly members: number;
  /** Objects open at once. */
  readonly depth: number;
}

/** About twice the members a 1,000,000-element analysis holds; an analysis nests fewer than ten objects deep. */
const WALK_LIMITS: WalkLimits = { members: 1 << 26, depth: 64 };

function newWalk(removed: string[], limits: WalkLimits = WALK_LIMITS): FiniteWalk {
  return { removed, keys: [], open: [], members: 0, seen: undefined, limits };
}

/** Walks `value`, a part named `root`. */
function walkPart(w: FiniteWalk, value: unknown, root: string): void {
  if (value !== null && typeof value === 'object' && enters(w, value)) walkFinite(w, value, root);
}

/** Whether the walk enters `o` now: not a typed array, not open, and, once remembering, not entered before. */
function enters(w: FiniteWalk, o: object): boolean {
  if (ArrayBuffer.isView(o)) return false;
  if (w.seen !== undefined) return remember(o, w.seen);
  if (w.open.includes(o)) return false;
  if (w.members > w.limits.members || w.open.length >= w.limits.depth) {
    w.seen = new Set(w.open);
    w.seen.add(o);
  }
  return true;
}

/** The path of `keys` under `root`: `root[3].name`. */
function pathOf(root: string, keys: readonly (string | number)[], last: string | number): string {
  let p = root;
  for (const k of keys) p += typeof k === 'number' ? `[${k}]` : `.${k}`;
  return p + (typeof last === 'number' ? `[${last}]` : `.${last}`);
}

/** Walks `value`, which `enters` let in. */
function walkFinite(w: FiniteWalk, value: object, root: string): void {
  const { keys, removed } = w;
  w.open.push(value);
  if (Array.isArray(value)) {
    w.members += value.length + 1;
    let kept = 0;
    for (let i = 0; i < value.length; i++) {
      const v: unknown = value[i];
      if (typeof v === 'number') {
        if (!Number.isFinite(v)) {
          removed.push(pathOf(root, keys, i));
          continue;
        }
      } else if (v !== null && typeof v === 'object') {
        // Moved up before it is walked: a list that holds itself must not show a dropped number again.
        if (kept !== i) value[kept] = v;
        kept++;
        if (enters(w, v)) {
          keys.push(i);
          walkFinite(w, v, root);
          keys.pop();
        }
        continue;
      }
      if (kept !== i) value[kept] = v;
      kept++;
    }
    if (kept !== value.length) value.length = kept;
    w.open.pop();
    return;
  }
  const record = value as Record<string, unknown>;
  // Own enumerable names, as for-in with an own-property test would give them, at a fraction of its cost.
  const names = Object.keys(record);
  w.members += names.length + 1;
  for (let k = 0; k < names.length; k++) {
    const key = names[k]!;
    // A table built on first read is finite by construction, clamped where it is built; reading it
    // here would build it for nothing. (Assigned a value, it is an ordinary member again.)
    if (isLazyTable(record, key)) continue;
    const v = record[key];
    if (typeof v === 'number') {
      if (!Number.isFinite(v)) {
        removed.push(pathOf(root, keys, key));
        delete record[key];
      }
    } else if (v !== null && typeof v === 'object' && enters(w, v)) {
      keys.push(key);
      walkFinite(w, v, root);
      keys.pop();
    }
  }
  w.open.pop();
}

/** Remembers `o` as walked; false when it was already (one look-up in the set, not two). */
function remember(o: object, seen: Set<object>): boolean {
  const before = seen.size;
  return seen.add(o).size !== before;
}
/**
 * Drops non-finite numbers from the findings' data and from `parts` (named roots such as the
 * operating point and the structures). When anything was dropped, returns one `value-not-finite`
 * finding at the start of `uri` that names what was left out; otherwise undefined.
 */
export function keepFinite(findings: readonly Finding[], parts: Record<string, unknown>, uri: string): Finding | undefined {
  const removed: string[] = [];
  // One walk over all: what a part shares with an earlier one (the file's spread outputs are the structures' spreads)
  // the first part's walk cleaned and named under its path there.
  const w = newWalk(removed);
  for (const f of findings) if (f.data) walkPart(w, f.data, `${f.code}.data`);
  for (const [name, part] of Object.entries(parts)) walkPart(w, part, name);
  if (removed.length === 0) return undefined;
  const named = removed.slice(0, MAX_PATHS_NAMED).map((p) => `\`${p}\``).join(', ');
  const more = removed.length > MAX_PATHS_NAMED ? ` and ${removed.length - MAX_PATHS_NAMED} more` : '';
  return {
    code: 'value-not-finite',
    severity: 'warning',
    message: `qpoint computed ${removed.length === 1 ? 'a value' : `${removed.length} values`} that ${removed.length === 1 ? 'is' : 'are'} not a finite number (${named}${more}); ${removed.length === 1 ? 'it is' : 'they are'} left out of the results. Please report this netlist.`,
    uri,
    span: { start: 0, end: 0 },
    data: { paths: removed.slice(0, 50), count: removed.length },
  };
}
