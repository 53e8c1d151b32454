// Which model differences break a mirror's matching, and the one difference that is an intended ratio: bipolar models that differ only in IS.

import type { Model } from '../circuit';

/** Parameters whose difference between devices of one mirror breaks its matching. */
export const MATCH_PARAMS: Record<'bjt' | 'mos', string[]> = {
  bjt: ['IS', 'BF', 'VAF', 'NF', 'XTI', 'EG'],
  mos: ['KP', 'VTO', 'LAMBDA', 'GAMMA', 'PHI'],
};

/** Equal numbers, to a relative 1e-9 (both absent counts as equal). */
export function sameNumber(a: number | undefined, b: number | undefined): boolean {
  if (a === b) return true;
  if (a === undefined || b === undefined) return false;
  if (!Number.isFinite(a) || !Number.isFinite(b)) return a === b;
  return Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(b));
}

/**
 * IS(output)/IS(reference) when two bipolar models differ only in IS — a common way to write a
 * ratioed mirror, read like an emitter-area ratio (at one VBE, IC scales with IS: the transport
 * model of docs/DEVICE-MODELS.md) — else undefined.
 */
export function isOnlyRatio(model: Model, refModel: Model): number | undefined {
  if (model === refModel) return undefined;
  const differing = MATCH_PARAMS.bjt.filter((k) => !sameNumber(model.params[k], refModel.params[k]));
  const isR = refModel.params.IS ?? 1e-16;
  const isO = model.params.IS ?? 1e-16;
  return differing.length === 1 && differing[0] === 'IS' && isR > 0 && isO > 0 ? isO / isR : undefined;
}
