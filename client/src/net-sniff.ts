// Decides whether a `.net` file is a SPICE-style netlist (the extension claims it) or another tool's netlist (left alone).

/** How many lines are read at most: the first cards decide. */
const LINES_READ = 60;
/**
 * The fewest fields after the name an element card of each letter has in the family's syntax
 * (nodes, then a value, model or controlling source): R1 a b 1k has three.
 */
const MIN_FIELDS: Record<string, number> = { R: 3, C: 3, L: 3, V: 2, I: 2, B: 3, K: 3, D: 3, X: 2, E: 5, G: 5, F: 4, H: 4, Q: 4, J: 4, Z: 4, W: 4, M: 5, S: 5 };
/** An element name: a letter, then no separator or bracket. */
const ELEMENT_NAME = /^[A-Za-z][^\s=(){}]*$/;

function isElementCard(line: string): boolean {
  const fields = line.trim().split(/[\s,]+/);
  const name = fields[0] ?? '';
  if (!ELEMENT_NAME.test(name)) return false;
  const least = MIN_FIELDS[name.charAt(0).toUpperCase()];
  return least !== undefined && fields.length - 1 >= least;
}
/** A dot card: `.model`, `.subckt`, `.include`, `.param`, `.end` … */
const DOT_CARD = /^\s*\.[A-Za-z]+\b/;

/**
 * True when the text reads as a SPICE-style netlist by its first cards. The first line is the
 * title (any text), unless it already reads as a card or as another format's opening: a line that
 * opens with `(`, `<`, `{`, `[` or `%` is an s-expression, XML, JSON or other tool's file. After the
 * title, blank lines and comments (`*`, `;`) are skipped; the first other line must be a dot card or
 * an element card with as many fields as its letter needs (or a `+` continuation), and at least
 * one card must be found.
 */
export function readsAsSpiceNetlist(text: string): boolean {
  const lines = text.replace(/^\uFEFF/, '').split(/\r\n|\r|\n/, LINES_READ);
  const title = lines[0] ?? '';
  if (/^\s*[(<{[%]/.test(title)) return false;
  let cards = 0;
  for (const line of lines.slice(1)) {
    if (/^\s*$/.test(line) || /^\s*[*;]/.test(line)) continue;
    if (/^\s*\+/.test(line)) {
      if (cards === 0) return false;
      continue;
    }
    if (DOT_CARD.test(line) || isElementCard(line)) {
      cards++;
      if (cards >= 3) return true;
      continue;
    }
    return false;
  }
  return cards > 0;
}

/** A `.net` file no other extension has claimed: it opened as plain text. Only such files are read to decide. */
export function isUnclaimedNetFile(doc: { languageId: string; uri: { path: string } }): boolean {
  return doc.languageId === 'plaintext' && /\.net$/i.test(doc.uri.path);
}
