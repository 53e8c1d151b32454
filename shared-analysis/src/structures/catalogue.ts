// The registry of structure kinds, in the order their recognisers are tried (most specific first), and the lookups shared code uses.

import type { KindModule } from './kind';
import { bandgapCore } from './kinds/bandgap-core';
import { betaMultiplier } from './kinds/beta-multiplier';
import { cascodeMirror } from './kinds/cascode-mirror';
import { degeneratedMirror } from './kinds/degenerated-mirror';
import { diodeReferencedSource } from './kinds/diode-referenced-source';
import { helperMirror } from './kinds/helper-mirror';
import { improvedWilsonMirror } from './kinds/improved-wilson-mirror';
import { jfetSelfBiasedSource } from './kinds/jfet-self-biased-source';
import { ptatCell } from './kinds/ptat-cell';
import { regulatedSource } from './kinds/regulated-source';
import { simpleMirror } from './kinds/simple-mirror';
import { vbeMultiplier } from './kinds/vbe-multiplier';
import { wideSwingCascode } from './kinds/wide-swing-cascode';
import { widlarSource } from './kinds/widlar-source';
import { wilsonMirror } from './kinds/wilson-mirror';
import type { Structure, StructureKind } from './types';

/**
 * Every kind, in the order recognition tries them. A kind that contains another's pattern comes
 * before it and claims its devices, so a Wilson mirror is not also reported as the simple mirror
 * inside it. `test/unit/structures/catalogue.test.ts` checks the order and that every kind has its
 * module, entry, tests and README row.
 */
export const KINDS: readonly KindModule[] = [
  wideSwingCascode,
  cascodeMirror,
  improvedWilsonMirror,
  wilsonMirror,
  helperMirror,
  vbeMultiplier,
  bandgapCore,
  ptatCell,
  betaMultiplier,
  degeneratedMirror,
  widlarSource,
  diodeReferencedSource,
  regulatedSource,
  jfetSelfBiasedSource,
  simpleMirror,
];

const BY_ID = new Map<StructureKind, KindModule>(KINDS.map((k) => [k.id, k]));

/** The module of a kind (throws for an id no module declares: a structure built by hand with a typo). */
export function kindOf(id: StructureKind): KindModule {
  const k = BY_ID.get(id);
  if (!k) throw new Error(`no structure kind '${String(id)}'`);
  return k;
}

/** The kind's name in running text ("Widlar current source"); a kind no module declares reads as its id in words. */
export function kindName(id: StructureKind): string {
  return BY_ID.get(id)?.name ?? String(id).replace(/-/g, ' ');
}

/** What an output of the kind is called ("Widlar output"). A degenerated output of a simple mirror is a Widlar output. */
export function outputKindName(s: Pick<Structure, 'kind' | 'outputs'>, device: string): string {
  const o = s.outputs.find((x) => x.device.toLowerCase() === device.toLowerCase());
  if (o?.degeneration && s.kind === 'simple-mirror') return widlarSource.outputName;
  return BY_ID.get(s.kind)?.outputName ?? 'output';
}

/** VBE/VGS drops stacked between a structure's reference node and its common node: one fact, read by every check and fix. */
export function referenceJunctions(s: Pick<Structure, 'kind'>): number {
  return BY_ID.get(s.kind)?.referenceJunctions ?? 1;
}

/** First letter upper case, for headings ("Widlar current source" stays, "simple current mirror" → "Simple current mirror"). */
export function capitalised(text: string): string {
  return text.length > 0 ? text[0].toUpperCase() + text.slice(1) : text;
}
