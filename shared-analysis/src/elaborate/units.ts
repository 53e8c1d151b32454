// Reads netlist numbers with engineering scale suffixes and trailing unit letters.

import { nameTable } from '../names';
/** The result of reading one number: its value, or a message saying what is wrong with the text. */
export type NumberResult = { ok: true; value: number } | { ok: false; message: string };

/** Scale suffixes by lower-case spelling. `meg` and `mil` are tried before `m` (milli). */
const SCALE: Record<string, number> = nameTable({
  t: 1e12,
  g: 1e9,
  meg: 1e6,
  // X for mega, as some dialects of the family write it.
  x: 1e6,
  k: 1e3,
  m: 1e-3,
  mil: 25.4e-6,
  u: 1e-6,
  'µ': 1e-6,
  'μ': 1e-6,
  n: 1e-9,
  p: 1e-12,
  f: 1e-15,
});

const NUMBER_HEAD = /^([+-]?)(\d+\.?\d*|\.\d+)(?:[eE]([+-]?\d+))?/;
/** Letters after the mantissa: a scale suffix and unit letters, the ohm sign (either code point) included. */
const LETTERS = /^[A-Za-z\u00b5\u03bc\u03a9\u2126]*/;

/** Splits a letter run into its scale suffix (possibly empty) and the unit letters after it. */
export function splitSuffix(letters: string): { suffix: string; scale: number; unit: string } {
  const lower = letters.toLowerCase();
  for (const s of ['meg', 'mil']) {
    if (lower.startsWith(s)) return { suffix: letters.slice(0, 3), scale: SCALE[s]!, unit: letters.slice(3) };
  }
  const first = lower.charAt(0);
  if (first !== '' && SCALE[first] !== undefined) {
    return { suffix: letters.slice(0, 1), scale: SCALE[first]!, unit: letters.slice(1) };
  }
  return { suffix: '', scale: 1, unit: letters };
}

/**
 * Reads one netlist number.
 *
 * Rules:
 * 1. An optional sign, then digits with an optional decimal point and an optional
 *    exponent: `1`, `.5`, `1.`, `2.2e-3`.
 * 2. Then an optional scale suffix, case-insensitive: T=1e12, G=1e9, MEG=1e6, X=1e6, K=1e3,
 *    M=1e-3 (milli, not mega), MIL=25.4e-6, U=1e-6 (also `µ`), N=1e-9, P=1e-12, F=1e-15.
 *    `MEG` and `MIL` are tried before `M`.
 * 3. Any letters after that are unit letters and are ignored: `10kOhm`, `1uA`, `5V`, `1MegOhm`, `4.7kΩ`.
 * 4. A digit after the suffix or unit letters (the resistor-marking style `4k7`, `4u7`,
 *    `2R2`) is an error whose message gives the decimal form (`4k7` → "write 4.7k"),
 *    because reading `4k7` as 4k would silently give a wrong number.
 * 5. Anything else after the letters, an empty text, or a value that is not a finite
 *    number is an error.
 */
export function parseNumber(text: string): NumberResult {
  let read = numbersRead.get(text);
  if (!read) {
    // Bounded: a stream of distinct numbers (a generated netlist of millions) must not grow it for ever.
    if (numbersRead.size >= NUMBERS_KEPT) numbersRead.clear();
    numbersRead.set(text, (read = readNumber(text)));
  }
  return read;
}

/**
 * The numbers read lately, by text: each edit of a large netlist elaborates every value again, and its
 * texts are mostly the same few (a regular expression and a split per value otherwise, a tenth of an
 * elaboration). Results are never written by their readers.
 */
const numbersRead = new Map<string, NumberResult>();
const NUMBERS_KEPT = 100_000;

/** `parseNumber` without the memory of texts read. */
function readNumber(text: string): NumberResult {
  const head = NUMBER_HEAD.exec(text);
  if (!head) {
    if (text.trim() === '') return { ok: false, message: 'A number was expected but the field is empty.' };
    return { ok: false, message: `\`${clip(text)}\` is not a number; a number starts with a digit, a sign or a decimal point.` };
  }
  const afterHead = text.slice(head[0].length);
  const letters = LETTERS.exec(afterHead)![0];
  const rest = afterHead.slice(letters.length);
  const { scale, suffix } = splitSuffix(letters);

  if (rest !== '') {
    if (/^\d/.test(rest)) {
      const digits = /^\d+/.exec(rest)![0];
      const mantissa = head[1] + head[2];
      const simpleMarking = head[3] === undefined && !head[2].includes('.') && rest === digits && letters !== '';
      if (simpleMarking) {
        // `2R2` marks the decimal point with the unit letter; `4k7` with the scale suffix.
        const suggestion = `${mantissa}.${digits}${suffix}`;
        return {
          ok: false,
          message: `\`${clip(text)}\` uses the resistor-marking style, which is not read as a number here; write ${suggestion}.`,
        };
      }
      return { ok: false, message: `\`${clip(text)}\` has a digit after its letters; write the number in decimal form with the suffix last (for example 4.7k).` };
    }
    return {
      ok: false,
      message: `\`${clip(text)}\` is not a number: \`${clip(rest)}\` cannot follow \`${clip(text.slice(0, text.length - rest.length))}\`.`,
    };
  }

  const mantissa = Number(head[1] + head[2] + (head[3] !== undefined ? `e${head[3]}` : ''));
  const value = mantissa * scale;
  if (!Number.isFinite(value)) {
    return { ok: false, message: `\`${clip(text)}\` is too large to represent as a number.` };
  }
  return { ok: true, value };
}

/** Shortens very long texts inside messages. */
function clip(text: string): string {
  return text.length > 40 ? `${text.slice(0, 37)}...` : text;
}
