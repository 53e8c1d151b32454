// The re-solve every resistor fix passes before it is offered: what the change does to each output of the structure.

import { TECHNOLOGIES } from '../structures/technology';
import type { Circuit } from '../circuit';
import type { Solves } from './resistor-for-current';
import type { OperatingPoint } from '../solve/types';
import { measureStructure, type Measurement } from '../structures/measure';
import { isBipolar } from '../structures/topology';
import type { Structure } from '../structures/types';

/** A structure measured at an operating point solved with some resistances changed. */
export interface Resolved {
  op: OperatingPoint;
  m: Measurement;
  /** The solver's unknowns at `op`, where a re-solve of a nearby change can start. */
  x: Float64Array;
}

/**
 * Solves the circuit with `resistances` (element name -> ohms) in effect and measures the structure;
 * undefined when it does not converge or a value is refused. `start` is where Newton starts (the
 * solver's own unknowns of an earlier point), cold when absent.
 */
export function resolveWith(
  circuit: Circuit,
  solver: Solves,
  s: Structure,
  resistances: Record<string, number>,
  temperatureC: number | undefined,
  start?: Float64Array,
): Resolved | undefined {
  const result = solver.solve(start ? { temperatureC, resistances, initialGuess: start } : { temperatureC, resistances });
  if (!result.op.converged || result.findings.some((f) => f.code === 'dc-override-refused')) return undefined;
  return { op: result.op, m: measureStructure(circuit, result.op, s), x: result.x };
}

/** The words for an output out of its active region in its technology. */
function outWord(s: Structure): string {
  return TECHNOLOGIES[s.technology].beyondState;
}

/**
 * What a change does to the structure's other outputs, for a fix title: `; Q4 stays saturated`
 * or `; Q4 saturates`, with the reason a saturated bipolar output matters to the others (it draws
 * extra base current from the shared line). `clean` is true when, re-solved, every output of the
 * structure is in its active region. `except` is the output the fix is about (its own state is in
 * the title already). `before` is the structure measured without the change, or a function that
 * gives it when first needed (a caller verifying several values solves it once); without it, it is
 * solved here. `start` is where the changed circuit's solve starts (see `resolveWith`): a circuit with
 * more than one operating point keeps the state it starts nearest. Undefined when the circuit does
 * not converge with the change.
 */
export function regionChanges(
  circuit: Circuit,
  solver: Solves,
  s: Structure,
  resistances: Record<string, number>,
  temperatureC: number | undefined,
  except?: string,
  before?: Measurement | (() => Measurement | undefined),
  start?: Float64Array,
): { text: string; clean: boolean; after: Resolved } | undefined {
  const after = resolveWith(circuit, solver, s, resistances, temperatureC, start);
  if (!after) return undefined;
  const base = typeof before === 'function' ? before() : before ?? resolveWith(circuit, solver, s, {}, temperatureC)?.m;
  const parts: string[] = [];
  const exceptLower = except?.toLowerCase();
  for (const o of s.outputs) {
    if (o.device.toLowerCase() === exceptLower) continue;
    if (!after.m.outOfRegion.includes(o.device)) continue;
    parts.push(`${o.device} ${base?.outOfRegion.includes(o.device) ? 'stays' : 'becomes'} ${outWord(s)}`);
  }
  let text = parts.length ? `; ${parts.join(', ')}` : '';
  if (parts.length && isBipolar(s.technology) && s.outputs.length > 1) text += ' (its extra base current lowers the other outputs: fix it first)';
  return { text, clean: after.m.outOfRegion.length === 0, after };
}
