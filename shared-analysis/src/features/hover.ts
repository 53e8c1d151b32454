// Hover text for an offset of an analysed netlist: device bias, node voltages, models, parameters and hand estimates.

import { nameTable } from '../names';
import { technologyWords } from '../structures/technology';
import type { Analysis, ParamSymbol } from '../analysis';
import type { Element, Model } from '../circuit';
import type { Card, ElementCard, Token } from '../syntax/ast';
import type { DeviceRecord } from '../solve/types';
import { capitalised, kindName } from '../structures/catalogue';
import type { Structure } from '../structures/types';
import type { Span } from '../types';
import {
  cardAt,
  connectionsOf,
  connectionCount,
  elementsOfCard,
  resolveNodeToken,
  sameToken,
  scopeAt,
  tokenAt,
  tokenIndex,
  type ResolvedNode,
  type SubcktScope,
} from './document-index';
import { formatDifference, formatHeadroom, formatNumber, formatQuantity, formatRange, formatShare, formatTargetState } from '../view/format';
import { readTargets, type Target } from '../checks/targets';
import { seriesTolerance } from '../fixes/e-series';
import { identifierAt, resolveParam } from './params';
import { MODEL_PARAMETERS, modelKindOf, type ModelParameterInfo } from './vocabulary';
import { dissipation, powerLimit } from '../checks/devices/power';
import { maxOf, minOf, pushAll } from '../arrays';
import { derivedVoltageLines, outputWords, startupLine } from './structure-words';
import { spreadText, variationOfElement } from '../variation/text';
import { recordIsOff } from '../checks/devices/context';
import { UNLIMITED, type WorkBudget } from './budget';

/** Markdown hover content and the span it describes. */
export interface HoverResult {
  markdown: string;
  span: Span;
}

/** The hover for `offset` of document `uri` in `analysis`, or undefined when there is nothing to say. */
/** Which file an `.include` or `.lib` path was read from, and how it was found; or that it could not be read. */
function includeHover(analysis: Analysis, uri: string, token: { span: { start: number; end: number } }): HoverResult | undefined {
  const inc = analysis.symbols.includes.find((i) => i.uri === uri && i.span.start === token.span.start && i.span.end === token.span.end);
  if (!inc) return undefined;
  const how: Record<string, string> = {
    'letter-case': ' (found with other letter case)',
    'search-folder': ' (found in a search folder)',
    'path-tail': ' (found by the end of its absolute path)',
  };
  const markdown = inc.found ? `Reads \`${inc.target}\`${inc.how ? how[inc.how] ?? '' : ''}.` : `Not read: \`${inc.target}\` cannot be read.`;
  return { markdown, span: token.span };
}

/** The hover of the budget in progress (one work unit per structure looked at for a node's produced voltages). */
let spending: WorkBudget = UNLIMITED;

/**
 * The hover at `offset` of `uri`. With a `budget`, a hover whose work grows with the circuit (a
 * node's voltages produced by structures) stops when it runs out and says so in its last line.
 */
export function hoverAt(analysis: Analysis, uri: string, offset: number, budget: WorkBudget = UNLIMITED): HoverResult | undefined {
  spending = budget;
  try {
    const h = hoverWithin(analysis, uri, offset);
    if (h && budget.exhausted) return { ...h, markdown: `${h.markdown}\n\n_Cut short: this hover stopped at the editor's time budget; parts of it are missing._` };
    return h;
  } finally {
    spending = UNLIMITED;
  }
}

function hoverWithin(analysis: Analysis, uri: string, offset: number): HoverResult | undefined {
  const doc = analysis.documents[uri];
  if (!doc || !Number.isFinite(offset) || offset < 0 || offset > doc.text.length) return undefined;
  const card = cardAt(doc, offset);
  if (!card) return undefined;
  const token = tokenAt(card, offset);
  if (!token) return undefined;
  const scope = scopeAt(doc, offset);

  if (token.kind === 'expr' || isAssignmentValue(card, token)) {
    const ident = identifierAt(token, offset);
    if (ident) {
      const p = resolveParam(analysis, uri, scope, ident.name);
      if (p) return { markdown: paramMarkdown(p), span: ident.span };
    }
    if (token.kind === 'expr') return exprHover(analysis, uri, card, token, scope);
  }

  switch (card.kind) {
    case 'include':
    case 'lib':
      return includeHover(analysis, uri, token);
    case 'element':
      return elementCardHover(analysis, uri, card, token, scope);
    case 'model':
      if (sameToken(token, card.name) || sameToken(token, card.type)) return modelHover(analysis, uri, card.name.text, scope, token.span, card.span.start);
      return modelParamHover(analysis, uri, card, token, scope);
    case 'param': {
      const a = card.params.find((p) => sameToken(p.name, token));
      if (a) {
        const p = analysis.symbols.params.find((s) => s.uri === uri && s.nameSpan.start === a.name.span.start);
        if (p) return { markdown: paramMarkdown(p), span: token.span };
      }
      return undefined;
    }
    case 'subckt': {
      const a = card.params.find((p) => sameToken(p.name, token));
      if (a) {
        const p = analysis.symbols.params.find((s) => s.uri === uri && s.nameSpan.start === a.name.span.start);
        if (p) return { markdown: paramMarkdown(p), span: token.span };
      }
      if (tokenIndex(card.ports, token) >= 0) return nodeHover(analysis, uri, card, token);
      if (sameToken(token, card.name)) return subcktHover(analysis, card.name.text, token.span);
      return undefined;
    }
    default:
      return undefined;
  }
}

function isAssignmentValue(card: Card, token: Token): boolean {
  const params = 'params' in card ? card.params : [];
  return params.some((a) => sameToken(a.value, token));
}

function elementCardHover(analysis: Analysis, uri: string, card: ElementCard, token: Token, scope: SubcktScope | undefined): HoverResult | undefined {
  if (sameToken(token, card.name)) return deviceHover(analysis, uri, card, token.span);
  if (tokenIndex(card.nodes, token) >= 0) return nodeHover(analysis, uri, card, token);
  if (sameToken(token, card.model)) return modelHover(analysis, uri, token.text, scope, token.span, undefined, elementsOfCard(analysis, uri, card));
  if (sameToken(token, card.subckt)) return subcktHover(analysis, token.text, token.span);
  if (sameToken(token, card.value) || sameToken(token, card.source?.value) || sameToken(token, card.area)) return deviceHover(analysis, uri, card, token.span);
  return undefined;
}

/** Device bias: one section per elaborated instance of the card. */
function deviceHover(analysis: Analysis, uri: string, card: ElementCard, span: Span): HoverResult | undefined {
  const elements = elementsOfCard(analysis, uri, card);
  if (card.letter === 'X') return subcktHover(analysis, card.subckt?.text ?? '', span);
  if (elements.length === 0) {
    return { markdown: `**${card.name.text}** — not part of the elaborated circuit (see the findings on this line).`, span };
  }
  // One card of a subcircuit is one device per instance: the first few in full, the rest counted (a hover of thousands of sections helps nobody and costs seconds).
  const listed = elements.length > MAX_NODE_SECTIONS ? elements.slice(0, MAX_NODE_SECTIONS - 1) : elements;
  const sections = listed.map((el) => elementSection(analysis, el));
  if (listed.length < elements.length) {
    sections.push(`…and ${elements.length - listed.length} more instances (${elements[listed.length]!.name} to ${elements[elements.length - 1]!.name}).`);
  }
  return { markdown: sections.join('\n\n---\n\n'), span };
}

/**
 * One device's hover, ordered for a decision:
 *  1. the answer — current, region, headroom and the state of any target, on the first line;
 *  2. the estimate against the solved value, with the difference in words and its reason;
 *  3. spread and drift (only when there is data: the corner re-solves today);
 *  4. how it is worked out — the derivation, compact, then the bias record's remaining values;
 *  5. the sources the derivation cites, last.
 * Each quantity appears once: one headroom, one compliance edge, one output resistance.
 */
function elementSection(analysis: Analysis, el: Element): string {
  const op = analysis.operatingPoint;
  const rec: DeviceRecord | undefined = op?.devices[el.name];
  const heading = `**${el.name}** — ${describeElement(el)}`;
  if (!op) return [heading, 'No operating point: the circuit was not solved (see the findings).'].join('\n\n');
  if (!rec) return [heading, 'No bias record for this device.'].join('\n\n');
  const structures = structuresOf(analysis, el.name);
  const lines: string[] = [answerLine(analysis, el, rec, structures)];
  const tied = op.tiedNodes ? el.nodes.map((n) => analysis.circuit?.nodes[n]).filter((n): n is string => !!n && op.tiedNodes!.includes(n)) : [];
  if (tied.length > 0) {
    lines.push(`**Arbitrary values:** ${tied.join(', ')} ${tied.length > 1 ? 'have' : 'has'} no DC path to ground, so the solver tied ${tied.length > 1 ? 'them' : 'it'} to ground through 1 TΩ; the numbers below that depend on ${tied.length > 1 ? 'them' : 'it'} mean nothing until the node is connected.`);
  }
  if (!op.converged) lines.push('_The DC solve did not converge; the values below are from its last iteration._');
  const sources = new Sources();
  for (const s of structures) {
    const cmp = comparison(s, el.name);
    if (cmp) lines.push(cmp);
  }
  // One section for spread and drift: the corner re-solves, then the variation analysis (σ, worst case, drift).
  const spreadRows: string[] = [];
  for (const s of structures) {
    const rows = spreadAndDrift(s, el.name);
    if (rows) spreadRows.push(rows);
  }
  const variation = variationOfElement(analysis, el.name);
  if (variation) spreadRows.push(`${variation.output === 'IREF' ? 'IREF' : 'its current'}: ${spreadText(variation)}`);
  if (spreadRows.length) lines.push(`**Spread and drift:** ${spreadRows.join('; ')}.`);
  lines.push(`**How it is worked out** — ${el.name}, ${describeElement(el)}`);
  for (const s of structures) lines.push(derivation(s, el.name, sources));
  const ownRo = structures.some((s) => s.outputs.some((o) => o.device.toLowerCase() === el.name.toLowerCase() && s.outputResistance[o.device] !== undefined));
  lines.push(recordDetails(analysis, el, rec, ownRo));
  const power = powerLine(analysis, el, rec);
  if (power) lines.push(power);
  const cited = sources.markdown();
  if (cited) lines.push(cited);
  return lines.join('\n\n');
}

/** The device's main current, signed as the record keeps it, with its label. */
function mainCurrentOf(el: Element, rec: DeviceRecord): { label: string; amps: number } {
  if (rec.type === 'bjt') return { label: 'IC', amps: rec.ic };
  if (rec.type === 'mosfet' || rec.type === 'jfet') return { label: 'ID', amps: rec.id };
  if (rec.type === 'diode') return { label: 'ID', amps: rec.id };
  return { label: 'I', amps: el.kind === 'R' ? Math.abs(rec.current) : rec.current };
}

/** Volts by which a transistor sits inside its active region, from its own record (negative: beyond the edge). */
function recordHeadroom(rec: DeviceRecord): number | undefined {
  if (rec.type === 'bjt') return rec.polarity === 'npn' ? -rec.vbc : rec.vbc;
  if (rec.type === 'mosfet') return rec.vov > 0 ? Math.abs(rec.vds) - rec.vov : undefined;
  if (rec.type === 'jfet') {
    const vov = (rec.polarity === 'pjf' ? -rec.vgs : rec.vgs) - rec.vto;
    return vov > 0 ? Math.abs(rec.vds) - vov : undefined;
  }
  return undefined;
}

/** The region a device is meant to work in; any other is shown in bold. */
const ACTIVE_REGION = { bjt: 'forward-active', mosfet: 'saturation', jfet: 'saturation', diode: 'forward' } as const;

/** The first line: what the designer came for. */
function answerLine(analysis: Analysis, el: Element, rec: DeviceRecord, structures: Structure[]): string {
  const { label, amps } = mainCurrentOf(el, rec);
  const parts: string[] = [`**${el.name}**`, `${label} ${formatQuantity(el.kind === 'Q' || el.kind === 'M' || el.kind === 'J' ? Math.abs(amps) : amps, 'A')}`];
  const off = recordIsOff(rec);
  if (rec.type === 'bjt' || rec.type === 'mosfet' || rec.type === 'jfet' || rec.type === 'diode') parts.push(off ? 'off' : rec.region === ACTIVE_REGION[rec.type] ? rec.region : `**${rec.region}**`);
  else if (rec.type === 'switch') parts.push(`switch **${rec.region}**`);
  else parts.push(`${formatQuantity(Math.abs(rec.voltage), 'V')} across`);
  if (!off && (rec.type === 'bjt' || rec.type === 'mosfet' || rec.type === 'jfet')) {
    const lower = el.name.toLowerCase();
    const out = structures.flatMap((s) => s.outputs.filter((o) => o.device.toLowerCase() === lower).map((o) => ({ s, o })))[0];
    const diodeConnected = el.nodes[0] === el.nodes[1];
    const h = out ? out.s.headroom[out.o.device] : diodeConnected ? undefined : recordHeadroom(rec);
    if (h !== undefined && Number.isFinite(h)) parts.push(formatHeadroom(h, rec.polarity));
  }
  const target = targetState(analysis, el, rec);
  if (target) parts.push(target.met ? target.text : `**${target.text}**`);
  return parts.join(' · ');
}

/** Where the element's current stands against an `expect` annotation, when it has one. */
function targetState(analysis: Analysis, el: Element, rec: DeviceRecord): { met: boolean; text: string } | undefined {
  let targets: Target[];
  try {
    targets = targetsOf(analysis);
  } catch {
    return undefined;
  }
  const lower = el.name.toLowerCase();
  const t = targets.find((x) =>
    x.subject.kind === 'name' ? x.subject.name.toLowerCase() === lower : x.uri === el.origin.uri && x.subject.cardSpan.start === el.origin.span.start,
  );
  if (!t) return undefined;
  const { amps } = mainCurrentOf(el, rec);
  return formatTargetState(Math.abs(amps), t.current, t.tolerance ?? seriesTolerance(analysis.options.resistorSeries));
}

/** Estimate against solved for this device's role in a structure, with the difference in words and its reason. */
function comparison(s: Structure, device: string): string | undefined {
  const lower = device.toLowerCase();
  const out = s.outputs.find((o) => o.device.toLowerCase() === lower);
  const label = out ? 'IOUT' : 'IREF';
  const e = out ? s.estimate?.iout[out.device] : s.estimate?.iref;
  const v = out ? s.solved?.iout[out.device] : s.solved?.iref;
  if (e === undefined && v === undefined) return undefined;
  const where = `${capitalised(kindName(s.kind))}${s.instance ? ` in ${s.instance.replace(/\.$/, '')}` : ''}`;
  let text: string;
  if (e !== undefined && v !== undefined) text = `${label} estimate ${formatQuantity(e, 'A')}, solved ${formatQuantity(v, 'A')}: ${formatDifference(e, v)}`;
  else if (v !== undefined) text = `${label} solved ${formatQuantity(v, 'A')} (no hand estimate)`;
  else text = `${label} estimate ${formatQuantity(e!, 'A')} (not solved)`;
  const reason = s.discrepancy ? ` — ${s.discrepancy}` : '';
  return `${where}: ${text}${reason}.`.replace(/\)\.$/, ').').replace(/\.\.$/, '.');
}

/**
 * The corner part of this device's spread and drift (supply, temperature, beta re-solves). The
 * hover's one "Spread and drift" section joins it with the variation analysis (σ from tolerances,
 * worst case, drift); it is shown only when there is data.
 */
function spreadAndDrift(s: Structure, device: string): string | undefined {
  const lower = device.toLowerCase();
  const out = s.outputs.find((o) => o.device.toLowerCase() === lower);
  const rows: string[] = [];
  if (out) {
    const spread = s.corners.filter((k) => k.converged && k.iout[out.device] !== undefined && Number.isFinite(k.iout[out.device]));
    if (spread.length) {
      const vals = spread.map((k) => k.iout[out.device]);
      const outside = spread.filter((k) => k.outOfRegion.includes(out.device));
      const worst = spread.reduce((m, k) => ((k.headroom[out.device] ?? Infinity) < (m.headroom[out.device] ?? Infinity) ? k : m));
      rows.push(`IOUT ${formatRange(minOf(vals), maxOf(vals), 'A')} across ${spread.length} corners`);
      const wh = worst.headroom[out.device];
      if (wh !== undefined && Number.isFinite(wh)) rows.push(`least headroom ${formatHeadroom(wh, s.technology)} (${worst.label})`);
      if (outside.length) rows.push(`**leaves its active region at ${outside.length} of them**`);
    }
  } else if (s.reference.device.toLowerCase() === lower) {
    const spread = s.corners.filter((k) => k.converged && Number.isFinite(k.iref));
    if (spread.length) rows.push(`IREF ${formatRange(minOf(spread.map((k) => k.iref)), maxOf(spread.map((k) => k.iref)), 'A')} across ${spread.length} corners`);
  }
  return rows.length ? rows.join('; ') : undefined;
}

/** The sources the derivation cites, numbered in order of first use and listed at the end. */
class Sources {
  private readonly list: string[] = [];
  /** The reference mark for `source` (`[1]`). */
  mark(source: string): string {
    let i = this.list.indexOf(source);
    if (i < 0) i = this.list.push(source) - 1;
    return `[${i + 1}]`;
  }
  markdown(): string | undefined {
    return this.list.length ? `Sources: ${this.list.map((s, i) => `[${i + 1}] ${s}`).join('; ')}` : undefined;
  }
}

/**
 * Splits a step's formula into the formula and the source it names in a closing parenthesis
 * (`… (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4)`); a closing parenthesis of mathematics
 * (`(1 + (VCE2 − VBE)/VA)`) holds no word of four lower-case letters and stays.
 */
export function splitSource(formula: string): { formula: string; source?: string } {
  const text = formula.trimEnd();
  if (!text.endsWith(')')) return { formula };
  let depth = 0;
  for (let i = text.length - 1; i >= 0; i--) {
    const c = text[i];
    if (c === ')') depth++;
    else if (c === '(') {
      depth--;
      if (depth === 0) {
        const inner = text.slice(i + 1, -1);
        if (i === 0 || !/[a-z]{4}|\b(1[89]|20)\d\d\b/.test(inner)) return { formula };
        return { formula: text.slice(0, i).trimEnd().replace(/[,;]$/, ''), source: inner };
      }
    }
  }
  return { formula };
}

/** How the structure's numbers for this device are worked out: its role, the hand steps, the compliance edge and output resistance. */
function derivation(s: Structure, device: string, sources: Sources): string {
  const lower = device.toLowerCase();
  const isRef = s.reference.device.toLowerCase() === lower;
  const out = s.outputs.find((o) => o.device.toLowerCase() === lower);
  // A source whose own device is its output (diode-referenced, regulated) says output; a VBE multiplier's device is its pass device.
  const own = s.roles?.[s.devices.find((d) => d.toLowerCase() === lower) ?? ''];
  const role = out
    ? outputWords(s, out)
    : isRef && (own === undefined || own === 'reference')
      ? 'reference (diode-connected) device'
      : own
        ? `${own.replace(/-/g, ' ')} device`
        : 'device';
  const parts: string[] = [`**${capitalised(kindName(s.kind))}** (${technologyWords(s.technology)}${s.instance ? `, in ${s.instance.replace(/\.$/, '')}` : ''}) — this is its ${role}.`];
  // Structure-wide steps (no `devices`) plus the steps about this device: another output's IOUT is not this device's business.
  // The solved compliance edge below replaces the estimate's, so one edge is shown.
  const solvedEdge = out ? s.compliance[out.device] : undefined;
  const steps = (s.estimate?.steps ?? [])
    .filter((st) => !st.devices || st.devices.length === 0 || st.devices.some((d) => d.toLowerCase() === lower))
    .filter((st) => !(solvedEdge && /^compliance edge/i.test(st.quantity)));
  if (steps.length) {
    parts.push(
      'Hand estimate:\n\n' +
        steps
          .map((st) => {
            const { formula, source } = splitSource(st.formula);
            return `- ${st.quantity} = ${formula} = ${st.substituted} = **${formatQuantity(st.value, st.unit)}**${source ? ' ' + sources.mark(source) : ''}`;
          })
          .join('\n'),
    );
  }
  const rows: string[] = [];
  if (out) {
    const c = s.compliance[out.device];
    if (c) rows.push(`Stays active for ${formatQuantity(c.min, 'V')} ≤ V(${out.node}) ≤ ${formatQuantity(c.max, 'V')} (solved compliance)`);
    const ro = s.outputResistance[out.device];
    if (ro !== undefined) rows.push(`Output resistance ${formatQuantity(ro, 'Ω')}`);
  }
  pushAll(rows, derivedVoltageLines(s));
  const startup = startupLine(s);
  if (startup) rows.push(startup);
  if (rows.length) parts.push(bullet(rows));
  return parts.join('\n\n');
}

/** The bias record's values not already said above (the main current and region are on the first line). */
function recordDetails(analysis: Analysis, el: Element, rec: DeviceRecord, roShownAsOutputResistance: boolean): string {
  const nodeNames = el.nodes.map((n) => analysis.circuit?.nodes[n] ?? String(n));
  if (rec.type === 'bjt') {
    return bullet([
      `IB ${formatQuantity(rec.ib, 'A')} · IE ${formatQuantity(rec.ie, 'A')} (${rec.polarity.toUpperCase()}; positive into the terminal)`,
      `VBE ${formatQuantity(rec.vbe, 'V')} · VBC ${formatQuantity(rec.vbc, 'V')} · VCE ${formatQuantity(rec.vce, 'V')}`,
      `gm ${formatQuantity(rec.gm, 'S')} · rπ ${formatQuantity(rec.rpi, 'Ω')}${roShownAsOutputResistance ? '' : ` · ro ${rec.roInfinite ? 'unbounded (no Early voltage in the model)' : formatQuantity(rec.ro, 'Ω')}`}`,
      `Collector ${nodeNames[0]}, base ${nodeNames[1]}, emitter ${nodeNames[2]}`,
    ]);
  }
  if (rec.type === 'mosfet') {
    return bullet([
      `VGS ${formatQuantity(rec.vgs, 'V')} · VDS ${formatQuantity(rec.vds, 'V')} · VTH ${formatQuantity(rec.vth, 'V')} · overdrive ${formatQuantity(rec.vov, 'V')} (${rec.polarity.toUpperCase()}; ID positive into the drain: ${formatQuantity(rec.id, 'A')})`,
      `gm ${formatQuantity(rec.gm, 'S')}${roShownAsOutputResistance ? '' : ` · ro ${rec.roInfinite ? 'unbounded (LAMBDA = 0)' : formatQuantity(rec.ro, 'Ω')}`}`,
      `Drain ${nodeNames[0]}, gate ${nodeNames[1]}, source ${nodeNames[2]}, bulk ${nodeNames[3]}`,
    ]);
  }
  if (rec.type === 'jfet') {
    const own = rec.polarity === 'pjf' ? -1 : 1;
    return bullet([
      `IG ${formatQuantity(rec.ig, 'A')} (${rec.polarity === 'pjf' ? 'P' : 'N'}-channel; ID positive into the drain: ${formatQuantity(rec.id, 'A')})`,
      `VGS ${formatQuantity(rec.vgs, 'V')} · VDS ${formatQuantity(rec.vds, 'V')} · pinch-off VTO ${formatQuantity(own * rec.vto, 'V')} · VGS − VTO ${formatQuantity(own * rec.vgs - rec.vto, 'V')}`,
      `gm ${formatQuantity(rec.gm, 'S')}${roShownAsOutputResistance ? '' : ` · ro ${rec.roInfinite ? 'unbounded (LAMBDA = 0)' : formatQuantity(rec.ro, 'Ω')}`}`,
      `Drain ${nodeNames[0]}, gate ${nodeNames[1]}, source ${nodeNames[2]}`,
    ]);
  }
  if (rec.type === 'switch') {
    return bullet([
      `Resistance ${formatQuantity(rec.resistance, 'Ω')} · voltage ${formatQuantity(rec.voltage, 'V')} (from ${nodeNames[0]} through the switch to ${nodeNames[1]}; current ${formatQuantity(rec.current, 'A')})`,
      `Control ${formatQuantity(rec.control, el.kind === 'W' ? 'A' : 'V')}`,
    ]);
  }
  if (rec.type === 'diode') {
    return bullet([
      `VD ${formatQuantity(rec.vd, 'V')}`,
      `Dynamic resistance rd ${formatQuantity(rec.rd, 'Ω')} (dVD/dID here, series resistance included)`,
      `Anode ${nodeNames[0]}, cathode ${nodeNames[1]}`,
    ]);
  }
  return bullet([
    `Current ${formatQuantity(rec.current, 'A')} (from ${nodeNames[0]} through the element to ${nodeNames[1]})`,
    `Voltage ${formatQuantity(rec.voltage, 'V')} (V(${nodeNames[0]}) − V(${nodeNames[1]}))`,
    `Power ${formatQuantity(Math.abs(rec.power), 'W')} ${rec.power < 0 ? '(delivered)' : '(absorbed)'}`,
  ]);
}

/** `Power: 12.3 mW of 500 mW (2.5 %)` for a device or resistor with a limit. */
function powerLine(analysis: Analysis, el: Element, rec: DeviceRecord): string | undefined {
  const limit = powerLimit(el, analysis.options);
  const p = dissipation(rec);
  if (!limit || p === undefined) return undefined;
  const whence = limit.from === 'instance' ? 'its RATEDPOWER' : limit.from === 'model' ? 'its model’s RATEDPOWER' : 'the default limit';
  return `Power ${formatQuantity(p, 'W')}, ${formatShare(p / limit.watts)} of ${formatQuantity(limit.watts, 'W')} (${whence})${p > limit.watts ? ' — **over its limit**' : ''}`;
}

function describeElement(el: Element): string {
  switch (el.kind) {
    case 'R':
      return `resistor, ${formatQuantity(el.resistance, 'Ω')}${el.tc1 || el.tc2 ? ` at the nominal temperature, TC1 ${formatNumber(el.tc1 ?? 0)}/K, TC2 ${formatNumber(el.tc2 ?? 0)}/K²` : ''}`;
    case 'C':
      return `capacitor, ${formatQuantity(el.capacitance, 'F')} (open at DC)`;
    case 'L':
      return `inductor, ${formatQuantity(el.inductance, 'H')} (short at DC)`;
    case 'V':
      return `voltage source, ${formatQuantity(el.dc, 'V')}`;
    case 'I':
      return `current source, ${formatQuantity(el.dc, 'A')}`;
    case 'E':
      return `voltage-controlled voltage source, gain ${formatNumber(el.gain)}`;
    case 'G':
      return `voltage-controlled current source, ${formatQuantity(el.gain, 'S')}`;
    case 'F':
      return `current-controlled current source, gain ${formatNumber(el.gain)} of I(${el.control})`;
    case 'H':
      return `current-controlled voltage source, ${formatQuantity(el.gain, 'Ω')} times I(${el.control})`;
    case 'D':
      return `diode, model ${el.model.name}${el.area !== 1 ? `, area ${formatNumber(el.area)}` : ''}${el.m !== 1 ? `, ${formatNumber(el.m)} in parallel` : ''}`;
    case 'Q':
      return `${el.model.kind.toUpperCase()} transistor, model ${el.model.name}${el.area !== 1 ? `, area ${formatNumber(el.area)}` : ''}${el.m !== 1 ? `, ${formatNumber(el.m)} in parallel` : ''}`;
    case 'J':
      return `${el.model.kind === 'pjf' ? 'P-channel' : 'N-channel'} JFET, model ${el.model.name}${el.area !== 1 ? `, area ${formatNumber(el.area)}` : ''}${el.m !== 1 ? `, ${formatNumber(el.m)} in parallel` : ''}`;
    case 'M':
      return `${el.model.kind.toUpperCase()} transistor, model ${el.model.name}, W ${formatQuantity(el.w, 'm')}, L ${formatQuantity(el.l, 'm')}${el.m !== 1 ? `, ${formatNumber(el.m)} in parallel` : ''}`;
    case 'B':
      return `behavioural ${el.output === 'V' ? 'voltage' : 'current'} source${el.written !== 'B' ? ` (${el.written} in ${el.form} form)` : ''}, a function of ${el.inputs.length} controlling ${el.inputs.length === 1 ? 'quantity' : 'quantities'}`;
    case 'T':
      return 'transmission line (at DC each conductor is a short from port 1 to port 2)';
    case 'S':
      return `voltage-controlled switch, model ${el.model.name}`;
    case 'W':
      return `current-controlled switch, model ${el.model.name}, controlled by I(${el.control})`;
  }
}

/** Structures a device (hierarchical name) belongs to. */
export function structuresOf(analysis: Analysis, device: string): Structure[] {
  return [...(deviceTable(analysis.structures).get(device.toLowerCase()) ?? [])];
}

/**
 * The tables hovers read (structures by device, targets), built now so the first hover after an analysis lands does
 * not build them.
 */
export function prepareHover(analysis: Analysis): void {
  for (const _ of prepareHoverSteps(analysis));
}

/**
 * `prepareHover` in steps of a few hundred structures, for a host that gives requests a turn between them (the 20k
 * array's 5,000 structures took 10–30 ms in one task at load 7); a hover asked meanwhile finishes the table itself.
 */
export function* prepareHoverSteps(analysis: Analysis): Generator<void, void, undefined> {
  for (let k = TABLE_STEP; k < analysis.structures.length + TABLE_STEP; k += TABLE_STEP) {
    deviceTable(analysis.structures, k);
    yield;
  }
  try {
    targetsOf(analysis);
  } catch {
    // A hover reads them again and says nothing of targets when they cannot be read.
  }
}

/** Structures put in the device table between two yields of `prepareHoverSteps`. */
const TABLE_STEP = 500;

/** The structures of an analysis by lower-case device name (in the analysis's order), and how many are in so far. */
const structuresByDevice = new WeakMap<Structure[], { byDevice: Map<string, Structure[]>; done: number }>();

/** The device table of a structure list with its first `until` structures in (all by default): built once per analysis, a hover asks for one device among thousands. */
function deviceTable(structures: Structure[], until = structures.length): Map<string, Structure[]> {
  let table = structuresByDevice.get(structures);
  if (!table) structuresByDevice.set(structures, (table = { byDevice: new Map(), done: 0 }));
  const { byDevice } = table;
  for (const end = Math.min(until, structures.length); table.done < end; table.done++) {
    const s = structures[table.done]!;
    const seen = new Set<string>();
    for (const d of s.devices) {
      const lower = d.toLowerCase();
      if (seen.has(lower)) continue;
      seen.add(lower);
      const list = byDevice.get(lower);
      if (list) list.push(s);
      else byDevice.set(lower, [s]);
    }
  }
  return byDevice;
}

/** The `; expect` targets of an analysis's documents, read once per set of documents (a hover used to read every card's comment each time). */
const targetsByDocuments = new WeakMap<Analysis['documents'], Target[]>();

function targetsOf(analysis: Analysis): Target[] {
  let targets = targetsByDocuments.get(analysis.documents);
  if (!targets) targetsByDocuments.set(analysis.documents, (targets = readTargets(documentsMentioningTargets(analysis.documents)).targets));
  return targets;
}

/**
 * The documents whose text holds the word a target's notation needs (`expect`, `expected`, `expects`, any
 * case): the others have no target, so one search of their text replaces a walk over all their cards'
 * comments (hundreds of milliseconds on a 20,000-element netlist). Targets are read per document, so
 * leaving the others out changes nothing else.
 */
function documentsMentioningTargets(documents: Analysis['documents']): Analysis['documents'] {
  const out: Analysis['documents'] = nameTable();
  for (const [uri, doc] of Object.entries(documents)) if (/expect/i.test(doc.text)) out[uri] = doc;
  return out;
}

function nodeHover(analysis: Analysis, uri: string, card: Card, token: Token): HoverResult | undefined {
  const resolved = resolveNodeToken(analysis, uri, card, token);
  if (resolved.length === 0) return { markdown: `Node **${token.text}** — not in the elaborated circuit.`, span: token.span };
  const op = analysis.operatingPoint;
  // A node of a subcircuit stands for one node per instance: the first few in full, the rest as a range.
  const shown = resolved.length > MAX_NODE_SECTIONS ? resolved.slice(0, MAX_NODE_SECTIONS - 1) : resolved;
  const sections = shown.map((r) => {
    const v = op?.nodes[r.name];
    const tied = op?.tiedNodes?.includes(r.name) ?? false;
    const head =
      `Node **${r.name}**${r.node === 0 ? ' (ground)' : ''}: ${v !== undefined ? formatQuantity(v, 'V') : 'not solved'}` +
      (tied ? '\n\nNo DC path to ground: the solver tied this node to ground through 1 TΩ so the rest of the circuit could be solved, so this voltage is arbitrary.' : '');
    // Only the connections shown are looked up (a supply node can have tens of thousands).
    const total = connectionCount(analysis, r.node);
    const shown = connectionsOf(analysis, r.node, 12).map((c) => `${c.element.name} (${c.terminal})`);
    const more = total > shown.length ? `, and ${total - shown.length} more` : '';
    // A voltage a structure produces on this node (a bandgap's VBG, a VBE multiplier's voltage) is said here too.
    const produced: string[] = [];
    for (const s of analysis.structures) {
      if (!spending.spend()) break;
      if (!s.voltages || s.voltages.length === 0) continue;
      const lines = derivedVoltageLines(s);
      (s.voltages ?? []).forEach((v, k) => {
        if (v.node === r.name) produced.push(`${lines[k]} — from the ${kindName(s.kind)} on ${s.reference.device}`);
      });
    }
    return `${head}${produced.length ? `\n\n${bullet(produced)}` : ''}\n\nConnects ${total === 0 ? 'to nothing' : shown.join(', ') + more}.`;
  });
  if (shown.length < resolved.length) sections.push(restOfInstances(resolved.slice(shown.length), op));
  return { markdown: sections.join('\n\n---\n\n'), span: token.span };
}

/** Instances of a subcircuit node listed one by one in a hover; past it the rest are summarised. */
const MAX_NODE_SECTIONS = 8;

/** One line for the instances a node hover does not list: how many, and the range of their voltages. */
function restOfInstances(rest: readonly ResolvedNode[], op: Analysis['operatingPoint']): string {
  let low = Infinity;
  let high = -Infinity;
  let solved = 0;
  for (const r of rest) {
    const v = op?.nodes[r.name];
    if (v === undefined || !Number.isFinite(v)) continue;
    solved++;
    if (v < low) low = v;
    if (v > high) high = v;
  }
  const range = solved === 0 ? 'not solved' : low === high ? `all at ${formatQuantity(low, 'V')}` : `from ${formatQuantity(low, 'V')} to ${formatQuantity(high, 'V')}`;
  return `…and ${rest.length} more instances (${rest[0]!.name} to ${rest[rest.length - 1]!.name}): ${range}.`;
}

function modelHover(
  analysis: Analysis,
  uri: string,
  name: string,
  scope: SubcktScope | undefined,
  span: Span,
  cardStart?: number,
  elements: Element[] = [],
): HoverResult | undefined {
  const models: Model[] = [];
  for (const el of elements) if ('model' in el && !models.includes(el.model)) models.push(el.model);
  if (models.length === 0) {
    const m = findModel(analysis, uri, name, scope, cardStart);
    if (m) models.push(m);
  }
  if (models.length === 0) {
    const sym = analysis.symbols.models.find((s) => s.name.toLowerCase() === name.toLowerCase());
    return { markdown: sym ? `Model **${sym.name}** (${sym.kind}) — not accepted by the elaborator (see the findings on its card).` : `Model **${name}** — not defined.`, span };
  }
  const sameParams = models.every((m) => JSON.stringify(m.params) === JSON.stringify(models[0].params));
  const shown = sameParams ? [models[0]] : models;
  return { markdown: shown.map(modelMarkdown).join('\n\n---\n\n'), span };
}

/** Finds the elaborated model a name means at a place: a model of the enclosing subcircuit first, then top level. */
export function findModel(analysis: Analysis, uri: string, name: string, scope: SubcktScope | undefined, cardStart?: number): Model | undefined {
  const circuit = analysis.circuit;
  if (!circuit) return undefined;
  const lower = name.toLowerCase();
  if (cardStart !== undefined) {
    const sym = analysis.symbols.models.find((s) => s.uri === uri && s.span.start === cardStart);
    if (sym?.key && circuit.models[sym.key]) return circuit.models[sym.key];
  }
  const candidates = Object.entries(circuit.models).filter(([, m]) => m.name.toLowerCase() === lower);
  if (scope) {
    const local = candidates.find(([, m]) => m.origin.uri === uri && m.origin.span.start >= scope.span.start && m.origin.span.end <= scope.span.end);
    if (local) return local[1];
  }
  return circuit.models[lower] ?? candidates[0]?.[1];
}

function modelMarkdown(m: Model): string {
  const info = MODEL_PARAMETERS[m.kind] ?? [];
  const given = new Set(m.given.map((g) => g.toUpperCase()));
  const names = [...new Set([...info.map((i) => i.name), ...Object.keys(m.params)])];
  const rows = names
    .filter((n) => m.params[n] !== undefined)
    .map((n) => {
      const meta = info.find((i) => i.name === n);
      return `| ${n} | ${paramValue(m.params[n], meta)} | ${given.has(n) ? 'given' : 'default'} | ${meta?.meaning ?? ''} |`;
    });
  const table = rows.length ? `| Parameter | Value | Source | Meaning |\n|---|---|---|---|\n${rows.join('\n')}` : 'No parameters are read for this model type.';
  return `Model **${m.name}** — ${m.kind.toUpperCase()}\n\n${table}`;
}

function paramValue(v: number, meta: ModelParameterInfo | undefined): string {
  if (!Number.isFinite(v)) return v > 0 ? 'unbounded (∞)' : '−∞';
  if (meta?.unit && meta.unit.length <= 2 && meta.unit !== 'eV') return formatQuantity(v, meta.unit);
  return formatNumber(v) + (meta?.unit ? ` ${meta.unit}` : '');
}

function modelParamHover(analysis: Analysis, uri: string, card: Extract<Card, { kind: 'model' }>, token: Token, scope: SubcktScope | undefined): HoverResult | undefined {
  const a = card.params.find((p) => sameToken(p.name, token) || sameToken(p.value, token));
  if (!a) return undefined;
  const model = findModel(analysis, uri, card.name.text, scope, card.span.start);
  const kind = modelKindOf(card.type.text);
  const pname = a.name.text.toUpperCase();
  const meta = kind ? MODEL_PARAMETERS[kind].find((i) => i.name === pname) : undefined;
  const value = model?.params[pname];
  const text =
    `**${pname}**${meta ? ` — ${meta.meaning}` : ''}\n\n` +
    (value !== undefined ? `Value: ${paramValue(value, meta)}` : meta ? 'Not evaluated (see the findings on this card).' : `The engine does not read ${pname} for ${card.type.text.toUpperCase()} models.`);
  return { markdown: text, span: token.span };
}

function subcktHover(analysis: Analysis, name: string, span: Span): HoverResult | undefined {
  const sym = analysis.symbols.subckts.find((s) => s.name.toLowerCase() === name.toLowerCase());
  if (!sym) return { markdown: `Subcircuit **${name}** — not defined.`, span };
  const params = Object.entries(sym.params).map(([k, v]) => `${k} = ${v === undefined ? 'not evaluated' : formatNumber(v)}`);
  return {
    markdown: `Subcircuit **${sym.name}**\n\nPorts: ${sym.ports.join(' ') || 'none'}${params.length ? `\n\nParameters: ${params.join(', ')}` : ''}`,
    span,
  };
}

function paramMarkdown(p: ParamSymbol): string {
  const where = p.scope ? `subcircuit ${p.scope}` : 'top level';
  const value = p.value !== undefined && Number.isFinite(p.value) ? formatNumber(p.value, 6) : 'not evaluated (see the findings on its card)';
  return `Parameter **${p.name}** (${where}) = ${value}\n\nDefined as \`${p.expression}\``;
}

function exprHover(analysis: Analysis, uri: string, card: Card, token: Token, scope: SubcktScope | undefined): HoverResult | undefined {
  if (card.kind === 'element') {
    const elements = elementsOfCard(analysis, uri, card);
    const values = elements.map((el) => mainValue(el, card, token)).filter((v): v is string => v !== undefined);
    if (values.length) return { markdown: `\`${token.text}\` evaluates to ${values.join('; ')}`, span: token.span };
  }
  if (card.kind === 'model') return modelParamHover(analysis, uri, card, token, scope);
  if (card.kind === 'param' || card.kind === 'subckt') {
    const a = card.params.find((x) => sameToken(x.value, token));
    const p = a && analysis.symbols.params.find((s) => s.uri === uri && s.nameSpan.start === a.name.span.start);
    if (p) return { markdown: paramMarkdown(p), span: token.span };
  }
  return { markdown: `\`${token.text}\` — not evaluated here (see the findings on this card).`, span: token.span };
}

function mainValue(el: Element, card: ElementCard, token: Token): string | undefined {
  const prefix = el.origin.instances.length ? `${el.origin.instances.map((i) => i.name).join('.')}: ` : '';
  const param = card.params.find((a) => sameToken(a.value, token));
  if (param) {
    const n = param.name.text.toUpperCase();
    if (el.kind === 'M' && n === 'W') return prefix + formatQuantity(el.w, 'm');
    if (el.kind === 'M' && n === 'L') return prefix + formatQuantity(el.l, 'm');
    if ((el.kind === 'M' || el.kind === 'Q' || el.kind === 'D') && n === 'M') return prefix + formatNumber(el.m);
    return undefined;
  }
  switch (el.kind) {
    case 'R':
      return prefix + formatQuantity(el.resistance, 'Ω');
    case 'C':
      return prefix + formatQuantity(el.capacitance, 'F');
    case 'L':
      return prefix + formatQuantity(el.inductance, 'H');
    case 'V':
      return prefix + formatQuantity(el.dc, 'V');
    case 'I':
      return prefix + formatQuantity(el.dc, 'A');
    case 'E':
    case 'F':
      return prefix + formatNumber(el.gain);
    case 'G':
      return prefix + formatQuantity(el.gain, 'S');
    case 'H':
      return prefix + formatQuantity(el.gain, 'Ω');
    case 'Q':
    case 'D':
      return sameToken(token, card.area) ? prefix + formatNumber(el.area) : undefined;
    default:
      return undefined;
  }
}

function bullet(items: string[]): string {
  return items.map((i) => `- ${i}`).join('\n');
}
