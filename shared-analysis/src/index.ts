// Public entry of the engine: the facade, its data types, and the helpers hosts need.

export { analyse, applySeverities, type AnalysisInput } from './service';
export * from './analysis';
export * from './types';
export type * from './circuit';
export type * from './syntax/ast';
export type * from './solve/types';
export type * from './structures/types';
export { LineIndex } from './syntax/line-index';
