// Reading device parameters defensively: a value the equations cannot use is replaced and reported, never propagated as NaN.

import type { Element, Model } from '../circuit';
import { MODEL_DEFAULTS } from '../circuit';

/** One parameter the solver could not use as given, and what it used instead. */
export interface ParamIssue {
  element: Element;
  /** Upper-case parameter name (`BF`, `AREA`, `L`). */
  name: string;
  given: number;
  used: number;
  /** Why the given value is unusable, as a sentence fragment ("must be positive"). */
  rule: string;
  /** True when the issue sits in the .model card rather than on the element card. */
  inModel: boolean;
}

/** A rule a parameter must satisfy. */
export type ParamRule = 'finite' | 'non-negative' | 'positive' | 'positive-or-infinite';

const RULE_TEXT: Record<ParamRule, string> = {
  finite: 'must be a finite number',
  'non-negative': 'must be a finite number of zero or more',
  positive: 'must be a finite positive number',
  'positive-or-infinite': 'must be positive (or left unset for no effect)',
};

function satisfies(v: number, rule: ParamRule): boolean {
  switch (rule) {
    case 'finite':
      return Number.isFinite(v);
    case 'non-negative':
      return Number.isFinite(v) && v >= 0;
    case 'positive':
      return Number.isFinite(v) && v > 0;
    case 'positive-or-infinite':
      return v > 0; // +Infinity passes, NaN fails.
  }
}

/** Reads model parameter `name` (upper case), falling back to the docs/DEVICE-MODELS.md default when missing or unusable. */
export function modelParam(element: Element, model: Model, name: string, rule: ParamRule, issues: ParamIssue[]): number {
  const kind = model.kind === 'r' ? 'd' : model.kind;
  const fallback = MODEL_DEFAULTS[kind][name] ?? 0;
  const given = model.params[name];
  if (given === undefined) return fallback;
  if (satisfies(given, rule)) return given;
  issues.push({ element, name, given, used: fallback, rule: RULE_TEXT[rule], inModel: true });
  return fallback;
}

/** Reads an element-card quantity (area, M=, W, L); an unusable one is replaced by `fallback` and reported. */
export function elementParam(element: Element, name: string, given: number, rule: ParamRule, fallback: number, issues: ParamIssue[]): number {
  if (satisfies(given, rule)) return given;
  issues.push({ element, name, given, used: fallback, rule: RULE_TEXT[rule], inModel: false });
  return fallback;
}

/**
 * The parameters `reads` (upper-case name and rule) of each instance's model, for a table that reads
 * its instances in turn: read once per run of instances sharing one model object (every card of an
 * array names the same `.model`), where reading each parameter of each card with `modelParam` was
 * most of a device table's construction. An unusable value is reported for every instance that uses
 * it, in the order `modelParam` calls would report it.
 */
export class ModelReads {
  private model: Model | undefined;
  private readonly values: Float64Array;
  private found: ParamIssue[] = [];

  constructor(private readonly reads: readonly (readonly [string, ParamRule])[]) {
    this.values = new Float64Array(reads.length);
  }

  /** The values of `reads` for `element` (of its model `model`), in their order; the array is overwritten by the next model's. */
  of(element: Element, model: Model, issues: ParamIssue[]): Float64Array {
    if (model !== this.model) {
      this.found = [];
      for (let k = 0; k < this.reads.length; k++) this.values[k] = modelParam(element, model, this.reads[k][0], this.reads[k][1], this.found);
      this.model = model;
    }
    for (const issue of this.found) issues.push(issue.element === element ? issue : { ...issue, element });
    return this.values;
  }
}
