// Shows control characters and bidirectional marks in text qpoint echoes, so a netlist cannot forge terminal output or log lines.

/**
 * C0 controls except tab (line breaks included: a message must not start a forged line),
 * DEL and C1 controls (0x9b is a one-byte CSI), the bidirectional embeddings, overrides and
 * isolates, and the Unicode line and paragraph separators.
 */
const UNSAFE = /[\u0000-\u0008\u000a-\u001f\u007f-\u009f\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069]/g;

/** What `JSON.stringify` leaves unescaped of UNSAFE (it escapes C0 controls inside strings; between values a line break is layout). */
const RAW_IN_JSON = /[\u007f-\u009f\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069]/g;

/** `text` with every unsafe character written as an escape (`\x1b`, `\n`, `\u202e`). */
export function escapeControls(text: string): string {
  return text.replace(UNSAFE, (c) => {
    if (c === '\n') return '\\n';
    if (c === '\r') return '\\r';
    const code = c.charCodeAt(0);
    return code <= 0xff ? `\\x${code.toString(16).padStart(2, '0')}` : `\\u${code.toString(16).padStart(4, '0')}`;
  });
}

/**
 * JSON text with the unsafe characters that `JSON.stringify` leaves raw (DEL, C1 controls,
 * bidirectional marks, line separators) written as `\uXXXX` escapes: the same JSON value,
 * safe to print or to open in a viewer.
 */
export function escapeJsonText(json: string): string {
  return json.replace(RAW_IN_JSON, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
}

/**
 * A chunk of JSON text's UTF-8 bytes (whole characters) with the unsafe characters escaped as
 * `escapeJsonText` escapes them: the same bytes unless they hold one. The bytes are searched for the
 * lead bytes of the characters to escape, which the native byte search finds at memory speed; only a
 * chunk that holds one of them is decoded and goes through the escape pass. A document's text is
 * nearly all numbers, names and keys, so the pass (a regular expression over every character) is
 * skipped for almost every chunk.
 */
export function escapedJsonChunk(bytes: Buffer): Buffer {
  return mayHoldRawUnsafe(bytes) ? Buffer.from(escapeJsonText(bytes.toString('utf8')), 'utf8') : bytes;
}

/**
 * Whether UTF-8 `bytes` hold a character of RAW_IN_JSON: DEL (7f), U+0080–U+009F (c2 80–c2 9f),
 * U+200E, U+200F, U+2028–U+202E (e2 80 8e, 8f, a8–ae) or U+2066–U+2069 (e2 81 a6–a9).
 */
function mayHoldRawUnsafe(bytes: Buffer): boolean {
  if (bytes.indexOf(0x7f) >= 0) return true;
  for (let i = bytes.indexOf(0xc2); i >= 0; i = bytes.indexOf(0xc2, i + 1)) {
    if (bytes[i + 1]! <= 0x9f) return true;
  }
  for (let i = bytes.indexOf(0xe2); i >= 0; i = bytes.indexOf(0xe2, i + 1)) {
    const second = bytes[i + 1];
    const third = bytes[i + 2]!;
    if (second === 0x80 && (third === 0x8e || third === 0x8f || (third >= 0xa8 && third <= 0xae))) return true;
    if (second === 0x81 && third >= 0xa6 && third <= 0xa9) return true;
  }
  return false;
}
