// The fix for an implausible bias point caused by a mistyped value: write what was most likely meant, offered only when a re-solve shows the point becomes plausible.

import type { Circuit, Element } from '../circuit';
import { IMPLAUSIBLE_CURRENT_A } from '../checks/plausibility';
import type { DcSolver } from '../solve/dc';
import type { OperatingPoint, SolveOptions } from '../solve/types';
import { railsByIndex } from '../structures/rails';
import type { Finding, Fix } from '../types';
import { formatMeasured } from './format';
import { valueEdit } from './resistor-for-current';

/** The marker `attachFixes` puts in `data.sizing` of a plausibility finding whose suspect value can be rewritten. */
export interface RewriteRequest {
  kind: 'rewrite';
  /** The resistor or current source whose value is suspect. */
  element: string;
  /** The text to write, and the value it reads as. */
  text: string;
  value: number;
  /** What must hold after the change: a device below the implausible current, or a node back within the rails. */
  check: { device: string } | { node: string };
}

/** The rewrite request of a `current-implausible` or `node-outside-rails` finding, from the first suspect in its data. */
export function rewriteRequestOf(f: Finding): RewriteRequest | undefined {
  if (f.code !== 'current-implausible' && f.code !== 'node-outside-rails') return undefined;
  const suspects = f.data?.['suspects'];
  const first = Array.isArray(suspects) ? (suspects[0] as Record<string, unknown> | undefined) : undefined;
  if (!first || typeof first['element'] !== 'string' || typeof first['meant'] !== 'string' || typeof first['meantValue'] !== 'number') return undefined;
  const check = typeof f.data?.['device'] === 'string' ? { device: f.data['device'] as string } : typeof f.data?.['node'] === 'string' ? { node: f.data['node'] as string } : undefined;
  if (!check) return undefined;
  return { kind: 'rewrite', element: first['element'], text: first['meant'], value: first['meantValue'], check };
}

/** A well-formed rewrite request in `data.sizing`, or undefined. */
export function rewriteRequest(f: Finding): RewriteRequest | undefined {
  const m = f.data?.['sizing'] as Record<string, unknown> | undefined;
  if (!m || m['kind'] !== 'rewrite') return undefined;
  const check = m['check'] as Record<string, unknown> | undefined;
  if (typeof m['element'] !== 'string' || typeof m['text'] !== 'string' || typeof m['value'] !== 'number' || !Number.isFinite(m['value']) || !check) return undefined;
  const c = typeof check['device'] === 'string' ? { device: check['device'] } : typeof check['node'] === 'string' ? { node: check['node'] } : undefined;
  if (!c) return undefined;
  return { kind: 'rewrite', element: m['element'], text: m['text'], value: m['value'], check: c };
}

/** Every flattened copy of the card an element came from (a resistor inside a subcircuit has one per instance). */
function copiesOf(circuit: Circuit, el: Element): Element[] {
  return circuit.elements.filter((e) => e.kind === el.kind && e.origin.uri === el.origin.uri && e.origin.span.start === el.origin.span.start);
}

/**
 * The fix of a rewrite request: the suspect value written as meant, offered only when the circuit,
 * re-solved with it (every copy of the card changed), converges and the device then carries less
 * than an ampere or the node lies within the rails again. Its title says what the change gives.
 */
export function rewriteFixes(request: RewriteRequest, circuit: Circuit, solver: DcSolver, temperatureC: number | undefined): Fix[] {
  const el = circuit.elements.find((e) => e.name.toLowerCase() === request.element.toLowerCase());
  if (!el || (el.kind !== 'R' && el.kind !== 'I')) return [];
  const edit = valueEdit(el.origin.uri, el.origin, request.text);
  if (!edit) return [];
  const copies = copiesOf(circuit, el);
  const options: SolveOptions = { temperatureC };
  if (el.kind === 'R') {
    // The written value is per part: the effective resistance divides by the card's M.
    const m = el.m ?? 1;
    options.resistances = Object.fromEntries(copies.map((c) => [c.name, request.value / m]));
  } else options.sourceValues = Object.fromEntries(copies.map((c) => [c.name, request.value]));
  const result = solver.solve(options);
  if (!result.op.converged || result.findings.some((f) => f.code === 'dc-override-refused')) return [];
  const outcome = outcomeText(result.op, circuit, request);
  if (!outcome) return [];
  const unit = el.kind === 'R' ? 'Ω' : 'A';
  return [
    {
      title: `Write ${request.text} for ${el.name} (${formatMeasured(request.value, unit)})${copies.length > 1 ? ' in the subcircuit definition (every instance changes)' : ''}: ${outcome}`,
      preferred: true,
      edits: [edit],
    },
  ];
}

/** What the re-solved point says about the checked device or node, or undefined when it is still implausible. */
function outcomeText(op: OperatingPoint, circuit: Circuit, request: RewriteRequest): string | undefined {
  if ('device' in request.check) {
    const rec = op.devices[request.check.device];
    if (!rec) return undefined;
    const i = rec.type === 'bjt' ? Math.max(Math.abs(rec.ic), Math.abs(rec.ib), Math.abs(rec.ie)) : rec.type === 'mosfet' || rec.type === 'jfet' ? Math.abs(rec.id) : rec.type === 'diode' ? Math.abs(rec.id) : Math.abs(rec.current);
    if (!(i < IMPLAUSIBLE_CURRENT_A)) return undefined;
    return `${request.check.device} then carries ${formatMeasured(i, 'A')}`;
  }
  const v = op.nodes[request.check.node];
  if (v === undefined || !Number.isFinite(v)) return undefined;
  let low = 0;
  let high = 0;
  for (const r of railsByIndex(circuit).values()) {
    low = Math.min(low, r.volts);
    high = Math.max(high, r.volts);
  }
  const margin = Math.max(1, high - low);
  if (v > high + margin || v < low - margin) return undefined;
  return `${request.check.node} then sits at ${formatMeasured(v, 'V')}`;
}
