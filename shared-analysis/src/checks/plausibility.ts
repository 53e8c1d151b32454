// Plausibility of a bias network as a whole: an unpowered circuit, a small-signal part carrying amperes, a node far outside every rail, and the mistyped value that usually explains them.

import type { ResolvedOptions } from '../analysis';
import type { Circuit, Element } from '../circuit';
import { parseNumber, splitSuffix } from '../elaborate/units';
import { formatMeasured } from '../fixes/format';
import type { OperatingPoint } from '../solve/types';
import { namedPointReader, pointVectors } from '../solve/point';
import { railsByIndex } from '../structures/rails';
import { topologyOf, type Topology } from '../structures/topology';
import type { ParsedDocument } from '../syntax/ast';
import type { Finding, RelatedLocation, Severity, Span } from '../types';
import { powerLimit } from './devices/power';
import { pushAll } from '../arrays';

/** Every finding code this module owns, with its default severity and a one-line summary for the README. */
export const PLAUSIBILITY_CODES: Record<string, { severity: Severity; summary: string }> = {
  'circuit-not-powered': {
    severity: 'warning',
    summary: 'The circuit has no voltage or current source, or every source is 0: nothing is biased. Names the first line when it looks like a source read as the title.',
  },
  'current-implausible': {
    severity: 'warning',
    summary: 'A small-signal transistor or diode (one without its own RATEDPOWER) carries an ampere or more; points at the value that most likely causes it (an `M` suffix read as milli, a missing suffix).',
  },
  'node-outside-rails': {
    severity: 'warning',
    summary: 'A node sits far outside every rail (by more than the span of the rails); points at the value that most likely forces it there.',
  },
};

/** Everything `checkPlausibility` reads. */
export interface PlausibilityContext {
  circuit: Circuit;
  documents: Record<string, ParsedDocument>;
  /** The converged nominal point; absent when nothing was solved. */
  op?: OperatingPoint;
  options: ResolvedOptions;
}

/** A transistor or diode current at or above this is not a small-signal part's (common practice: such parts are rated 0.1–0.8 A). */
export const IMPLAUSIBLE_CURRENT_A = 1;

/** One value written in a way that often hides a slip, and what it most likely meant. */
export interface SuspectValue {
  element: Element;
  /** The value as written. */
  text: string;
  span: Span;
  /** What was read, in SI units. */
  value: number;
  /** Why it is suspect, as a sentence fragment ("1M is 1 mΩ; 1MEG is 1 MΩ"). */
  why: string;
  /** The text it most likely meant (`1meg`), and its value. */
  meant: { text: string; value: number };
}

/** Whether the circuit has something that drives it: a source of any kind with a non-zero value. */
export function isPowered(circuit: Circuit): boolean {
  return circuit.elements.some((e) => (e.kind === 'V' || e.kind === 'I') && Number.isFinite(e.dc) && e.dc !== 0);
}

/**
 * The plausibility findings: `circuit-not-powered` whenever nothing drives the circuit (whether
 * or not it was solved), and, at a converged point, `current-implausible` and `node-outside-rails`
 * with the suspect value that most likely explains each. Never throws.
 */
export function checkPlausibility(ctx: PlausibilityContext): Finding[] {
  const out: Finding[] = [];
  try {
    const unpowered = notPowered(ctx);
    if (unpowered) return [unpowered];
    if (ctx.op?.converged) {
      pushAll(out, implausibleCurrents(ctx));
      pushAll(out, nodesOutsideRails(ctx));
    }
  } catch {
    // A plausibility check is advice; a defect in it must not take the analysis down.
  }
  return out;
}

function finding(code: string, at: { uri: string; span: Span }, message: string, data: Record<string, unknown>, related?: RelatedLocation[]): Finding {
  return {
    code,
    severity: PLAUSIBILITY_CODES[code]!.severity,
    message,
    uri: at.uri,
    span: at.span,
    ...(related && related.length > 0 ? { related } : {}),
    data,
  };
}

/** `circuit-not-powered`, located on the title when it reads like a source, else on the first source or element. */
function notPowered(ctx: PlausibilityContext): Finding | undefined {
  const { circuit } = ctx;
  if (circuit.elements.length === 0 || isPowered(circuit)) return undefined;
  const sources = circuit.elements.filter((e) => e.kind === 'V' || e.kind === 'I');
  const root = Object.values(ctx.documents).find((d) => d.cards.some((c) => c.kind === 'title'));
  const title = root?.cards.find((c) => c.kind === 'title');
  const titleText = title && title.kind === 'title' ? title.text.trim() : '';
  const titleIsSource = /^[VvIi]\S*\s+\S+\s+\S+\s+(?:dc\s+)?[-+]?(?:\d|\.\d)/i.test(titleText);
  const what = sources.length === 0 ? 'it has no voltage or current source' : `every source is 0 (${sources.slice(0, 4).map((s) => s.name).join(', ')}${sources.length > 4 ? ', …' : ''})`;
  let message = `Nothing powers this circuit: ${what}, so every device sits at zero bias and no current or region below means anything.`;
  if (titleIsSource && root && title) {
    message += ` The first line, \`${titleText.length > 40 ? titleText.slice(0, 37) + '…' : titleText}\`, reads like a source but the first line of a netlist is its title; put a title line above it.`;
    return finding('circuit-not-powered', { uri: root.uri, span: title.span }, message, { sources: sources.map((s) => s.name), titleLooksLikeSource: true });
  }
  const at = sources[0] ?? circuit.elements[0]!;
  return finding('circuit-not-powered', at.origin, message, { sources: sources.map((s) => s.name), titleLooksLikeSource: false });
}

/** The value of a card as written, and its span. */
function writtenValue(el: Element, documents: Record<string, ParsedDocument>): { text: string; span: Span } | undefined {
  const span = el.origin.valueSpan;
  const doc = documents[el.origin.uri];
  if (!span || !doc) return undefined;
  return { text: doc.text.slice(span.start, span.end), span };
}

/**
 * Whether a resistor's or current source's written value looks like a slip that explains an
 * implausible point: a resistor whose `M` suffix reads as milli (`1M` is 1 mΩ; `1MEG` is
 * 1 MΩ), a resistor of a few ohms written without a suffix where a bias resistor has kilohms,
 * a current source of amperes written without a suffix. Values written as expressions are
 * not judged.
 */
export function suspectValue(el: Element, documents: Record<string, ParsedDocument>): SuspectValue | undefined {
  if (el.kind !== 'R' && el.kind !== 'I') return undefined;
  const written = writtenValue(el, documents);
  if (!written) return undefined;
  const m = /^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)([A-Za-zµμ]*)$/.exec(written.text.trim());
  if (!m) return undefined;
  const read = parseNumber(written.text.trim());
  if (!read.ok) return undefined;
  const { suffix } = splitSuffix(m[2]!);
  const base = { element: el, text: written.text, span: written.span, value: read.value };
  if (el.kind === 'R') {
    if (suffix.toLowerCase() === 'm' && m[2]![0] === 'M') {
      const meant = `${m[1]}meg`;
      return { ...base, why: `${written.text} is ${formatMeasured(read.value, 'Ω')}: a netlist reads M as milli; 1MEG is 1 MΩ`, meant: { text: meant, value: Number(m[1]) * 1e6 } };
    }
    if (suffix.toLowerCase() === 'm') {
      return { ...base, why: `${written.text} is ${formatMeasured(read.value, 'Ω')} (m is milli); a bias resistor is usually kilohms`, meant: { text: `${m[1]}k`, value: Number(m[1]) * 1e3 } };
    }
    if (suffix === '' && Math.abs(read.value) < 100) {
      return { ...base, why: `${written.text} has no suffix, so it is ${formatMeasured(read.value, 'Ω')}`, meant: { text: `${m[1]}k`, value: Number(m[1]) * 1e3 } };
    }
    return undefined;
  }
  if (suffix === '' && Math.abs(read.value) >= 0.1) {
    return { ...base, why: `${written.text} has no suffix, so it is ${formatMeasured(read.value, 'A')}`, meant: { text: `${m[1]}m`, value: Number(m[1]) * 1e-3 } };
  }
  return undefined;
}

/**
 * The suspect values near a device or node, nearest first: the values of the elements within a
 * few nodes of `start` (walking through every element), so a `1M` reference resistor two nodes
 * away from the transistor it overdrives is found.
 */
function suspectsNear(ctx: PlausibilityContext, start: number[], depth = 3): SuspectValue[] {
  const topo = topologyOf(ctx.circuit);
  const rails = railsByIndex(ctx.circuit);
  const seenNodes = new Set<number>(start);
  const seenElements = new Set<Element>();
  const found: SuspectValue[] = [];
  let frontier = [...start];
  for (let d = 0; d < depth && frontier.length > 0; d++) {
    const next: number[] = [];
    for (const n of frontier) {
      const atts = topo.at(n);
      if (atts.length > 200) continue; // a supply rail with hundreds of branches: the cause is not there
      for (const a of atts) {
        if (seenElements.has(a.element)) continue;
        seenElements.add(a.element);
        const s = suspectValue(a.element, ctx.documents);
        if (s) found.push(s);
        for (const k of a.element.nodes) {
          if (seenNodes.has(k) || rails.has(k)) continue;
          seenNodes.add(k);
          next.push(k);
        }
      }
    }
    frontier = next;
  }
  return found;
}

function causeText(suspects: SuspectValue[]): string {
  if (suspects.length === 0) return '';
  const s = suspects[0]!;
  return ` Likely cause: ${s.element.name} = ${s.why}; did you mean ${s.meant.text}?`;
}

function relatedOf(suspects: SuspectValue[]): RelatedLocation[] {
  return suspects.slice(0, 3).map((s) => ({ uri: s.element.origin.uri, span: s.span, message: `${s.element.name}: ${s.why}` }));
}

function suspectData(suspects: SuspectValue[]): Record<string, unknown>[] {
  return suspects.slice(0, 3).map((s) => ({ element: s.element.name, written: s.text, value: s.value, meant: s.meant.text, meantValue: s.meant.value }));
}

/** `current-implausible` on each transistor or diode without a rating of its own that carries an ampere or more. */
/**
 * The largest terminal current of an element's record (a saturated output fed from an overdriven base line carries
 * its amperes in the base), by name and index; undefined when it has no record. Read from the solver's vectors
 * without building the record where names are unique (then the index is the name's element), by name otherwise.
 */
function largestCurrent(op: OperatingPoint, topo: Topology): (name: string, e: number) => number | undefined {
  const v = topo.elementIndex.size === topo.circuit.elements.length ? pointVectors(op) : undefined;
  if (v) {
    return (_name, e) => {
      const type = v.type(e);
      if (type === undefined) return undefined;
      const abs = (q: string) => Math.abs(v.value(e, q) ?? NaN);
      return type === 'bjt' ? Math.max(abs('ic'), abs('ib'), abs('ie')) : type === 'mosfet' || type === 'jfet' || type === 'diode' ? abs('id') : 0;
    };
  }
  const at = namedPointReader(op, topo);
  return (name) => {
    const rec = at.record(name);
    if (!rec) return undefined;
    return rec.type === 'bjt' ? Math.max(Math.abs(rec.ic), Math.abs(rec.ib), Math.abs(rec.ie)) : rec.type === 'mosfet' || rec.type === 'jfet' || rec.type === 'diode' ? Math.abs(rec.id) : 0;
  };
}

function implausibleCurrents(ctx: PlausibilityContext): Finding[] {
  const out: Finding[] = [];
  const topo = topologyOf(ctx.circuit);
  const current = largestCurrent(ctx.op!, topo);
  const elements = ctx.circuit.elements;
  for (let e = 0; e < elements.length; e++) {
    const el = elements[e]!;
    if (el.kind !== 'Q' && el.kind !== 'M' && el.kind !== 'D' && el.kind !== 'J') continue;
    // The current before the rating: reading a column costs less than the rating's record, and nearly every device passes here.
    const i = current(el.name, e);
    if (!(i !== undefined && i >= IMPLAUSIBLE_CURRENT_A)) continue;
    const limit = powerLimit(el, ctx.options);
    if (limit && limit.from !== 'setting') continue; // a rated power part may carry amperes
    const suspects = suspectsNear(ctx, el.nodes);
    const what = el.kind === 'D' ? 'diode' : 'transistor';
    out.push(
      finding(
        'current-implausible',
        el.origin,
        `${el.name} carries ${formatMeasured(i, 'A')}, far beyond what a small-signal ${what} conducts: the bias network around it cannot be what was meant.${causeText(suspects)}${suspects.length === 0 ? ' Check the values around it for a missing or misread suffix (m is milli, MEG is mega), or give a power part its RATEDPOWER.' : ''}`,
        { device: el.name, currentA: i, suspects: suspectData(suspects) },
        relatedOf(suspects),
      ),
    );
    if (out.length >= 10) break;
  }
  return out;
}

/** `node-outside-rails` on each node beyond the rails by more than their span, located on the suspect value or the node's first element. */
function nodesOutsideRails(ctx: PlausibilityContext): Finding[] {
  const { circuit } = ctx;
  const op = ctx.op!;
  const rails = railsByIndex(circuit);
  let low = 0;
  let high = 0;
  for (const r of rails.values()) {
    low = Math.min(low, r.volts);
    high = Math.max(high, r.volts);
  }
  const margin = Math.max(1, high - low);
  const topo = topologyOf(circuit);
  // By node index from the solver's vectors when the point has them (what `op.nodes` shows): a look-up by name per
  // node cost milliseconds at 20,000 nodes, on every edit's path to the diagnostics.
  const vectors = pointVectors(op);
  const point = vectors ? undefined : namedPointReader(op, topo);
  const out: Finding[] = [];
  const tied = new Set(op.tiedNodes ?? []);
  for (let n = 1; n < circuit.nodes.length; n++) {
    const name = circuit.nodes[n]!;
    const v = vectors ? vectors.volts[n] : point!.volts(name);
    // The range first: nearly every node is within it, and the two look-ups after it cost more.
    if (v === undefined || !Number.isFinite(v) || (v <= high + margin && v >= low - margin)) continue;
    if (rails.has(n) || tied.has(name)) continue;
    const suspects = suspectsNear(ctx, [n]);
    const first = topo.at(n)[0]?.element;
    const at = suspects[0] ? { uri: suspects[0].element.origin.uri, span: suspects[0].element.origin.span } : first?.origin;
    if (!at) continue;
    out.push(
      finding(
        'node-outside-rails',
        at,
        `Node ${name} sits at ${formatMeasured(v, 'V')}, far outside the rails (${formatMeasured(low, 'V')} to ${formatMeasured(high, 'V')}): something forces current through a high resistance or a junction the wrong way.${causeText(suspects)}`,
        { node: name, volts: v, railLow: low, railHigh: high, suspects: suspectData(suspects) },
        relatedOf(suspects),
      ),
    );
    if (out.length >= 10) break;
  }
  return out;
}
