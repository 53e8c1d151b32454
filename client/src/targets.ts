// Pure helpers that decide which element a command acts on: the card under the cursor and matching mirror outputs.

/** The element name a card line declares (its first word), when the line is an element card. */
export function elementNameOfLine(lineText: string): string | undefined {
  const m = /^[ \t]*([A-Za-z][^\s=(){};'"]*)/.exec(lineText);
  return m ? m[1] : undefined;
}

/**
 * The element a command should act on with the cursor on line `line`: the element that line's
 * card declares, wherever on the line the cursor is. A continuation line (`+`) belongs to the
 * card above it; comment lines and dot cards declare no element, so they give undefined.
 */
export function elementAtLine(getLine: (line: number) => string, line: number): string | undefined {
  let n = line;
  // Bounded walk up through the card's continuation lines.
  for (let steps = 0; n >= 0 && steps < 10000; steps++, n--) {
    const text = getLine(n);
    if (!/^[ \t]*\+/.test(text)) return elementNameOfLine(text);
  }
  return undefined;
}

/** True when the name is a resistor (first letter R, the trade's convention). */
export function isResistorName(name: string | undefined): name is string {
  return typeof name === 'string' && /^r/i.test(name);
}

/**
 * The mirror outputs a device name at the cursor refers to: the output with exactly that name
 * (case-insensitive), or, inside a subcircuit definition, every instance of it (`X1.MOUT`, `X2.MOUT`).
 */
export function outputsMatching<T extends { device: string }>(outputs: readonly T[], name: string): T[] {
  const lower = name.toLowerCase();
  const exact = outputs.filter((o) => o.device.toLowerCase() === lower);
  if (exact.length > 0) return exact;
  return outputs.filter((o) => o.device.toLowerCase().endsWith(`.${lower}`));
}
