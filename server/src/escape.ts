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
