// Array helpers that scale: appending and taking extremes without spreading a data-sized array into a call.
//
// Spreading a list into a call (`a.push(...b)`, `Math.max(...b)`) passes every element as a call argument; past roughly a
// hundred thousand elements that overflows the call stack. Every data-sized list goes through
// these instead (a test greps the sources for the spread forms).

/** Appends every item of `items` to `target`; returns `target`. */
export function pushAll<T>(target: T[], items: Iterable<T>): T[] {
  for (const x of items) target.push(x);
  return target;
}

/** The largest of `values` (−∞ for none, as Math.max()). NaN among them gives NaN, as Math.max. */
export function maxOf(values: Iterable<number>): number {
  let m = -Infinity;
  for (const v of values) {
    if (v !== v) return NaN;
    if (v > m) m = v;
  }
  return m;
}

/** The smallest of `values` (+∞ for none, as Math.min()). NaN among them gives NaN, as Math.min. */
export function minOf(values: Iterable<number>): number {
  let m = Infinity;
  for (const v of values) {
    if (v !== v) return NaN;
    if (v < m) m = v;
  }
  return m;
}

/**
 * `list.map(f)` built item by item, for lists of objects or strings that hot code reads. V8's own `map` makes a
 * packed list while its caller runs unoptimised and a holey one (another layout) once the caller is optimised, so
 * code that reads lists made before and after met a second layout and was compiled again; a list filled by `push`
 * has one layout either way. Its lists are kept (a structure's devices and outputs), so it gives them `trimmed`.
 */
export function mapList<T, U extends object | string>(list: readonly T[], f: (item: T, index: number) => U): U[] {
  const out: U[] = [];
  for (let i = 0; i < list.length; i++) out.push(f(list[i]!, i));
  return trimmed(out);
}

/**
 * A copy of `list` with room for its items only, for a short list that is kept for the whole analysis (a card's
 * tokens, a structure's devices). V8 gives a list grown by `push` from empty 16 slots (about 180 bytes): over a
 * 100,000-element netlist's cards and structures that was about 6 % of the heap the analysis keeps, which
 * every full collection marks. A copy is packed as its source is.
 */
export function trimmed<T>(list: T[]): T[] {
  return list.slice();
}

/** Whether `key` is one of the few `names`: a loop, where a set's or `includes`' look-up is a call per key asked. */
export function isOneOf(key: string, names: readonly string[]): boolean {
  for (let i = 0; i < names.length; i++) if (names[i] === key) return true;
  return false;
}
