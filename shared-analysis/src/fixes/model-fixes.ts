// Fixes for model findings: insert a missing .model card with its defaults written out, and unify a mirror's models.

import type { Circuit, ModelKind } from '../circuit';
import { MODEL_PARAMETERS } from '../devices/parameters';
import { railsByIndex } from '../structures/rails';
import type { Card, ParsedDocument } from '../syntax/ast';
import { LineIndex } from '../syntax/line-index';
import { nearestDotCard, parse } from '../syntax/parser';
import type { Finding, Fix, Span, TextEdit } from '../types';
import { plainSpan } from '../syntax/span-token';

/** The device kinds a `.model` card can declare with defaults (everything but the resistor model). */
export type DefaultedKind = Exclude<ModelKind, 'r'>;

const KIND_WORDS: Record<DefaultedKind, string> = { npn: 'npn', pnp: 'pnp', d: 'd', nmos: 'nmos', pmos: 'pmos', njf: 'njf', pjf: 'pjf', sw: 'sw', csw: 'csw' };

const KIND_DESCRIPTIONS: Record<DefaultedKind, string> = {
  npn: 'an NPN transistor',
  pnp: 'a PNP transistor',
  d: 'a diode',
  nmos: 'an n-channel MOSFET',
  pmos: 'a p-channel MOSFET',
  njf: 'an n-channel JFET',
  pjf: 'a p-channel JFET',
  sw: 'a voltage-controlled switch',
  csw: 'a current-controlled switch',
};

/** The line ending a document mostly uses: CRLF when any line ends with CRLF, else LF. */
export function lineEndingOf(text: string): '\r\n' | '\n' {
  return text.includes('\r\n') ? '\r\n' : '\n';
}

/**
 * The text of a `.model` card for `name` of `kind` with the default of every core parameter written
 * out, e.g. `.model QREF npn (IS=1e-16 BF=100 BR=1 NF=1 NR=1 XTI=3 EG=1.11) ; VAF not given: no Early effect`.
 * Defaults that are infinite (VAF) cannot be written as a number and are named in a comment instead;
 * the second-order parameters (IKF, ISE, BV, …) are left out, and their defaults switch their effect off.
 */
export function defaultModelCardText(name: string, kind: DefaultedKind): string {
  const written: string[] = [];
  const unbounded: string[] = [];
  for (const p of MODEL_PARAMETERS[kind]) {
    if (!p.core || p.default === undefined) continue;
    if (Number.isFinite(p.default)) written.push(`${p.name}=${formatNumber(p.default)}`);
    else unbounded.push(p.name);
  }
  const card = `.model ${name} ${KIND_WORDS[kind]} (${written.join(' ')})`;
  if (unbounded.length === 0) return card;
  const why = unbounded.includes('VAF') ? 'no Early effect' : 'unbounded';
  return `${card} ; ${unbounded.join(', ')} not given: ${why}`;
}

/** Whether `cardText`, read as the parser reads a line of a netlist, is one error-free `.model` card named `name`. */
export function definesModel(cardText: string, name: string): boolean {
  const doc = parse('qpoint:fix', cardText, { hasTitle: false });
  const cards = doc.cards.filter((c) => c.kind !== 'comment');
  return doc.errors.length === 0 && cards.length === 1 && cards[0]!.kind === 'model' && cards[0]!.name.text === name;
}

/**
 * Whether inserting `edit` makes a `.model` card named `name` that the parser reads as one: the
 * card before the insertion point and the inserted text are parsed together (a card read from a
 * card boundary does not depend on what came earlier), so the cost is that of one card.
 */
export function insertedCardDefines(doc: ParsedDocument, edit: TextEdit, name: string): boolean {
  const at = edit.span.start;
  // The last card that starts before the insertion point (cards are in document order).
  let lo = 0;
  let hi = doc.cards.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (doc.cards[mid]!.span.start < at) lo = mid + 1;
    else hi = mid;
  }
  const before = doc.cards[lo - 1];
  const from = !before ? 0 : before.kind === 'title' ? Math.min(at, before.span.end) : before.span.start;
  const local = parse('qpoint:fix', doc.text.slice(from, at) + edit.newText, { hasTitle: false });
  const cards = local.cards.filter((c) => c.kind !== 'comment');
  const last = cards[cards.length - 1];
  return last !== undefined && last.kind === 'model' && last.name.text === name;
}

/** Whether a card other than a comment starts after `offset` in `doc` (cards are in document order: the search stops at the first). */
function cardFollows(doc: ParsedDocument, offset: number): boolean {
  for (let k = doc.cards.length - 1; k >= 0; k--) {
    const c = doc.cards[k]!;
    if (c.span.start < offset) return false;
    if (c.kind !== 'comment') return true;
  }
  return false;
}

/**
 * Whether the card of `doc` that holds `span`, with `span` replaced by `newText`, reads without a
 * syntax error (the card alone is parsed, so the cost does not grow with the document).
 */
export function editedCardParses(doc: ParsedDocument, span: Span, newText: string): boolean {
  const card = doc.cards.find((c) => c.span.start <= span.start && span.end <= c.span.end);
  if (!card) return false;
  const text = doc.text.slice(card.span.start, span.start) + newText + doc.text.slice(span.end, card.span.end);
  return parse('qpoint:fix', text, { hasTitle: false }).errors.length === 0;
}

/** Short plain numbers for model parameters: `1e-16`, `2e-5`, `100`, `1.11`. */
export function formatNumber(value: number): string {
  if (value !== 0 && Math.abs(value) < 1e-3) return value.toExponential().replace('e+', 'e').replace(/\.?0+e/, 'e');
  return String(value);
}

/** Where a new top-level .model card goes: after the last top-level .model card, else before `.end`, else at the end. */
export function modelInsertionEdit(doc: ParsedDocument, cardText: string): TextEdit {
  const eol = lineEndingOf(doc.text);
  let depth = 0;
  let lastModel: Card | undefined;
  let endCard: Card | undefined;
  for (const card of doc.cards) {
    if (card.kind === 'subckt') depth++;
    else if (card.kind === 'ends') depth = Math.max(0, depth - 1);
    else if (card.kind === 'model' && depth === 0) lastModel = card;
    else if (card.kind === 'end' && endCard === undefined) endCard = card;
  }
  if (lastModel && (!endCard || lastModel.span.start < endCard.span.start)) {
    return { uri: doc.uri, span: point(lastModel.span.end), newText: eol + cardText };
  }
  if (endCard) {
    const lineStart = startOfLine(doc.text, endCard.span.start);
    return { uri: doc.uri, span: point(lineStart), newText: cardText + eol };
  }
  const text = doc.text;
  const endsWithNewline = text.endsWith('\n') || text.endsWith('\r');
  return { uri: doc.uri, span: point(text.length), newText: (endsWithNewline || text.length === 0 ? '' : eol) + cardText + eol };
}

function point(offset: number): Span {
  return { start: offset, end: offset };
}

function startOfLine(text: string, offset: number): number {
  let i = offset;
  while (i > 0 && text[i - 1] !== '\n' && text[i - 1] !== '\r') i--;
  return i;
}

function isDefaultedKind(k: unknown): k is DefaultedKind {
  return typeof k === 'string' && Object.prototype.hasOwnProperty.call(KIND_WORDS, k.toLowerCase());
}

/**
 * Fixes for a `model-not-found` finding (data `{ modelName: string, expectedKinds: string[],
 * suggestion?: string }`), the likeliest first:
 * 1. a misspelt dot card that defines the model (`.modle QN npn …`) corrected to `.model`
 *    (the finding's message then says so too);
 * 2. the element's model name changed to the defined model one slip away (`data.suggestion`);
 * 3. one `.model` card per expected kind with the documented defaults, the kind the element's
 *    wiring points at first (a transistor whose emitter or source sits on the highest rail is a
 *    PNP or PMOS, one on the lowest rail an NPN or NMOS).
 * The first fix is preferred. No fix when the data is missing or the model name is not a plain word.
 */
export function missingModelFixes(finding: Finding, documents: Record<string, ParsedDocument>, circuit?: Circuit): Fix[] {
  const data = finding.data ?? {};
  const modelName = data['modelName'];
  const kinds = Array.isArray(data['expectedKinds']) ? (data['expectedKinds'] as unknown[]).filter(isDefaultedKind) : [];
  const doc = documents[finding.uri];
  if (typeof modelName !== 'string' || !/^[^\s()={}'",;]+$/.test(modelName) || kinds.length === 0 || !doc) return [];
  const fixes: Fix[] = [];
  const misspelt = misspeltModelCard(modelName, documents);
  if (misspelt) {
    const line = new LineIndex(documents[misspelt.uri]!.text).positionAt(misspelt.span.start).line + 1;
    fixes.push({ title: `Correct \`${misspelt.command}\` to \`.model\` on line ${line}, which defines ${modelName}`, edits: [{ uri: misspelt.uri, span: misspelt.span, newText: '.model' }] });
    if (!finding.message.includes('did you mean .model')) {
      finding.message += ` The \`${misspelt.command} ${modelName}\` card on line ${line} looks like its definition: did you mean .model?`;
    }
  }
  const suggestion = typeof data['suggestion'] === 'string' ? data['suggestion'] : undefined;
  if (suggestion && !misspelt && editedCardParses(doc, finding.span, suggestion)) {
    fixes.push({ title: `Use model ${suggestion} (did you mean ${suggestion}?)`, edits: [{ uri: finding.uri, span: plainSpan(finding.span), newText: suggestion }] });
  }
  const seen = new Set<string>();
  for (const raw of orderedKinds(kinds.map((k) => k.toLowerCase() as DefaultedKind), finding, doc, circuit)) {
    const kind = raw;
    if (seen.has(kind)) continue;
    seen.add(kind);
    const text = defaultModelCardText(modelName, kind);
    // A name the card cannot carry (`q$` reads as `q` and a comment) gets no card that would not define it.
    if (!definesModel(text, modelName)) continue;
    const edit = modelInsertionEdit(doc, text);
    // Not where a block the netlist leaves open (`.control` with no `.endc`) would swallow it.
    if (!insertedCardDefines(doc, edit, modelName)) continue;
    fixes.push({
      title: `Add a .model card for ${modelName} as ${KIND_DESCRIPTIONS[kind]} with default parameters`,
      edits: [edit],
    });
  }
  if (fixes.length > 0) fixes[0].preferred = true;
  return fixes;
}

/** A dot card in any document whose misspelt command means `.model` and whose first field is `modelName`. */
function misspeltModelCard(modelName: string, documents: Record<string, ParsedDocument>): { uri: string; span: Span; command: string } | undefined {
  const want = modelName.toLowerCase();
  for (const doc of Object.values(documents)) {
    for (const card of doc.cards) {
      if (card.kind !== 'other-dot') continue;
      const command = card.command.text;
      if (nearestDotCard(command.toLowerCase()) !== '.model') continue;
      const rest = doc.text.slice(card.command.span.end, card.span.end);
      const first = /^\s+([^\s()]+)/.exec(rest)?.[1];
      if (first && first.toLowerCase() === want && editedCardParses(doc, card.command.span, '.model')) return { uri: doc.uri, span: plainSpan(card.command.span), command };
    }
  }
  return undefined;
}

/**
 * The expected kinds with the one the element's wiring points at first: a BJT (MOSFET) whose
 * emitter (source) node is the circuit's highest rail is PNP (PMOS); one on its lowest rail is
 * NPN (NMOS). The order is kept when the wiring says nothing.
 */
function orderedKinds(kinds: DefaultedKind[], finding: Finding, doc: ParsedDocument, circuit: Circuit | undefined): DefaultedKind[] {
  if (!circuit || kinds.length < 2) return kinds;
  const card = doc.cards.find((c) => c.kind === 'element' && c.span.start <= finding.span.start && finding.span.end <= c.span.end);
  if (!card || card.kind !== 'element' || (card.letter !== 'Q' && card.letter !== 'M')) return kinds;
  const common = card.nodes[2]?.text;
  if (!common) return kinds;
  const rails = railsByIndex(circuit);
  let low = Infinity;
  let high = -Infinity;
  for (const r of rails.values()) {
    low = Math.min(low, r.volts);
    high = Math.max(high, r.volts);
  }
  const index = circuit.nodes.findIndex((n) => n.toLowerCase() === common.toLowerCase());
  const rail = index >= 0 ? rails.get(index) : undefined;
  if (!rail || !(high > low)) return kinds;
  const wanted: DefaultedKind | undefined =
    rail.volts === high ? (card.letter === 'Q' ? 'pnp' : 'pmos') : rail.volts === low ? (card.letter === 'Q' ? 'npn' : 'nmos') : undefined;
  if (!wanted || !kinds.includes(wanted)) return kinds;
  return [wanted, ...kinds.filter((k) => k !== wanted)];
}

/** The fix for a `dot-card-unknown` finding that carries a near known command (`data.suggestion`): write that command instead. */
export function misspeltDotCardFixes(finding: Finding, documents: Record<string, ParsedDocument>): Fix[] {
  const suggestion = finding.data?.['suggestion'];
  const command = finding.data?.['command'];
  if (typeof suggestion !== 'string' || typeof command !== 'string') return [];
  // `.paramV9 a 0 1` is near `.param`, but `.param a 0 1` is no parameter card: offer only a card that reads cleanly.
  const doc = documents[finding.uri];
  if (!doc || !editedCardParses(doc, finding.span, suggestion)) return [];
  // `.end` stops the reading and `.alter` ends the analysed netlist (what follows is kept as alternatives): either is
  // right only where no card follows (`.en` above other cards is more likely `.ends` or `.endl`; an `.alter` inside
  // a subcircuit would leave its `.ends` unread).
  const ending = suggestion.toLowerCase();
  if ((ending === '.end' || ending === '.alter') && cardFollows(doc, finding.span.end)) return [];
  return [{ title: `Write ${suggestion} instead of ${command}`, preferred: true, edits: [{ uri: finding.uri, span: plainSpan(finding.span), newText: suggestion }] }];
}

/** One device of a mismatched mirror as the `mirror-unmatched` finding describes it. */
export interface MirrorDeviceModel {
  device: string;
  model: string;
  uri?: string;
  modelSpan?: Span;
}

/**
 * Reads the devices of a `mirror-unmatched` finding. Accepted data: the structure check's
 * per-device form `{ device: string, referenceDevice: string }`, or a list `{ reference: string,
 * devices: Array<string | { device|name: string, model: string, uri?: string, modelSpan?: Span }> }`
 * whose reference defaults to the first entry. Missing models and spans are taken from the circuit.
 */
function mirrorDevices(finding: Finding, circuit: Circuit | undefined): { reference: MirrorDeviceModel; others: MirrorDeviceModel[] } | undefined {
  const data = finding.data ?? {};
  const list: unknown[] = Array.isArray(data['devices']) ? [...(data['devices'] as unknown[])] : [];
  // The per-device form the structure check emits: `{ device, referenceDevice }`, located on the device.
  if (list.length === 0 && typeof data['device'] === 'string' && typeof data['referenceDevice'] === 'string') {
    list.push(data['referenceDevice'], data['device']);
  }
  const devices: MirrorDeviceModel[] = [];
  for (const entry of list) {
    if (typeof entry === 'string') {
      devices.push({ device: entry, model: '' });
      continue;
    }
    if (!entry || typeof entry !== 'object') continue;
    const e = entry as Record<string, unknown>;
    const device = typeof e['device'] === 'string' ? e['device'] : typeof e['name'] === 'string' ? e['name'] : undefined;
    if (!device) continue;
    devices.push({
      device,
      model: typeof e['model'] === 'string' ? e['model'] : '',
      uri: typeof e['uri'] === 'string' ? e['uri'] : undefined,
      modelSpan: isSpan(e['modelSpan']) ? e['modelSpan'] : undefined,
    });
  }
  for (const d of devices) {
    const el = circuit?.elements.find((x) => x.name.toLowerCase() === d.device.toLowerCase());
    if (!el) continue;
    if (!d.model && 'model' in el) d.model = el.model.name;
    if (!d.modelSpan && el.origin.modelSpan) {
      d.modelSpan = el.origin.modelSpan;
      d.uri = el.origin.uri;
    }
  }
  const refField = typeof data['reference'] === 'string' ? data['reference'] : typeof data['referenceDevice'] === 'string' ? data['referenceDevice'] : undefined;
  const refName = refField !== undefined ? refField.toLowerCase() : devices[0]?.device.toLowerCase();
  const reference = devices.find((d) => d.device.toLowerCase() === refName);
  if (!reference || !reference.model) return undefined;
  return { reference, others: devices.filter((d) => d !== reference) };
}

function isSpan(v: unknown): v is Span {
  return !!v && typeof v === 'object' && typeof (v as Span).start === 'number' && typeof (v as Span).end === 'number';
}

/**
 * The fix for a `mirror-unmatched` finding: every device of the mirror uses the reference
 * device's model. Only the model-name tokens change; a token shared by several flattened
 * instances (a device inside a subcircuit) is edited once.
 */
export function unifyMirrorModelFixes(finding: Finding, circuit: Circuit | undefined): Fix[] {
  const parsed = mirrorDevices(finding, circuit);
  if (!parsed) return [];
  const { reference, others } = parsed;
  const edits: TextEdit[] = [];
  const seen = new Set<string>();
  const renamed: string[] = [];
  for (const d of others) {
    if (!d.modelSpan || !d.uri) continue;
    if (d.model.toLowerCase() === reference.model.toLowerCase()) continue;
    const key = `${d.uri}#${d.modelSpan.start}`;
    if (seen.has(key)) continue;
    seen.add(key);
    edits.push({ uri: d.uri, span: plainSpan(d.modelSpan), newText: reference.model });
    renamed.push(d.device);
  }
  if (edits.length === 0) return [];
  return [
    {
      title: `Use model ${reference.model} (the reference device ${reference.device}'s) for ${renamed.join(', ')}`,
      preferred: true,
      edits,
    },
  ];
}
