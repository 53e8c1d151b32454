// A corner phase's spread result on its way to the main thread. After a value edit most outputs keep their records
// (`keptSpread` in the engine), so only the outputs whose record is not the one the main thread already holds cross,
// instead of every output's record and every source of spread being cloned and rebuilt each time.

import { sourceColumnsOf, sourceSummaries } from '../../shared-analysis/src/variation/index';
import type { OutputVariation, SourceSummary, VariationResult } from '../../shared-analysis/src/variation/types';

/**
 * A spread result as posted. Output o is `outputs[o]`, or output o of the held result `base` where that is null; the
 * sources are the base's when `sources` is absent. Without `base`, every output and the sources are here.
 */
export interface SpreadMessage {
  /** Names this result, for the next message to be told against it (unique across workers: the worker's thread id leads). */
  id: string;
  base?: string;
  outputs: (OutputVariation | null)[];
  sources?: SourceSummary[];
  stats: VariationResult['stats'];
}

/** The worker's side: the last spread result posted for each root. */
export class SpreadSender {
  private count = 0;
  private readonly posted = new Map<string, { id: string; result: VariationResult }>();

  constructor(private readonly prefix: string) {}

  /** The message for root `uri`'s `result`, told against the last result posted for it when the main thread holds that one (`held`). */
  message(uri: string, result: VariationResult, held: string | undefined): SpreadMessage {
    const id = `${this.prefix}.${++this.count}`;
    const last = this.posted.get(uri);
    this.posted.set(uri, { id, result });
    const base = last !== undefined && last.id === held ? last.result : undefined;
    if (!base) return { id, outputs: result.outputs, sources: result.sources, stats: result.stats };
    const outputs = result.outputs.map((o, k) => (base.outputs[k] === o ? null : o));
    return { id, base: last!.id, outputs, ...(sameSources(base, result) ? {} : { sources: result.sources }), stats: result.stats };
  }

  forget(uri: string): void {
    this.posted.delete(uri);
  }
}

/** Whether two results list the same sources of spread (read from their columns while the lists are not made; the same columns after a value edit that kept them). */
function sameSources(a: VariationResult, b: VariationResult): boolean {
  const columns = sourceColumnsOf(a);
  if (columns !== undefined && columns === sourceColumnsOf(b)) return true;
  const x = sourceSummaries(a);
  const y = sourceSummaries(b);
  if (x.length !== y.length) return false;
  for (let k = 0; k < x.length; k++) {
    const p = x.at(k);
    const q = y.at(k);
    if (p.name !== q.name || p.kind !== q.kind || !Object.is(p.figure, q.figure) || p.from !== q.from) return false;
  }
  return true;
}

/** The main thread's side: the spread result it holds for each root, which the next message may be told against. */
export class SpreadReceiver {
  private readonly held = new Map<string, { id: string; result: VariationResult }>();

  /** The id of the result held for `uri`, for the next corner request. */
  heldId(uri: string): string | undefined {
    return this.held.get(uri)?.id;
  }

  /** The result a message stands for, now held for `uri`; undefined when it is told against a result not held. */
  takeIn(uri: string, msg: SpreadMessage): VariationResult | undefined {
    const base = msg.base !== undefined ? this.held.get(uri) : undefined;
    if (msg.base !== undefined && base?.id !== msg.base) return undefined;
    const outputs = msg.outputs.map((o, k) => o ?? base!.result.outputs[k]);
    // Field by field, in the order the engine makes them.
    const result = { outputs, sources: msg.sources ?? base!.result.sources, stats: msg.stats } as VariationResult;
    this.held.set(uri, { id: msg.id, result });
    return result;
  }

  forget(uri: string): void {
    this.held.delete(uri);
  }
}
