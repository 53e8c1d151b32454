// Public face of the syntax layer: the parser, the line index and the card types.

export { parse, isNumberLike, unquote, isKnownDotCommand, startsWithDefinitionCard } from './parser';
export { LineIndex } from './line-index';
export type { PositionEncoding, Position } from './line-index';
export type * from './ast';
