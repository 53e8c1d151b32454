// Hover text for an offset of an analysed netlist: device bias, node voltages, models, parameters and hand estimates.

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
  elementsOfCard,
  resolveNodeToken,
  sameToken,
  scopeAt,
  tokenAt,
  tokenIndex,
  type ResolvedNode,
  type SubcktScope,
} from './document-index';
import { formatNumber, formatPercent, formatQuantity } from '../view/format';
import { identifierAt, resolveParam } from './params';
import { MODEL_PARAMETERS, modelKindOf, type ModelParameterInfo } from './vocabulary';
import { dissipation, powerLimit } from '../checks/devices/power';
import { maxOf, minOf, pushAll } from '../arrays';
import { derivedVoltageLines, outputWords, startupLine } from './structure-words';
import { recordIsOff } from '../checks/devices/context';
import { spreadText, variationOfElement } from '../variation/text';

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

export function hoverAt(analysis: Analysis, uri: string, offset: number): HoverResult | undefined {
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

function elementSection(analysis: Analysis, el: Element): string {
  const op = analysis.operatingPoint;
  const rec: DeviceRecord | undefined = op?.devices[el.name];
  const lines: string[] = [];
  const heading = `**${el.name}** — ${describeElement(el)}`;
  lines.push(heading);
  if (!op) {
    lines.push('No operating point: the circuit was not solved (see the findings).');
    return lines.join('\n\n');
  }
  const tied = op.tiedNodes ? el.nodes.map((n) => analysis.circuit?.nodes[n]).filter((n): n is string => !!n && op.tiedNodes!.includes(n)) : [];
  if (tied.length > 0) {
    lines.push(`**Arbitrary values:** ${tied.join(', ')} ${tied.length > 1 ? 'have' : 'has'} no DC path to ground, so the solver tied ${tied.length > 1 ? 'them' : 'it'} to ground through 1 TΩ; the numbers below that depend on ${tied.length > 1 ? 'them' : 'it'} mean nothing until the node is connected.`);
  }
  if (!op.converged) lines.push('_The DC solve did not converge; the values below are from its last iteration._');
  if (!rec) {
    lines.push('No bias record for this device.');
    return lines.join('\n\n');
  }
  const nodeNames = el.nodes.map((n) => analysis.circuit?.nodes[n] ?? String(n));
  if (rec.type === 'bjt') {
    lines.push(`Region: **${regionWord(rec)}** (${rec.polarity.toUpperCase()})`);
    lines.push(
      bullet([
        `IC ${formatQuantity(rec.ic, 'A')} · IB ${formatQuantity(rec.ib, 'A')} · IE ${formatQuantity(rec.ie, 'A')} (positive into the terminal)`,
        `VBE ${formatQuantity(rec.vbe, 'V')} · VBC ${formatQuantity(rec.vbc, 'V')} · VCE ${formatQuantity(rec.vce, 'V')}`,
        `gm ${formatQuantity(rec.gm, 'S')} · rπ ${formatQuantity(rec.rpi, 'Ω')} · ro ${rec.roInfinite ? 'unbounded (no Early voltage in the model)' : formatQuantity(rec.ro, 'Ω')}`,
        `Collector ${nodeNames[0]}, base ${nodeNames[1]}, emitter ${nodeNames[2]}`,
      ]),
    );
  } else if (rec.type === 'mosfet') {
    lines.push(`Region: **${regionWord(rec)}** (${rec.polarity.toUpperCase()})`);
    const edge = rec.polarity === 'nmos' ? rec.vds - rec.vov : -rec.vds - rec.vov;
    lines.push(
      bullet([
        `ID ${formatQuantity(rec.id, 'A')} (positive into the drain)`,
        `VGS ${formatQuantity(rec.vgs, 'V')} · VDS ${formatQuantity(rec.vds, 'V')} · VTH ${formatQuantity(rec.vth, 'V')} · overdrive ${formatQuantity(rec.vov, 'V')}`,
        rec.vov > 0 ? `|VDS| − overdrive: ${formatQuantity(edge, 'V')} (${edge >= 0 ? 'beyond' : 'short of'} the saturation edge)` : 'Below threshold.',
        `gm ${formatQuantity(rec.gm, 'S')} · ro ${rec.roInfinite ? 'unbounded (LAMBDA = 0)' : formatQuantity(rec.ro, 'Ω')}`,
        `Drain ${nodeNames[0]}, gate ${nodeNames[1]}, source ${nodeNames[2]}, bulk ${nodeNames[3]}`,
      ]),
    );
  } else if (rec.type === 'jfet') {
    lines.push(`Region: **${regionWord(rec)}** (${rec.polarity === 'pjf' ? 'P-channel' : 'N-channel'} JFET)`);
    const own = rec.polarity === 'pjf' ? -1 : 1;
    const vov = own * rec.vgs - rec.vto;
    lines.push(
      bullet([
        `ID ${formatQuantity(rec.id, 'A')} (positive into the drain) · IG ${formatQuantity(rec.ig, 'A')}`,
        `VGS ${formatQuantity(rec.vgs, 'V')} · VDS ${formatQuantity(rec.vds, 'V')} · pinch-off VTO ${formatQuantity(own * rec.vto, 'V')} · VGS − VTO ${formatQuantity(vov, 'V')}`,
        vov > 0 ? `|VDS| − (VGS − VTO): ${formatQuantity(Math.abs(rec.vds) - vov, 'V')} (${Math.abs(rec.vds) >= vov ? 'beyond' : 'short of'} the saturation edge)` : 'Pinched off.',
        `gm ${formatQuantity(rec.gm, 'S')} · ro ${rec.roInfinite ? 'unbounded (LAMBDA = 0)' : formatQuantity(rec.ro, 'Ω')}`,
        `Drain ${nodeNames[0]}, gate ${nodeNames[1]}, source ${nodeNames[2]}`,
      ]),
    );
  } else if (rec.type === 'switch') {
    lines.push(`State: **${rec.region}** (${formatQuantity(rec.resistance, 'Ω')})`);
    lines.push(
      bullet([
        `Current ${formatQuantity(rec.current, 'A')} (from ${nodeNames[0]} through the switch to ${nodeNames[1]}) · voltage ${formatQuantity(rec.voltage, 'V')}`,
        `Control ${formatQuantity(rec.control, el.kind === 'W' ? 'A' : 'V')}`,
      ]),
    );
  } else if (rec.type === 'diode') {
    lines.push(`Region: **${regionWord(rec)}**`);
    lines.push(
      bullet([
        `ID ${formatQuantity(rec.id, 'A')} · VD ${formatQuantity(rec.vd, 'V')}`,
        `Dynamic resistance rd ${formatQuantity(rec.rd, 'Ω')} (dVD/dID here, series resistance included)`,
        `Anode ${nodeNames[0]}, cathode ${nodeNames[1]}`,
      ]),
    );
  } else {
    const items = [
      `Current ${formatQuantity(rec.current, 'A')} (from ${nodeNames[0]} through the element to ${nodeNames[1]})`,
      `Voltage ${formatQuantity(rec.voltage, 'V')} (V(${nodeNames[0]}) − V(${nodeNames[1]}))`,
      `Power ${formatQuantity(rec.power, 'W')} ${rec.power < 0 ? '(delivered)' : '(absorbed)'}`,
    ];
    lines.push(bullet(items));
  }
  const spread = variationOfElement(analysis, el.name);
  if (spread) lines.push(`Spread of ${spread.output === 'IREF' ? 'IREF' : 'its current'}: ${spreadText(spread)}`);
  const power = powerLine(analysis, el, rec);
  if (power) lines.push(power);
  for (const s of structuresOf(analysis, el.name)) lines.push(structureSection(s, el.name));
  return lines.join('\n\n');
}

/** The region to show: `off` when every terminal current is below the 1 pA floor, whatever the junction signs say. */
function regionWord(rec: DeviceRecord): string {
  if (recordIsOff(rec)) return 'off (every terminal current below 1 pA)';
  return 'region' in rec ? rec.region : '';
}

/** `Power: 12.3 mW of 500 mW (2.5 %)` for a device or resistor with a limit. */
function powerLine(analysis: Analysis, el: Element, rec: DeviceRecord): string | undefined {
  const limit = powerLimit(el, analysis.options);
  const p = dissipation(rec);
  if (!limit || p === undefined) return undefined;
  const whence = limit.from === 'instance' ? 'its RATEDPOWER' : limit.from === 'model' ? 'its model’s RATEDPOWER' : 'the default limit';
  return `Power: ${formatQuantity(p, 'W')} of ${formatQuantity(limit.watts, 'W')} (${whence})${p > limit.watts ? ' — **over its limit**' : ''}`;
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
    case 'J':
      return `${el.model.kind === 'pjf' ? 'P-channel' : 'N-channel'} JFET, model ${el.model.name}${el.area !== 1 ? `, area ${formatNumber(el.area)}` : ''}${el.m !== 1 ? `, ${formatNumber(el.m)} in parallel` : ''}`;
  }
}

/** Structures a device (hierarchical name) belongs to. */
export function structuresOf(analysis: Analysis, device: string): Structure[] {
  const lower = device.toLowerCase();
  return analysis.structures.filter((s) => s.devices.some((d) => d.toLowerCase() === lower));
}

function structureSection(s: Structure, device: string): string {
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
  const parts: string[] = [`**${capitalised(kindName(s.kind))}** (${s.technology.toUpperCase()}${s.instance ? `, in ${s.instance.replace(/\.$/, '')}` : ''}) — this is its ${role}.`];
  const est = s.estimate;
  // Structure-wide steps (no `devices`) plus the steps about this device: another output's IOUT is not this device's business.
  const steps = (est?.steps ?? []).filter((st) => !st.devices || st.devices.length === 0 || st.devices.some((d) => d.toLowerCase() === lower));
  if (steps.length) {
    parts.push('Hand estimate:\n\n' + steps.map((st) => `- ${st.quantity} = ${st.formula} = ${st.substituted} = **${formatQuantity(st.value, st.unit)}**`).join('\n'));
  }
  const rows: string[] = [];
  if (isRef || !out) {
    const e = est?.iref;
    const v = s.solved?.iref;
    if (e !== undefined || v !== undefined) rows.push(compareLine('IREF', e, v));
  }
  if (out) {
    const e = est?.iout[out.device];
    const v = s.solved?.iout[out.device];
    if (e !== undefined || v !== undefined) rows.push(compareLine('IOUT', e, v));
    const h = s.headroom[out.device];
    if (h !== undefined) rows.push(`Headroom: ${formatQuantity(h, 'V')} ${h >= 0 ? 'beyond' : 'short of'} the edge of the active region`);
    const c = s.compliance[out.device];
    if (c) rows.push(`Output stays active for ${formatQuantity(c.min, 'V')} ≤ V(${out.node}) ≤ ${formatQuantity(c.max, 'V')}`);
    const ro = s.outputResistance[out.device];
    if (ro !== undefined) rows.push(`Output resistance ≈ ${formatQuantity(ro, 'Ω')}`);
    const spread = s.corners.filter((k) => k.iout[out.device] !== undefined);
    if (spread.length) {
      const vals = spread.map((k) => k.iout[out.device]);
      rows.push(`Across ${spread.length} corners: ${formatQuantity(minOf(vals), 'A')} to ${formatQuantity(maxOf(vals), 'A')}${spread.some((k) => k.outOfRegion.includes(out.device)) ? ' (leaves its active region at some corners)' : ''}`);
    }
  }
  pushAll(rows, derivedVoltageLines(s));
  const startup = startupLine(s);
  if (startup) rows.push(startup);
  if (rows.length) parts.push(bullet(rows));
  if (s.discrepancy) parts.push(`Why estimate and solve differ: ${s.discrepancy}`);
  return parts.join('\n\n');
}

function compareLine(label: string, estimate: number | undefined, solved: number | undefined): string {
  if (estimate !== undefined && solved !== undefined) {
    const rel = estimate !== 0 ? (solved - estimate) / Math.abs(estimate) : NaN;
    return `${label}: hand estimate ${formatQuantity(estimate, 'A')}, solved ${formatQuantity(solved, 'A')}${Number.isFinite(rel) ? ` (${formatPercent(rel)})` : ''}`;
  }
  if (solved !== undefined) return `${label}: solved ${formatQuantity(solved, 'A')}`;
  return `${label}: hand estimate ${formatQuantity(estimate ?? NaN, 'A')}`;
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
    const conns = connectionsOf(analysis, r.node);
    const shown = conns.slice(0, 12).map((c) => `${c.element.name} (${c.terminal})`);
    const more = conns.length > shown.length ? `, and ${conns.length - shown.length} more` : '';
    // A voltage a structure produces on this node (a bandgap's VBG, a VBE multiplier's voltage) is said here too.
    const produced: string[] = [];
    for (const s of analysis.structures) {
      const lines = derivedVoltageLines(s);
      (s.voltages ?? []).forEach((v, k) => {
        if (v.node !== r.name) return;
        produced.push(`${lines[k]} — from the ${kindName(s.kind)} on ${s.reference.device}`);
        const spread = s.variation?.voltages?.[v.name];
        if (spread) produced.push(`${v.name} spread: ${spreadText(spread)}`);
      });
    }
    return `${head}${produced.length ? `\n\n${bullet(produced)}` : ''}\n\nConnects ${conns.length === 0 ? 'to nothing' : shown.join(', ') + more}.`;
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
