// Writes a JSON document in chunks, so a report of a million-element netlist never exists as one string.

/**
 * An object whose members are produced while it is written (a table read straight from the
 * solver's vectors, say) instead of held in memory. `JSON.stringify` sees the same object
 * through `toJSON`, so code that stringifies a report whole gets the same document; `writeJson`
 * writes the members in the order produced, where an object puts integer-like names ("1", "2")
 * first, and each name must be produced once.
 */
export class JsonEntries {
  /**
   * `modestValues`: every member's value is a plain value of modest size holding nothing streamed
   * (a device record, say), so the writer gathers members by count without walking each one.
   */
  constructor(
    readonly entries: () => Iterable<readonly [string, unknown]>,
    readonly modestValues = false,
  ) {}

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

/**
 * A list whose items are made when written (a structure's entry, say), each a plain value of modest
 * size holding nothing streamed: the writer gathers them by count without walking each one, and
 * each item can be collected once written. `JSON.stringify` sees the list through `toJSON`.
 */
export class JsonItems {
  constructor(
    readonly length: number,
    readonly item: (i: number) => unknown,
  ) {}

  toJSON(): unknown[] {
    return Array.from({ length: this.length }, (_, i) => this.item(i));
  }
}

/** Characters gathered before they are handed to `write` as text. */
const CHUNK = 1 << 16;

/** Bytes gathered before they are handed to `write` as UTF-8 (`writeJsonBytes`): the first chunk's, doubled each chunk up to the last. */
const FIRST_BYTE_CHUNK = 1 << 14;
const BYTE_CHUNK = 1 << 20;

/** Where the writer's pieces of text go: gathered into chunks, handed on by `end` at the latest. */
interface JsonOut {
  add(s: string): void;
  /**
   * Adds `separator` (one ASCII character) and `text` without its first character and its last `cut`
   * (a batch's brackets and the line before its closing one, all ASCII): the batch's inside, without a
   * copy of it where the chunk can take the text whole.
   */
  addInside(separator: string, text: string, cut: number): void;
  end(): void;
}

/** Options of `writeJson` and `writeJsonBytes`. */
interface WriteOptions {
  indent?: number;
  depth?: number;
}

/** Options of `writeJsonBytes` alone. */
interface ByteOptions {
  transform?: (bytes: Buffer) => Uint8Array;
  /**
   * True when every chunk handed to `write` so far is out (copied into a file or a pipe, say), so the
   * writer may fill the last one's buffer again instead of taking a new one; absent: never.
   */
  written?: () => boolean;
}

/**
 * Writes `value` as JSON text through `write`, in pieces of about 64 K characters: the same text
 * as `JSON.stringify(value, null, indent)` (`indent` 0 or absent: compact, no spaces), with
 * `JsonEntries` written as objects member by member, lists and `JsonItems` item by item, and any other object
 * whole by `JSON.stringify` (so a plain object must be of modest size), and `JsonText` as its pieces. Each piece
 * goes through `transform` first (escaping, say). Nesting is as deep as the document's own, never as long as
 * its lists. `depth` writes the value as it reads at that depth of a larger document (its inner lines
 * indented `depth` steps more), for a `JsonText` to be placed there.
 */
export function writeJson(value: unknown, write: (s: string) => void, options: WriteOptions & { transform?: (s: string) => string } = {}): void {
  writeTo(value, textChunks(write, options.transform ?? ((s: string) => s)), options);
}

/**
 * `writeJson` as UTF-8 bytes, in chunks of about 1 MiB: each piece of text is encoded straight into the
 * chunk (no text of the chunk is joined first, and the writer hands over a few large chunks instead of
 * hundreds of small ones). Each chunk goes through `transform` (escaping, say: it gets whole pieces, so
 * valid UTF-8) and is then `write`'s to keep: the next chunk is a new buffer, unless `written` says the
 * chunks handed over are out, when the full-sized buffer is filled again (a run of a 100,000-element
 * netlist takes about 100 chunks of 1 MiB; fresh ones are ArrayBuffer memory that starts full collections).
 */
export function writeJsonBytes(value: unknown, write: (bytes: Uint8Array) => void, options: WriteOptions & ByteOptions = {}): void {
  writeTo(value, byteChunks(write, options.transform ?? ((b: Buffer) => b), options.written), options);
}

function textChunks(write: (s: string) => void, transform: (s: string) => string): JsonOut {
  let parts: string[] = [];
  let size = 0;
  const end = (): void => {
    if (parts.length === 0) return;
    const text = parts.join('');
    parts = [];
    size = 0;
    write(transform(text));
  };
  const add = (s: string): void => {
    parts.push(s);
    size += s.length;
    if (size >= CHUNK) end();
  };
  return {
    add,
    addInside: (separator, text, cut) => {
      add(separator);
      add(text.slice(1, text.length - cut));
    },
    end,
  };
}

function byteChunks(write: (bytes: Uint8Array) => void, transform: (bytes: Buffer) => Uint8Array, written?: () => boolean): JsonOut {
  // A small document takes a small buffer; a large one is handed over in few chunks.
  let buf = Buffer.allocUnsafe(FIRST_BYTE_CHUNK);
  let used = 0;
  const end = (): void => {
    if (used === 0) return;
    const full = buf.subarray(0, used);
    used = 0;
    write(transform(full));
    // A buffer still held by whoever took the chunk is theirs; one of full size already written out is filled again.
    if (buf.length < BYTE_CHUNK || !written?.()) buf = Buffer.allocUnsafe(Math.min(BYTE_CHUNK, 2 * buf.length));
  };
  /** Makes room for `most` bytes in the chunk, handing a full one over; false when no chunk can take them. */
  const room = (most: number): boolean => {
    if (used + most <= buf.length) return true;
    end();
    if (most > BYTE_CHUNK) return false;
    if (most > buf.length) buf = Buffer.allocUnsafe(BYTE_CHUNK);
    return true;
  };
  // A UTF-16 unit takes at most three bytes.
  const add = (s: string): void => {
    if (room(3 * s.length)) used += buf.write(s, used, 'utf8');
    else write(transform(Buffer.from(s, 'utf8')));
  };
  return {
    add,
    addInside: (separator, text, cut) => {
      if (!room(3 * text.length)) {
        add(separator);
        add(text.slice(1, text.length - cut));
        return;
      }
      // The text is written whole, its opening bracket overwritten by the separator and its end dropped.
      const start = used;
      used += buf.write(text, used, 'utf8');
      buf[start] = separator.charCodeAt(0);
      used -= cut;
    },
    end,
  };
}

/** Writes `value` into `out` (see `writeJson`). */
function writeTo(value: unknown, out: JsonOut, options: WriteOptions): void {
  const step = options.indent && options.indent > 0 ? ' '.repeat(Math.min(10, options.indent)) : '';
  new JsonWriter(out, step).put(value, step.repeat(Math.max(0, options.depth ?? 0)));
  out.end();
}

/**
 * The walk of one document. Its steps are methods of one class rather than closures made per document or per
 * table, so each is one function for V8 whatever it writes: a closure made per table (a batch's flush, say) was a
 * new call target at every table, and the writer's loops were given up and compiled again at each (six times for
 * the streamed tables of a 20,000-element array).
 */
class JsonWriter {
  private readonly colon: string;

  constructor(
    private readonly out: JsonOut,
    /** One level of indentation; empty: compact. */
    readonly step: string,
  ) {
    this.colon = step ? ': ' : ':';
  }

  emit(s: string): void {
    this.out.add(s);
  }

  /** The native writer's text of `v` at `indent`: its first line unindented, the rest indented as the document needs. */
  native(v: unknown, indent: string): string {
    const step = this.step;
    return step && indent ? indented(v, indent.length / step.length, step) : JSON.stringify(v, null, step);
  }

  /** A batch's text after `separator`, without its brackets: "[" … "]" compact; "[" … "\n" + indent + "]" indented. */
  emitInside(separator: string, text: string, indent: string): void {
    this.out.addInside(separator, text, this.step ? indent.length + 2 : 1);
  }

  /** Writes a list's item alone (too large to be gathered), after its separator. */
  private putItem(item: unknown, inner: string, separator: string): void {
    this.emit(separator);
    if (this.step) this.emit('\n' + inner);
    this.put(item, inner);
  }

  /** Writes member `k` (a name that is not to be gathered, or a value too large to be) alone, after its separator. */
  private putMember(k: string, item: unknown, inner: string, separator: string): void {
    this.emit(separator);
    if (this.step) this.emit('\n' + inner);
    this.emit(JSON.stringify(k) + this.colon);
    this.put(item, inner);
  }

  /**
   * A streamed table of modest values (`JsonEntries` with `modestValues`: the node voltages, the device
   * records, the power table): members gathered by count, the count set by the weight of each batch's first
   * member, so the writer weighs one member per batch (tens of thousands of members at 20,000 elements, where
   * the other objects of the document are a few hundred). The members after a batch's first are taken by
   * `gatherMembers`, a loop of its own.
   */
  private putModestMembers(members: Iterable<readonly [string, unknown]>, indent: string): void {
    const inner = indent + this.step;
    const batch = new Batch(this, false, indent);
    const it = members[Symbol.iterator]();
    let next = it.next();
    while (!next.done) {
      const [k, member] = next.value;
      if (!writable(member)) {
        next = it.next();
        continue;
      }
      // An integer-like name would move to the front of a gathered object: it is written alone, in its place.
      const limit = isArrayIndex(k) ? 0 : Math.floor(SMALL_BUDGET / weight(member));
      if (limit <= 0) {
        batch.write();
        this.putMember(k, member, inner, batch.separator());
        next = it.next();
        continue;
      }
      // A modest value holds nothing streamed, so the native writer that takes its batch calls any toJSON it has.
      batch.take(member, k);
      next = gatherMembers(it, batch, limit);
      batch.write();
    }
    batch.close();
  }

  /** `JsonItems`: items gathered by count as `putModestMembers` gathers members, by `gatherItems`. */
  private putModestItems(items: JsonItems, indent: string): void {
    const inner = indent + this.step;
    const batch = new Batch(this, true, indent);
    for (let i = 0; i < items.length; ) {
      const item = resolved(items.item(i++));
      const limit = Math.floor(SMALL_BUDGET / weight(item));
      if (limit <= 0) {
        this.putItem(item, inner, batch.separator());
        continue;
      }
      batch.take(item);
      i = gatherItems(items, i, batch, limit);
      batch.write();
    }
    batch.close();
  }

  /** Writes v (already known to be writable) at the given indentation. */
  put(v: unknown, indent: string): void {
    if (v instanceof JsonText) {
      for (const piece of v.pieces) this.emit(piece);
      return;
    }
    if (v instanceof JsonEntries) {
      if (v.modestValues) this.putModestMembers(v.entries(), indent);
      else this.putObject(v.entries(), indent);
      return;
    }
    if (v instanceof JsonItems) {
      this.putModestItems(v, indent);
      return;
    }
    v = resolved(v);
    if (v === null || typeof v !== 'object') {
      this.emit(JSON.stringify(v) ?? 'null');
      return;
    }
    // A value of modest size holding no JsonEntries (a record, a range, a structure's estimate with
    // its steps) is written whole by the native writer, re-indented: one call instead of a call per
    // member. Lists and objects that are large, or hold JsonEntries, are walked, their small items
    // gathered into batches.
    if (weight(v) >= 0) {
      this.emit(this.native(v, indent));
      return;
    }
    if (Array.isArray(v)) {
      this.putList(v, indent);
      return;
    }
    const o = v as Record<string, unknown>;
    this.putObject(members(o, Object.keys(o)), indent);
  }

  private putList(list: readonly unknown[], indent: string): void {
    const inner = indent + this.step;
    const batch = new Batch(this, true, indent);
    for (let i = 0; i < list.length; i++) {
      const item = resolved(list[i]);
      if (batch.add(item)) continue;
      batch.write();
      this.putItem(item, inner, batch.separator());
    }
    batch.close();
  }

  private putObject(members: Iterable<readonly [string, unknown]>, indent: string): void {
    const inner = indent + this.step;
    const batch = new Batch(this, false, indent);
    for (const [k, member] of members) {
      const item = resolved(member);
      if (!writable(item)) continue;
      // An integer-like name would move to the front of a gathered object: it is written alone, in its place.
      if (!isArrayIndex(k) && batch.add(item, k)) continue;
      batch.write();
      this.putMember(k, item, inner, batch.separator());
    }
    batch.close();
  }
}

/**
 * One list's or object's writing: consecutive items (members) that are each of modest size and hold no
 * JsonEntries are gathered into one list (object) of at most `SMALL_BUDGET` values, which the native writer
 * writes in one call: its text without the brackets is the items' text with their separators and indentation,
 * as writing them one by one gives. A call per item (a device record, a structure) cost more than writing the
 * item. It also keeps the separator before the next piece ("[" or "{" first, then ",") and closes the list.
 *
 * An object's members are kept as a list of names and a list of values. Compact, when every value is a number or
 * every value a plain record, the values go to the native writer as a list and the names are put in front of their
 * texts here (`memberText`): no object keyed by the names is made, so the names (a netlist's node and element names,
 * hundreds of thousands in a large table) are not made into property keys, and the native writer takes no
 * dictionary object's slow path. Otherwise the members are gathered into an object without a prototype as before.
 */
class Batch {
  private items: unknown[] | undefined = undefined;
  /** An object's gathered members: names and values by position. */
  private readonly names: string[] = [];
  private readonly values: unknown[] = [];
  /** The UTF-16 units of the gathered names. */
  private nameUnits = 0;
  /** The values (numbers, strings, members, items) gathered by `add`. */
  private used = 0;
  /** Items (members) gathered since the last write. */
  count = 0;
  private first = true;

  constructor(
    private readonly writer: JsonWriter,
    private readonly list: boolean,
    private readonly indent: string,
  ) {}

  /** The separator before the next piece written. */
  separator(): string {
    if (!this.first) return ',';
    this.first = false;
    return this.list ? '[' : '{';
  }

  /** Takes the item (member `key` of an object) when it is small enough; false when it must be written alone. */
  add(item: unknown, key?: string): boolean {
    const w = weight(item);
    if (w < 0) return false;
    if (this.used + w > SMALL_BUDGET) this.write();
    this.take(item, key);
    this.used += w;
    return true;
  }

  /** Takes the item (member `key` of an object) unweighed: its caller counts. */
  take(item: unknown, key?: string): void {
    if (this.list) (this.items ??= []).push(item);
    else {
      this.names.push(key!);
      this.values.push(item);
      this.nameUnits += key!.length;
    }
    this.count++;
  }

  /** Writes what was gathered (after the separator before it) and starts again. */
  write(): void {
    if (this.count === 0) return;
    let text: string;
    if (this.list) {
      text = this.writer.native(this.items, this.indent);
      this.items = undefined;
    } else {
      text = (this.writer.step ? undefined : memberText(this.names, this.values, this.nameUnits)) ?? this.writer.native(gathered(this.names, this.values), this.indent);
      this.names.length = 0;
      this.values.length = 0;
      this.nameUnits = 0;
    }
    this.used = 0;
    this.count = 0;
    this.writer.emitInside(this.separator(), text, this.indent);
  }

  /** Writes what is left and the closing bracket ("[]" or "{}" when nothing was written). */
  close(): void {
    this.write();
    const w = this.writer;
    if (this.first) w.emit(this.list ? '[]' : '{}');
    else w.emit((w.step ? '\n' + this.indent : '') + (this.list ? ']' : '}'));
  }
}

/** The members `names[i]`: `values[i]` as an object without a prototype, in their order (no name is integer-like). */
function gathered(names: readonly string[], values: readonly unknown[]): Record<string, unknown> {
  const o: Record<string, unknown> = Object.create(null);
  for (let i = 0; i < names.length; i++) o[names[i]!] = values[i];
  return o;
}

/**
 * The compact text of the object of members `names[i]`: `values[i]` (distinct names, none integer-like, `nameUnits`
 * their UTF-16 units), as `JSON.stringify` writes it, from one native call on the values; undefined where this way
 * cannot be sure of it, for the caller to write the object. Every value a number: the list's text is the numbers' texts
 * joined by commas, and a number's text holds none. Every value a plain record (an object of `Object.prototype` with
 * no `toJSON`): the list's text is the records' texts joined by "},{", which is found once between each two records and
 * elsewhere only inside a string, so a split into exactly as many parts as there are records finds them all and only
 * them. A name is written between quotes as it is when none of them needs an escape: the names' list is then exactly
 * as long as their units, their quotes, the commas and the brackets.
 */
function memberText(names: readonly string[], values: readonly unknown[], nameUnits: number): string | undefined {
  const n = names.length;
  const numbers = allNumbers(values);
  if (!numbers && !allPlainRecords(values)) return undefined;
  if (JSON.stringify(names).length !== nameUnits + 3 * n + 1) return undefined;
  const text = JSON.stringify(values);
  const parts = text.slice(1, text.length - 1).split(numbers ? ',' : '},{');
  if (parts.length !== n) return undefined;
  // A record's part has lost the "}" after it and the "{" before it to the split, but for the first one's "{" and the last one's "}".
  const before = numbers ? ',"' : '},"';
  const after = numbers ? '":' : '":{';
  const pieces: string[] = ['{"', names[0]!, '":', parts[0]!];
  for (let i = 1; i < n; i++) pieces.push(before, names[i]!, after, parts[i]!);
  pieces.push('}');
  return pieces.join('');
}

function allNumbers(values: readonly unknown[]): boolean {
  for (let i = 0; i < values.length; i++) if (typeof values[i] !== 'number') return false;
  return true;
}

/** Whether every value is an object the native writer writes as an object of its own members: of `Object.prototype`, without `toJSON`. */
function allPlainRecords(values: readonly unknown[]): boolean {
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (v === null || typeof v !== 'object' || Object.getPrototypeOf(v) !== Object.prototype || typeof (v as { toJSON?: unknown }).toJSON === 'function') return false;
  }
  return true;
}

/**
 * Takes members from `it` into `batch` until it holds `limit` or a member must be written alone (an integer-like
 * name); returns the entry that stopped it (`done` at the end). The loop a large table spends its time in, apart
 * from the batches' writing: every path out of it is the loop's own test, so the code V8 compiles for it while it
 * runs (on stack replacement) is not given up at the first batch that fills, as a loop that wrote the batch itself was.
 */
function gatherMembers(it: Iterator<readonly [string, unknown]>, batch: Batch, limit: number): IteratorResult<readonly [string, unknown]> {
  let next = it.next();
  while (!next.done && batch.count < limit) {
    const entry = next.value;
    if (writable(entry[1])) {
      if (isArrayIndex(entry[0])) break;
      batch.take(entry[1], entry[0]);
    }
    next = it.next();
  }
  return next;
}

/** Takes items from `i` on into `batch` until it holds `limit` or the list ends; returns the index of the next item (see `gatherMembers`). */
function gatherItems(items: JsonItems, i: number, batch: Batch, limit: number): number {
  while (i < items.length && batch.count < limit) batch.take(resolved(items.item(i++)));
  return i;
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

/** A canonical array index ("0", "17"): an object lists such names first, whatever the order they were set in. */
const ARRAY_INDEX = /^(?:0|[1-9][0-9]{0,9})$/;

/** Whether `k` is a canonical array index; a name that does not start with a digit is answered without the expression. */
function isArrayIndex(k: string): boolean {
  const first = k.charCodeAt(0);
  return first >= 48 && first <= 57 && ARRAY_INDEX.test(k);
}

/** Whether the native writer writes `v` as a member's value (it leaves out undefined, functions and symbols). */
function writable(v: unknown): boolean {
  return v !== undefined && typeof v !== 'function' && typeof v !== 'symbol';
}

/** `v` as the writer writes it: what its `toJSON` gives, when it has one (called with '' as the writer's own items are). */
function resolved(v: unknown): unknown {
  if (v !== null && typeof v === 'object' && !(v instanceof JsonEntries) && !(v instanceof JsonText) && !(v instanceof JsonItems) && typeof (v as { toJSON?: unknown }).toJSON === 'function') {
    return (v as { toJSON(key: string): unknown }).toJSON('');
  }
  return v;
}

/**
 * How many values (numbers, strings, members, items) `v` holds, when that is at most
 * `SMALL_BUDGET` and it holds no `JsonEntries`, `JsonItems` or `JsonText` anywhere; otherwise −1. A bounded walk
 * that stops as soon as the answer is no. Members read through a getter are read here too, as the
 * native writer would read them.
 */
function weight(v: unknown): number {
  if (v === null || typeof v !== 'object') return 1;
  let budget = SMALL_BUDGET;
  const stack: object[] = [v];
  while (stack.length > 0) {
    const o = stack.pop()!;
    if (o instanceof JsonEntries || o instanceof JsonText || o instanceof JsonItems) return -1;
    if (Array.isArray(o)) {
      budget -= o.length + 1;
      if (budget < 0) return -1;
      for (let i = 0; i < o.length; i++) {
        const item: unknown = o[i];
        if (item !== null && typeof item === 'object') stack.push(item);
      }
      continue;
    }
    if (ArrayBuffer.isView(o)) {
      // The native writer writes a typed array as an object of its indices.
      budget -= (o as unknown as ArrayLike<unknown>).length ?? 0;
      if (budget < 0) return -1;
      continue;
    }
    for (const k in o) {
      if (!Object.prototype.hasOwnProperty.call(o, k)) continue;
      if (--budget < 0) return -1;
      const item: unknown = (o as Record<string, unknown>)[k];
      if (item !== null && typeof item === 'object') stack.push(item);
    }
    budget--;
  }
  return SMALL_BUDGET - budget;
}

function* members(o: Record<string, unknown>, keys: string[]): Iterable<readonly [string, unknown]> {
  for (const k of keys) yield [k, o[k]];
}
