// The element card as the parser keeps it, shared by the parser and by `movedCard`, which copies cards an edit moved.

import type { Assignment, ElementLetter, Token } from './ast';
import type { Span } from '../types';
import { trimmed } from '../arrays';

/**
 * The node list of an element card that has none, and the parameter list of one that gives none: one shared list,
 * frozen. A card's lists are read-only in its type, so nothing can push into the shared one.
 */
export const NO_TOKENS: readonly Token[] = Object.freeze([]);
export const NO_ASSIGNMENTS: readonly Assignment[] = Object.freeze([]);

/** A card's assignments as it keeps them: the shared empty list when there are none, else a list of their own length. */
export function keptAssignments(list: Assignment[]): readonly Assignment[] {
  return list.length === 0 ? NO_ASSIGNMENTS : trimmed(list);
}

/**
 * An element card as `parse` makes it: every card of a netlist is kept for the whole analysis, and most are
 * element cards. Made by a constructor, not a literal, so V8 reserves room inside the object for the fields a
 * letter adds after it is made (`value`, `model`, `source`, ...); a literal's object has room for its own fields
 * only and keeps later ones in a second object (docs/PERFORMANCE.md, "What the run keeps and the collector at 100k").
 * Its fields and their order are a literal's; only fields that are set exist.
 */
export class ParsedElementCard {
  kind: 'element' = 'element';
  letter: ElementLetter;
  name: Token;
  nodes: readonly Token[] = NO_TOKENS;
  params: readonly Assignment[] = NO_ASSIGNMENTS;
  span: Span;
  tokens: Token[];
  constructor(letter: ElementLetter, name: Token, span: Span, tokens: Token[]) {
    this.letter = letter;
    this.name = name;
    this.span = span;
    this.tokens = tokens;
  }
}
