// Fixes for model findings: insert a missing .model card with its defaults written out, and unify a mirror's models.

import { MODEL_DEFAULTS, type Circuit, type ModelKind } from '../circuit';
import type { Card, ParsedDocument } from '../syntax/ast';
import type { Finding, Fix, Span, TextEdit } from '../types';

/** The device kinds a `.model` card can declare with defaults (everything but the resistor model). */
export type DefaultedKind = Exclude<ModelKind, 'r'>;

const KIND_WORDS: Record<DefaultedKind, string> = { npn: 'npn', pnp: 'pnp', d: 'd', nmos: 'nmos', pmos: 'pmos' };

const KIND_DESCRIPTIONS: Record<DefaultedKind, string> = {
  npn: 'an NPN transistor',
  pnp: 'a PNP transistor',
  d: 'a diode',
  nmos: 'an n-channel MOSFET',
  pmos: 'a p-channel MOSFET',
};

/** The line ending a document mostly uses: CRLF when any line ends with CRLF, else LF. */
export function lineEndingOf(text: string): '\r\n' | '\n' {
  return text.includes('\r\n') ? '\r\n' : '\n';
}

/**
 * The text of a `.model` card for `name` of `kind` with every finite default written out,
 * e.g. `.model QREF npn (IS=1e-16 BF=100 BR=1 NF=1 NR=1 XTI=3 EG=1.11) ; VAF not given: no Early effect`.
 * Defaults that are infinite (VAF) cannot be written as a number and are named in a comment instead.
 */
export function defaultModelCardText(name: string, kind: DefaultedKind): string {
  const defaults = MODEL_DEFAULTS[kind];
  const written: string[] = [];
  const unbounded: string[] = [];
  for (const [param, value] of Object.entries(defaults)) {
    if (Number.isFinite(value)) written.push(`${param}=${formatNumber(value)}`);
    else unbounded.push(param);
  }
  const card = `.model ${name} ${KIND_WORDS[kind]} (${written.join(' ')})`;
  if (unbounded.length === 0) return card;
  const why = unbounded.includes('VAF') ? 'no Early effect' : 'unbounded';
  return `${card} ; ${unbounded.join(', ')} not given: ${why}`;
}

/** Short plain numbers for model parameters: `1e-16`, `2e-5`, `100`, `1.11`. */
function formatNumber(value: number): string {
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
 * Fixes for a `model-not-found` finding (data `{ modelName: string, expectedKinds: string[] }`):
 * one fix per expected kind, inserting a `.model` card with the documented defaults into the
 * finding's document. The first kind is preferred. No fix when the data is missing or the model
 * name is not a plain word.
 */
export function missingModelFixes(finding: Finding, documents: Record<string, ParsedDocument>): Fix[] {
  const data = finding.data ?? {};
  const modelName = data['modelName'];
  const kinds = Array.isArray(data['expectedKinds']) ? (data['expectedKinds'] as unknown[]).filter(isDefaultedKind) : [];
  const doc = documents[finding.uri];
  if (typeof modelName !== 'string' || !/^[^\s()={}'",;]+$/.test(modelName) || kinds.length === 0 || !doc) return [];
  const seen = new Set<string>();
  const fixes: Fix[] = [];
  for (const raw of kinds) {
    const kind = raw.toLowerCase() as DefaultedKind;
    if (seen.has(kind)) continue;
    seen.add(kind);
    const text = defaultModelCardText(modelName, kind);
    fixes.push({
      title: `Add a .model card for ${modelName} as ${KIND_DESCRIPTIONS[kind]} with default parameters`,
      preferred: fixes.length === 0 ? true : undefined,
      edits: [modelInsertionEdit(doc, text)],
    });
  }
  return fixes;
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
    edits.push({ uri: d.uri, span: { ...d.modelSpan }, newText: reference.model });
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
