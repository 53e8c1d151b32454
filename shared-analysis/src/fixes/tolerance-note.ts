// The edit that writes a tighter tolerance on an element's card (`; tol 1%`), as the spread analysis reads it (docs/VARIATION.md).

import type { Element } from '../circuit';
import { endOfLineComments } from '../checks/targets';
import type { ParsedDocument } from '../syntax/ast';
import type { TextEdit } from '../types';
import { TOLERANCE_NOTE } from '../variation/sources';
import { maxOf } from '../arrays';
import { cardAt } from '../features/document-index';

/** A tolerance as the note writes it: `1`, `0.25`, `0.1` (percent, at most three figures). */
export function tolerancePercentText(tolerance: number): string {
  return String(+(tolerance * 100).toPrecision(3));
}

/**
 * The edit that makes the card of `el` say `tolerance` (a fraction), so the spread analysis reads
 * that figure for it: the figure of the note the card already has replaced, else `; tol X%`
 * appended after its last token, or at the end of its comment when that comment is prose. A card
 * whose comment holds a target (`; expect 1mA`) gets no edit: text after a target makes it
 * unreadable. Undefined too when the card is not in the documents (every instance of a
 * subcircuit's card shares its note, so a fix there tightens them all).
 */
export function toleranceNoteEdit(documents: Record<string, ParsedDocument>, el: Element, tolerance: number): TextEdit | undefined {
  const uri = el.origin.uri;
  const doc = documents[uri];
  // By binary search over the document's cards: an array can carry thousands of these findings.
  const found = doc ? cardAt(doc, el.origin.span.start) : undefined;
  const card = found?.kind === 'element' && found.span.start === el.origin.span.start ? found : undefined;
  if (!doc || !card || card.tokens.length === 0) return undefined;
  const figure = tolerancePercentText(tolerance);
  const comments = endOfLineComments(doc.text, card);
  // The note read is the last comment's that has one (`readCardTolerances`).
  for (let k = comments.length - 1; k >= 0; k--) {
    const c = comments[k];
    const m = TOLERANCE_NOTE.exec(doc.text.slice(c.start, c.end));
    if (!m) continue;
    const at = c.start + m.index + m[0].lastIndexOf(m[1]);
    return { uri, span: { start: at, end: at + m[1].length }, newText: figure };
  }
  const note = ` ; tol ${figure}%`;
  if (comments.length === 0) {
    const end = maxOf(card.tokens.map((t) => t.span.end));
    return { uri, span: { start: end, end }, newText: note };
  }
  const last = comments[comments.length - 1];
  if (comments.some((c) => /expect/i.test(doc.text.slice(c.start, c.end)))) return undefined;
  let end = last.end;
  while (end > last.start && /\s/.test(doc.text[end - 1])) end--;
  return { uri, span: { start: end, end }, newText: note };
}
