// Answers "size this resistor for a target current" in the worker: reads the typed target, runs the engine's sizing, and words the candidates.

import type { Analysis } from '../../shared-analysis/src/analysis';
import { parseNumber } from '../../shared-analysis/src/elaborate/units';
import { formatEngineering } from '../../shared-analysis/src/fixes/format';
import { resistorValueText } from '../../shared-analysis/src/fixes/index';
import { sizeResistorForCurrent, valueEdit } from '../../shared-analysis/src/fixes/resistor-for-current';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import type { Structure } from '../../shared-analysis/src/structures/types';
import type { ParsedDocument } from '../../shared-analysis/src/syntax/ast';
import type { Span } from '../../shared-analysis/src/types';
import type { SizingData } from './worker-messages';

/** What `sizeResistor` works on besides the analysis. */
export interface SizeResistorContext {
  /** The analysed documents by uri; only their `text` is read (to keep the card's M= multiplier when writing the value). */
  documents: Record<string, ParsedDocument>;
  /** Converts an engine span of a document into an LSP range in the client's encoding. */
  toRange: (uri: string, span: Span) => SizingData['candidates'][number]['range'] | undefined;
  /** The prepared solver of the analysed circuit, when the host kept one (else a new one is built). */
  solver?: DcSolver;
}

/** The structure a resistor sets the current of: as its reference resistor, or as the emitter (source) resistor of the reference or of an output. */
export function structureOfResistor(structures: Structure[], resistor: string): Structure | undefined {
  const lower = resistor.toLowerCase();
  const named = (d: { resistor: string } | undefined) => d !== undefined && d.resistor.toLowerCase() === lower;
  return (
    structures.find((s) => s.reference.elements.some((r) => r.toLowerCase() === lower)) ??
    structures.find((s) => named(s.reference.degeneration) || s.outputs.some((o) => named(o.degeneration)))
  );
}

/** Standard-value candidates for `resistor` so that its structure's output (or its own) current meets `targetText`. */
export function sizeResistor(analysis: Analysis, resistor: string, targetText: string, ctx: SizeResistorContext): SizingData | { error: string } {
  const circuit = analysis.circuit;
  if (!circuit) return { error: 'The netlist has no elaborated circuit (see its findings), so nothing can be sized.' };
  const parsed = parseNumber(String(targetText ?? '').trim());
  if (!parsed.ok) return { error: `The target current "${targetText}" is not a number: ${parsed.message}` };
  const target = Math.abs(parsed.value);
  if (!(target > 0) || !Number.isFinite(target)) return { error: `The target current must be a positive number of amperes, e.g. 250u or 1.2mA; got "${targetText}".` };
  const lower = resistor.toLowerCase();
  let el = circuit.elements.find((e) => e.name.toLowerCase() === lower);
  if (!el) {
    // A card inside a subcircuit body is named by its instances (X1.RSET); accept the bare card name when it is unambiguous.
    const inner = circuit.elements.filter((e) => e.kind === 'R' && e.name.toLowerCase().endsWith(`.${lower}`));
    if (inner.length > 1) {
      return { error: `${resistor} is inside a subcircuit used ${inner.length} times (${inner.map((e) => e.name).join(', ')}); name one instance, and note that the new value changes them all.` };
    }
    el = inner[0];
  }
  if (!el || el.kind !== 'R') return { error: `${resistor} is not a resistor of this netlist.` };
  if (!el.origin.valueSpan) return { error: `${resistor} has no value field that could be rewritten.` };
  if (resistorValueText(el, ctx.documents, el.resistance) === undefined) {
    return { error: `The value of ${el.name} is not a plain number (an expression, a parameter or unreadable text); qpoint does not overwrite it with a number.` };
  }
  const structure = structureOfResistor(analysis.structures, el.name);
  const series = analysis.options.resistorSeries;
  const result = sizeResistorForCurrent({
    circuit,
    solver: ctx.solver ?? new DcSolver(circuit),
    structure,
    resistor: el.name,
    target,
    series,
    temperatureC: analysis.operatingPoint?.temperatureC,
    point: analysis.operatingPoint,
  });
  if (result.candidates.length === 0) return { error: result.problem ?? `No standard value of the ${series} series could be found for ${el.name}.` };
  const what = `current of ${result.device}`;
  const candidates: SizingData['candidates'] = [];
  for (const c of result.candidates) {
    // The written value differs from the effective one when the card has M= (R1 a b 7.8k m=2 is 3.9 kΩ).
    const written = resistorValueText(el, ctx.documents, c.value);
    const edit = written === undefined ? undefined : valueEdit(el.origin.uri, el.origin, written);
    const range = edit && ctx.toRange(edit.uri, edit.span);
    if (!edit || !range || written === undefined) continue;
    const effective = written === c.valueText ? '' : ` (${c.valueText} effective)`;
    candidates.push({
      label: `${written}${effective} (${series}) → ${formatEngineering(c.current, { unit: 'A' })}, ${formatSignedPercent(c.error)} from the target ${what}`,
      valueText: written,
      current: c.current,
      error: c.error,
      edit,
      range,
    });
  }
  if (candidates.length === 0) return { error: `The value of ${el.name} cannot be rewritten in place.` };
  return { ideal: result.ideal, candidates, problem: result.problem, version: analysis.version };
}

function formatSignedPercent(ratio: number): string {
  if (!Number.isFinite(ratio)) return 'unknown error';
  const p = ratio * 100;
  return `${p >= 0 ? '+' : '−'}${Math.abs(p).toFixed(Math.abs(p) < 10 ? 1 : 0)} %`;
}
