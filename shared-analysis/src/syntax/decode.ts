// Turns a netlist file's bytes into text the same way in every host (language server and CLI).

/** The decoder every JavaScript host has (Node and browsers); declared here because the engine builds without DOM or Node types. */
declare const TextDecoder: new (label: string, options?: { fatal?: boolean }) => { decode(bytes: Uint8Array): string };

/** How a file's bytes were read, for hovers and messages. */
export type TextEncodingName = 'utf-8' | 'utf-8 with BOM' | 'utf-16le' | 'utf-16be' | 'windows-1252';

/** Windows-1252 characters for bytes 0x80–0x9F (the rest of the code page equals Latin-1); 0 marks the five unassigned bytes, read as Latin-1. */
const CP1252_HIGH = [
  0x20ac, 0, 0x201a, 0x0192, 0x201e, 0x2026, 0x2020, 0x2021, 0x02c6, 0x2030, 0x0160, 0x2039, 0x0152, 0, 0x017d, 0,
  0, 0x2018, 0x2019, 0x201c, 0x201d, 0x2022, 0x2013, 0x2014, 0x02dc, 0x2122, 0x0161, 0x203a, 0x0153, 0, 0x017e, 0x0178,
];

/**
 * Decodes a netlist file:
 * - a UTF-8 byte-order mark: UTF-8 (the mark is dropped);
 * - a UTF-16 byte-order mark (either byte order): UTF-16 (the mark is dropped);
 * - otherwise UTF-8 when the bytes are valid UTF-8, else Windows-1252 (so a Latin-1 `µ` or `Ω`
 *   written by an older editor reads as that character);
 * - a Ctrl-Z (0x1A) end-of-file marker at the end, with only blanks after it, is dropped.
 * The editor's own reading of an open document is set up to agree (see the README, "Files as people keep them").
 */
export function decodeNetlist(bytes: Uint8Array): { text: string; encoding: TextEncodingName } {
  let text: string;
  let encoding: TextEncodingName;
  if (bytes.length >= 3 && bytes[0] === 0xef && bytes[1] === 0xbb && bytes[2] === 0xbf) {
    text = new TextDecoder('utf-8').decode(bytes.subarray(3));
    encoding = 'utf-8 with BOM';
  } else if (bytes.length >= 2 && bytes[0] === 0xff && bytes[1] === 0xfe) {
    text = utf16(bytes, 2, true);
    encoding = 'utf-16le';
  } else if (bytes.length >= 2 && bytes[0] === 0xfe && bytes[1] === 0xff) {
    text = utf16(bytes, 2, false);
    encoding = 'utf-16be';
  } else {
    try {
      text = new TextDecoder('utf-8', { fatal: true }).decode(bytes);
      encoding = 'utf-8';
    } catch {
      text = windows1252(bytes);
      encoding = 'windows-1252';
    }
  }
  return { text: dropEndOfFileMarker(text), encoding };
}

/** The text of `bytes` as decodeNetlist reads it. */
export function decodeNetlistText(bytes: Uint8Array): string {
  return decodeNetlist(bytes).text;
}

function utf16(bytes: Uint8Array, from: number, littleEndian: boolean): string {
  const count = (bytes.length - from) >> 1;
  return fromCodes(count, (k) => {
    const i = from + 2 * k;
    return littleEndian ? bytes[i]! | (bytes[i + 1]! << 8) : (bytes[i]! << 8) | bytes[i + 1]!;
  });
}

function windows1252(bytes: Uint8Array): string {
  return fromCodes(bytes.length, (k) => {
    const b = bytes[k]!;
    return b >= 0x80 && b <= 0x9f ? CP1252_HIGH[b - 0x80] || b : b;
  });
}

/** A string of `count` UTF-16 code units, built in chunks so a large file never overflows the argument list. */
function fromCodes(count: number, codeAt: (k: number) => number): string {
  const parts: string[] = [];
  const chunk: number[] = [];
  for (let k = 0; k < count; k++) {
    chunk.push(codeAt(k));
    if (chunk.length === 8192) {
      parts.push(String.fromCharCode(...chunk)); // bounded: at most 8192 codes
      chunk.length = 0;
    }
  }
  parts.push(String.fromCharCode(...chunk)); // bounded: at most 8192 codes
  return parts.join('');
}

/** Drops a Ctrl-Z end-of-file marker (and further ones) when only blanks and line breaks follow it. */
function dropEndOfFileMarker(text: string): string {
  let end = text.length;
  while (end > 0 && /[\s\u001a]/.test(text.charAt(end - 1))) end--;
  if (end === text.length) return text;
  const tail = text.slice(end);
  const z = tail.indexOf('\u001a');
  return z < 0 ? text : text.slice(0, end + z);
}
