// Where the engine's data-sized numeric columns get their memory: the solver's layout, factors and vectors, the device
// tables, the corner phase's buffers and the spread's rows. Each is made here, so one switch decides how.
//
// V8 counts the memory behind ordinary ArrayBuffers as "external memory" and starts a full collection of the whole
// heap each time that figure has grown by 64 MB since the last one. In a one-shot batch run the columns live until the
// run ends: at 100,000 elements such a collection marked about 330 MB of objects to free about 13 MB (the columns it
// was started for were all alive). With `setColumnsUncounted(true)` a column of COUNTED_BELOW_BYTES or more is made
// on a SharedArrayBuffer, whose memory V8 leaves out of that count (it cannot know which thread holds a shared
// buffer); it is freed with its last holder as any other, by the collections the heap's own growth starts. Reading
// and writing such a column is the same code and speed as an ordinary one (no atomics are used). Only a process that
// runs one batch analysis and ends turns it on (the CLI's large-run process, server/src/cli-main.ts): a long-lived
// process such as the language server, whose old analyses' columns are garbage, keeps V8's count.

/** Columns shorter than this many bytes stay ordinary: their memory is too small to move V8's count. */
export const COUNTED_BELOW_BYTES = 64 * 1024;

let uncounted = false;
let fromBytes = COUNTED_BELOW_BYTES;

/**
 * Whether columns from now on are made outside V8's external-memory count (false by default), those of `smallest`
 * bytes or more (COUNTED_BELOW_BYTES unless given: a test gives 0 to run a whole analysis on such columns).
 */
export function setColumnsUncounted(on: boolean, smallest = COUNTED_BELOW_BYTES): void {
  uncounted = on;
  fromBytes = smallest;
}

/** The buffer for `bytes` bytes of a column, or undefined when the column should be ordinary. */
function sharedBuffer(bytes: number): SharedArrayBuffer | undefined {
  return uncounted && bytes >= fromBytes && bytes > 0 ? new SharedArrayBuffer(bytes) : undefined;
}

/** A column of `length` zeros. */
export function float64Column(length: number): Float64Array {
  const b = sharedBuffer(length * 8);
  return b ? new Float64Array(b) : new Float64Array(length);
}

/** A column of `length` zeros. */
export function int32Column(length: number): Int32Array {
  const b = sharedBuffer(length * 4);
  return b ? new Int32Array(b) : new Int32Array(length);
}

/** A column of `length` zeros. */
export function uint8Column(length: number): Uint8Array {
  const b = sharedBuffer(length);
  return b ? new Uint8Array(b) : new Uint8Array(length);
}

/** A column of `length` zeros. */
export function int8Column(length: number): Int8Array {
  const b = sharedBuffer(length);
  return b ? new Int8Array(b) : new Int8Array(length);
}

/** A column holding a copy of `values`. */
export function float64ColumnOf(values: ArrayLike<number>): Float64Array {
  const out = float64Column(values.length);
  out.set(values);
  return out;
}
