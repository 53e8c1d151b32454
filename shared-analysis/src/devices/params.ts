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
