// What a spread analysis after a value edit keeps of the last one: the records of the outputs the edit cannot reach (docs/VARIATION.md).

import { uint8Column } from '../columns';
import type { SourceColumns, VariedParameters } from './index';
import type { OutputSpec } from './outputs';
import { sameFigures, type SourceList, type ToleranceSource } from './sources';
import type { OutputVariation } from './types';

/** The part of a finished spread analysis the next one may keep (see `keptSpread` in incremental.ts). */
export interface SpreadRecord {
  specs: readonly OutputSpec[];
  /** How many of `specs` are the structures' outputs (the target elements' follow). */
  structureSpecs: number;
  /** The tolerance sources, which the next analysis patches after a value edit (`patchedSources`). */
  sourceList: SourceList;
  /** The columns the result read its sources from, when they were not made (the next result shares them when it shows the same: `attachSources`). */
  sourceColumns: SourceColumns | undefined;
  /** The varied parameters, which the next analysis with a patched source list follows (`followedParameters`). */
  varied: VariedParameters;
  outputs: readonly OutputVariation[];
  /** Per output, the tolerance sources its row holds and its derivatives with respect to them (`SourceRows` of the variation analysis). */
  rows: { start: Int32Array; index: Int32Array; value: Float64Array };
  /** Per output, 1 when every figure of its record is finite (a record with one that is not is made again: the finiteness walk rewrote it). */
  finite: Uint8Array;
}

/** What a spread analysis may keep of the last one: its record, and which outputs an edit since may have moved. */
export interface SpreadReuse {
  last: SpreadRecord;
  /** The elements whose resistance differs from the last analysis's. */
  changed: Int32Array;
  /** Whether an output's value or derivatives may differ from the last analysis's: one of its terms lies in a part holding a changed resistor. */
  reached: (spec: OutputSpec) => boolean;
  /**
   * The elements (1 per element) whose equations the adjoints of `outputs` can reach: the parts holding their terms and
   * the sources holding rails; undefined when that is not known. `sensitivities` checks every adjoint against it.
   */
  scope: (outputs: readonly OutputSpec[]) => Uint8Array | undefined;
}

/**
 * Per output, 1 when its record is the last analysis's: the outputs are the last ones (same keys in the same order),
 * the sources are the last ones (same parameters in the same order: a list patched from the last one, or one compared), the output is not reached by the edit, no source
 * its row holds has a changed figure, its target window is the same and its last record was finite and holds no Monte
 * Carlo figures. Undefined when
 * nothing can be kept.
 */
export function keptOutputs(reuse: SpreadReuse, specs: readonly OutputSpec[], list: SourceList, windowOf: (spec: OutputSpec) => { current: number; tolerance: number } | undefined): Uint8Array | undefined {
  const last = reuse.last;
  if (!sameOutputs(last.specs, specs)) return undefined;
  // A list patched from the last one knows which sources it made again.
  const changed = list.changed ?? changedSources(last.sourceList.sources, list.sources);
  if (!changed) return undefined;
  const kept = uint8Column(specs.length);
  const { start, index } = last.rows;
  for (let o = 0; o < specs.length; o++) {
    // A record a host gave Monte Carlo figures (the worker's finished run writes them into its analysis's outputs) is made again without them.
    if (!last.finite[o] || last.outputs[o].monteCarlo !== undefined || reuse.reached(specs[o])) continue;
    if (!sameWindow(last.outputs[o].target, windowOf(specs[o]))) continue;
    let moved = false;
    for (let q = start[o]; q < start[o + 1] && !moved; q++) moved = changed[index[q]] === 1;
    if (!moved) kept[o] = 1;
  }
  return kept;
}

function sameOutputs(a: readonly OutputSpec[], b: readonly OutputSpec[]): boolean {
  if (a.length !== b.length) return false;
  for (let o = 0; o < a.length; o++) if (a[o].key !== b[o].key) return false;
  return true;
}

/** Per source, 1 when its figures differ from the last list's; undefined when the lists vary other parameters or name them otherwise. */
function changedSources(before: readonly ToleranceSource[], now: readonly ToleranceSource[]): Uint8Array | undefined {
  if (before.length !== now.length) return undefined;
  const changed = uint8Column(now.length);
  for (let k = 0; k < now.length; k++) {
    const a = before[k];
    const b = now[k];
    if (!sameParameter(a, b)) return undefined;
    if (!sameFigures(a, b)) changed[k] = 1;
  }
  return changed;
}

/** Whether two sources vary the same parameter under the same names. */
function sameParameter(a: ToleranceSource, b: ToleranceSource): boolean {
  const p = a.parameter;
  const q = b.parameter;
  if (p.kind !== q.kind || a.label !== b.label || a.group !== b.group || a.aspect !== b.aspect || a.element !== b.element || a.partSpread !== b.partSpread) return false;
  if (p.kind === 'temperature' || q.kind === 'temperature') return p.kind === q.kind;
  return p.element === q.element && (p.kind !== 'model' || (q.kind === 'model' && p.param === q.param));
}

function sameWindow(last: OutputVariation['target'], now: { current: number; tolerance: number } | undefined): boolean {
  if (!last || !now) return !last && !now;
  return last.current === now.current && last.tolerance === now.tolerance;
}
