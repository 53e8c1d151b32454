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
 * returns the paths removed. Walks each object once; linear in the size of the data. A path is
 * written only for what is removed: the walk keeps the keys it is under, not their text.
 */
export function dropNonFinite(value: unknown, path: string, removed: string[], seen = new Set<object>()): void {
  walkFinite(value, path, [], removed, seen);
}

/** The path of `keys` under `root`: `root[3].name`. */
function pathOf(root: string, keys: readonly (string | number)[], last: string | number): string {
  let p = root;
  for (const k of keys) p += typeof k === 'number' ? `[${k}]` : `.${k}`;
  return p + (typeof last === 'number' ? `[${last}]` : `.${last}`);
}

function walkFinite(value: unknown, root: string, keys: (string | number)[], removed: string[], seen: Set<object>): void {
  if (value === null || typeof value !== 'object' || ArrayBuffer.isView(value)) return;
  // Only a container (something holding objects) is remembered, when its first object is met: it is
  // where a shared object or a cycle would be reached again. An object of numbers and strings reached
  // twice is simply looked at twice, which finds nothing the second time; remembering every such leaf
  // cost more than the rest of the walk, and so did scanning each object first to see whether it holds one.
  let remembered = false;
  if (Array.isArray(value)) {
    let kept = 0;
    for (let i = 0; i < value.length; i++) {
      const v: unknown = value[i];
      if (typeof v === 'number') {
        if (!Number.isFinite(v)) {
          removed.push(pathOf(root, keys, i));
          continue;
        }
      } else if (v !== null && typeof v === 'object') {
        // Walked before: its numbers were cleaned then, so nothing before this item was dropped now.
        if (!remembered && !(remembered = remember(value, seen))) return;
        // Moved up before it is walked: a list that holds itself must not show a dropped number again.
        if (kept !== i) value[kept] = v;
        kept++;
        keys.push(i);
        walkFinite(v, root, keys, removed, seen);
        keys.pop();
        continue;
      }
      if (kept !== i) value[kept] = v;
      kept++;
    }
    if (kept !== value.length) value.length = kept;
    return;
  }
  const record = value as Record<string, unknown>;
  // Own enumerable names, as for-in with an own-property test would give them, at a fraction of its cost.
  const names = Object.keys(record);
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
    } else if (v !== null && typeof v === 'object') {
      if (!remembered && !(remembered = remember(value, seen))) return;
      keys.push(key);
      walkFinite(v, root, keys, removed, seen);
      keys.pop();
    }
  }
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
  // One memory of walked containers for all: a part that holds what an earlier one held (the file's spread outputs are
  // the structures' spreads) is not walked again, and what the first walk removed it named under its first path then.
  const seen = new Set<object>();
  for (const f of findings) if (f.data) dropNonFinite(f.data, `${f.code}.data`, removed, seen);
  for (const [name, part] of Object.entries(parts)) dropNonFinite(part, name, removed, seen);
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
