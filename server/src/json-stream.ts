// Writes a JSON document in chunks, so a report of a million-element netlist never exists as one string.

/**
 * An object whose members are produced while it is written (a table read straight from the
 * solver's vectors, say) instead of held in memory. `JSON.stringify` sees the same object
 * through `toJSON`, so code that stringifies a report whole gets the same document; `writeJson`
 * writes the members in the order produced, where an object puts integer-like names ("1", "2")
 * first, and each name must be produced once.
 */
export class JsonEntries {
  constructor(readonly entries: () => Iterable<readonly [string, unknown]>) {}

  toJSON(): Record<string, unknown> {
    const out: Record<string, unknown> = Object.create(null);
    for (const [k, v] of this.entries()) out[k] = v;
    return out;
  }
}

/**
 * A value already written as JSON text (by `writeJson` at the depth where it is placed, in another
 * thread say): `writeJson` writes its pieces as they are, and `JSON.stringify` sees the value.
 */
export class JsonText {
  constructor(readonly pieces: readonly string[]) {}

  toJSON(): unknown {
    return JSON.parse(this.pieces.join(''));
  }
}

/** Characters gathered before they are handed to `write`. */
const CHUNK = 1 << 16;

/**
 * Writes `value` as JSON text through `write`, in pieces of about 64 K characters: the same text
 * as `JSON.stringify(value, null, indent)` (`indent` 0 or absent: compact, no spaces), with
 * `JsonEntries` written as objects member by member, lists item by item, and any other object
 * whole by `JSON.stringify` (so a plain object must be of modest size), and `JsonText` as its pieces. Each piece
 * goes through `transform` first (escaping, say). Nesting is as deep as the document's own, never as long as
 * its lists. `depth` writes the value as it reads at that depth of a larger document (its inner lines
 * indented `depth` steps more), for a `JsonText` to be placed there.
 */
export function writeJson(value: unknown, write: (s: string) => void, options: { indent?: number; transform?: (s: string) => string; depth?: number } = {}): void {
  const step = options.indent && options.indent > 0 ? ' '.repeat(Math.min(10, options.indent)) : '';
  const transform = options.transform ?? ((s: string) => s);
  let parts: string[] = [];
  let size = 0;
  const emit = (s: string): void => {
    parts.push(s);
    size += s.length;
    if (size >= CHUNK) flush();
  };
  const flush = (): void => {
    if (parts.length === 0) return;
    const text = parts.join('');
    parts = [];
    size = 0;
    write(transform(text));
  };
  const colon = step ? ': ' : ':';

  /** Writes v (already known to be writable) at the given indentation. */
  const put = (v: unknown, indent: string): void => {
    if (v instanceof JsonText) {
      for (const piece of v.pieces) emit(piece);
      return;
    }
    if (v instanceof JsonEntries) {
      putObject(v.entries(), indent);
      return;
    }
    if (v !== null && typeof v === 'object' && typeof (v as { toJSON?: unknown }).toJSON === 'function') {
      v = (v as { toJSON(key: string): unknown }).toJSON('');
    }
    if (v === null || typeof v !== 'object') {
      emit(JSON.stringify(v) ?? 'null');
      return;
    }
    // A value of modest size holding no JsonEntries (a record, a range, a structure's estimate with
    // its steps) is written whole by the native writer, re-indented: one call instead of a call per
    // member. Lists and objects that are large, or hold JsonEntries, are walked.
    if (small(v)) {
      emit(step && indent ? indented(v, indent.length / step.length, step) : JSON.stringify(v, null, step));
      return;
    }
    if (Array.isArray(v)) {
      if (v.length === 0) {
        emit('[]');
        return;
      }
      const inner = indent + step;
      emit('[');
      for (let i = 0; i < v.length; i++) {
        if (i > 0) emit(',');
        if (step) emit('\n' + inner);
        const item = v[i];
        if (item === undefined || typeof item === 'function' || typeof item === 'symbol') emit('null');
        else put(item, inner);
      }
      if (step) emit('\n' + indent);
      emit(']');
      return;
    }
    const o = v as Record<string, unknown>;
    putObject(members(o, Object.keys(o)), indent);
  };

  const putObject = (members: Iterable<readonly [string, unknown]>, indent: string): void => {
    const inner = indent + step;
    let first = true;
    for (const [k, item] of members) {
      if (item === undefined || typeof item === 'function' || typeof item === 'symbol') continue;
      emit(first ? '{' : ',');
      first = false;
      if (step) emit('\n' + inner);
      emit(JSON.stringify(k) + colon);
      put(item, inner);
    }
    if (first) emit('{}');
    else {
      if (step) emit('\n' + indent);
      emit('}');
    }
  };

  put(value, step.repeat(Math.max(0, options.depth ?? 0)));
  flush();
}

/**
 * `JSON.stringify(v, null, step)` as it reads `depth` levels down in a document: `v` wrapped in
 * `depth` one-item lists is written by the native writer, which indents every line, and the
 * wrappers' brackets are cut off (no second pass over the text to re-indent it).
 */
function indented(v: unknown, depth: number, step: string): string {
  let w = v;
  let head = 0;
  let tail = 0;
  for (let d = 1; d <= depth; d++) {
    w = [w];
    head += 2 + d * step.length; // "[\n" and the next line's indentation
    tail += 2 + (d - 1) * step.length; // "\n", the indentation of a closing "]", and "]"
  }
  const text = JSON.stringify(w, null, step);
  return text.slice(head, text.length - tail);
}

/** Values (numbers, strings, members, items) a subtree may hold and still be written by one native call. */
const SMALL_BUDGET = 4096;

/**
 * Whether `v` holds at most `SMALL_BUDGET` values and no `JsonEntries` anywhere: a bounded walk
 * that stops as soon as the answer is no. Members read through a getter are read here too, as the
 * native writer would read them.
 */
function small(v: object): boolean {
  let budget = SMALL_BUDGET;
  const stack: object[] = [v];
  while (stack.length > 0) {
    const o = stack.pop()!;
    if (o instanceof JsonEntries || o instanceof JsonText) return false;
    if (Array.isArray(o)) {
      budget -= o.length + 1;
      if (budget < 0) return false;
      for (let i = 0; i < o.length; i++) {
        const item: unknown = o[i];
        if (item !== null && typeof item === 'object') stack.push(item);
      }
      continue;
    }
    if (ArrayBuffer.isView(o)) {
      // The native writer writes a typed array as an object of its indices.
      budget -= (o as unknown as ArrayLike<unknown>).length ?? 0;
      if (budget < 0) return false;
      continue;
    }
    for (const k in o) {
      if (!Object.prototype.hasOwnProperty.call(o, k)) continue;
      if (--budget < 0) return false;
      const item: unknown = (o as Record<string, unknown>)[k];
      if (item !== null && typeof item === 'object') stack.push(item);
    }
    budget--;
  }
  return true;
}

function* members(o: Record<string, unknown>, keys: string[]): Iterable<readonly [string, unknown]> {
  for (const k of keys) yield [k, o[k]];
}
