// Where the spread comes from: resistor tolerances (written on the card or from the series), supply tolerance, and the mismatch of the devices of each recognised structure (docs/VARIATION.md).

import { float64Column, int32Column, uint8Column } from '../columns';
import type { Bjt, Circuit, Element, Jfet, Mosfet } from '../circuit';
import { endOfLineComments } from '../checks/targets';
import type { ElementCard, ParsedDocument } from '../syntax/ast';
import type { Structure } from '../structures/types';
import { thermalVoltage } from '../devices/physics';
import { topologyOf } from '../structures/topology';
import type { VariedParameter } from './sensitivity';
import { modelValue } from './sensitivity';

/**
 * Mismatch defaults for a device without its own figure (docs/VARIATION.md; common practice,
 * from memory): the σ of the difference between two identical unit devices.
 * - `MATCHVBE`: VBE difference of two BJTs at equal current, 0.5 mV (matched integrated devices;
 *   separate discrete parts are several mV: set it on their model).
 * - `MATCHBF`: relative difference of their β, 1 %.
 * - `MATCHVT`: Pelgrom's A_VT, 5 mV·µm (written in V·m: 5e-9).
 * - `MATCHKP`: Pelgrom's A_β, 1 %·µm (written in m: 1e-8).
 * - `MATCHVTO`: JFET pinch-off voltage difference of two matched unit devices, 5 mV (the offset
 *   limits of monolithic dual JFETs are 5–25 mV, read as about 3σ; from memory).
 * - `MATCHBETA`: relative difference of their BETA, 2 % (the IDSS ratio of such duals is held
 *   to about 5 %; from memory).
 * - `SPREADVTO`: a JFET's pinch-off voltage from one part to the next, as a fraction of |VTO|:
 *   25 % (general-purpose discrete n-channel JFETs specify VGS(off) over ranges such as −0.5 to
 *   −6 V, −0.3 to −3 V or −0.3 to −1.5 V; read as ±3σ about the middle, that is 22–28 % of it;
 *   from memory).
 */
export const MISMATCH_DEFAULTS = { MATCHVBE: 0.5e-3, MATCHBF: 0.01, MATCHVT: 5e-9, MATCHKP: 1e-8, MATCHVTO: 5e-3, MATCHBETA: 0.02, SPREADVTO: 0.25 } as const;

/** One independent source of spread: a parameter, its nominal value, its σ and its worst-case excursion (both in the parameter's units). */
export interface ToleranceSource {
  /** What a designer calls it: `RREF`, `VCC`, `Q1 VBE`, `M2 VTH`. */
  label: string;
  /** Contributors with the same group are summed when ranked (the mismatch of one parameter across one structure's devices). */
  group: string;
  /** For a mismatch group: the parameter (`VBE`), so the ranked name lists the devices that matter (`Q1/Q2 VBE`). */
  aspect?: string;
  element: string;
  parameter: VariedParameter;
  nominal: number;
  sigma: number;
  /** Worst-case excursion: the tolerance itself, or 3σ for a mismatch figure. */
  bound: number;
  /** Where the figure came from. */
  from: 'card' | 'series' | 'setting' | 'supply' | 'model' | 'default';
  /** The relative tolerance (resistors and sources) or the σ in its own unit (mismatch), as shown to people. */
  figure: number;
  /**
   * A device's own spread from one part to the next (a JFET's pinch-off voltage), not a mismatch among matched devices.
   * The sources made here have every field (undefined when it does not apply): sources of one shape keep the loops over them fast.
   */
  partSpread?: boolean;
}

/** A tolerance note in an end-of-line comment: `tol 0.1%` (also `tol=1%`, `tolerance ±2%`); group 1 is the figure in percent. */
export const TOLERANCE_NOTE = /\btol(?:erance)?\s*[:=]?\s*(?:±|\+\/-|\+-)?\s*([0-9]*\.?[0-9]+(?:e[-+]?\d+)?)\s*%/i;

/** Element card (uri, card start) -> relative tolerance written on it. */
export function readCardTolerances(documents: Record<string, ParsedDocument>): Map<string, number> {
  const out = new Map<string, number>();
  for (const uri of Object.keys(documents)) {
    const doc = documents[uri];
    // A note in a comment is a match within the text (a comment starts after `;` or `$`, so the note's
    // leading word boundary holds in the whole text too): a text without one has no card to look at.
    if (!TOLERANCE_NOTE.test(doc.text)) continue;
    for (const card of doc.cards) {
      if (card.kind !== 'element') continue;
      for (const c of endOfLineComments(doc.text, card as ElementCard)) {
        const m = TOLERANCE_NOTE.exec(doc.text.slice(c.start, c.end));
        if (!m) continue;
        const pct = Number(m[1]);
        if (Number.isFinite(pct) && pct >= 0 && pct < 100) out.set(`${uri}\u0000${card.span.start}`, pct / 100);
      }
    }
  }
  return out;
}

/** The tolerance written on an element's card (every instance of a subcircuit card shares it). */
export function cardTolerance(tolerances: Map<string, number>, el: Element): number | undefined {
  if (tolerances.size === 0) return undefined;
  return tolerances.get(`${el.origin.uri}\u0000${el.origin.span.start}`);
}

export interface SourceSettings {
  /** Resistor tolerance when the card gives none (relative). */
  resistorTolerance: number;
  /** Whether that figure is the series default or an explicit setting. */
  resistorFrom: 'series' | 'setting';
  /** Relative tolerance of every voltage source (the supply tolerance of the corners). */
  supplyTolerance: number;
}

/** The smallest positive normal double (IEEE 754 binary64). */
const SMALLEST_NORMAL = 2.2250738585072014e-308;

/**
 * Every independent source of spread of a circuit. A source whose σ is not a normal number (a
 * resistor, β or IS of 1e-320, say) is left out: its σ has lost its digits, and its derivative per
 * unit overflows (the device already has its out-of-range finding).
 */
export function toleranceSources(
  circuit: Circuit,
  structures: readonly Structure[],
  tolerances: Map<string, number>,
  settings: SourceSettings,
  temperatureC: number,
  devices: StructureDevices = structureDevices(circuit, structures),
): ToleranceSource[] {
  return madeSources(circuit, structures, tolerances, settings, temperatureC, devices).sources;
}

/** The sources of `toleranceSources` with their facts in columns, when every source's σ is normal (else none: the list is filtered). */
function madeSources(circuit: Circuit, structures: readonly Structure[], tolerances: Map<string, number>, settings: SourceSettings, temperatureC: number, devices: StructureDevices): { sources: ToleranceSource[]; facts: SourceFacts | undefined } {
  const out = new SourceSink(sourceBound(circuit, devices), circuit.elements.length);
  elementSources(out, circuit, tolerances, settings);
  jfetSpreads(out, circuit, devices);
  mismatchSources(out, circuit, structures, devices, temperatureC);
  // A list with a σ that is not normal is filtered (the facts' places would no longer be the sources').
  const facts = out.normal ? out.facts() : undefined;
  if (!facts) return { sources: normalSources(out.list), facts: undefined };
  return { sources: out.list, facts };
}

/** Each source's origin as a code: its position in this list (`SourceFacts.origin`). */
export const SOURCE_ORIGINS: readonly ToleranceSource['from'][] = ['card', 'series', 'setting', 'supply', 'model', 'default'];

/** Each source's kind as a code (`SourceFacts.kind`): a resistor's, an independent source's, a mismatch, a part spread. */
export const KIND_RESISTOR = 0;
export const KIND_SOURCE = 1;
export const KIND_MISMATCH = 2;
export const KIND_PART_SPREAD = 3;

/**
 * What the spread's readers take of every source of a list, in columns written as each source is made, while the object
 * is still in the processor's caches: its σ and bound (ranking), figure, kind and origin (the sources as the report lists
 * them), its element (each element's own source), and the varied parameters the list starts (the sources' parameters,
 * each once, in order). At 100,000 elements a list holds 150,000 sources, and each of these readers walked every object
 * again (about 10 ms a walk, most of it cache misses). Only for a list whose every σ is normal (`normalSources` keeps
 * all of it, in the order made).
 */
export interface SourceFacts {
  sigma: Float64Array;
  bound: Float64Array;
  figure: Float64Array;
  /** `KIND_RESISTOR` … `KIND_PART_SPREAD`. */
  kind: Uint8Array;
  /** Position in `SOURCE_ORIGINS`. */
  origin: Uint8Array;
  /** The element the source is of. */
  element: Int32Array;
  /** The sources' parameters, each once, in the order first met; `sourceParam[k]` is source k's. */
  params: ParameterList;
  sourceParam: Int32Array;
}

/**
 * The list being made, with its facts gathered as each source joins it, in typed columns sized once for the most sources
 * a circuit can have (`sourceBound`), read as views of the count made. (Grown by `push`, lists of 150,000 entries past
 * 128 KB stayed in V8's large-object space until a full collection: 15 MB more peak at 100,000 elements; copied to the
 * count, the columns left 8 MB of buffers to the next one.)
 */
class SourceSink {
  readonly list: ToleranceSource[] = [];
  /** Whether every σ and bound so far is a normal, finite number (`isNormal`). */
  normal = true;
  /** Whether more sources were made than the columns hold (then there are no facts: the objects are read). */
  private overflow = false;
  private count = 0;
  private readonly sigma: Float64Array;
  private readonly bound: Float64Array;
  private readonly figure: Float64Array;
  private readonly kind: Uint8Array;
  private readonly origin: Uint8Array;
  private readonly element: Int32Array;
  private readonly sourceParam: Int32Array;
  private readonly params: ParameterList;

  constructor(bound: number, elementCount: number) {
    this.sigma = float64Column(bound);
    this.bound = float64Column(bound);
    this.figure = float64Column(bound);
    this.kind = uint8Column(bound);
    this.origin = uint8Column(bound);
    this.element = int32Column(bound);
    this.sourceParam = int32Column(bound);
    this.params = new ParameterList(elementCount);
  }

  /** Adds `s` of kind `kind` (`KIND_…`) on `element`; `param` is its model parameter's name ('' for a resistance or a source value). */
  push(s: ToleranceSource, kind: number, element: number, param: string): void {
    this.list.push(s);
    if (this.count === this.sigma.length) this.overflow = true;
    if (this.overflow) return;
    const k = this.count++;
    if (!isNormal(s)) this.normal = false;
    this.sigma[k] = s.sigma;
    this.bound[k] = s.bound;
    this.figure[k] = s.figure;
    this.kind[k] = kind;
    this.origin[k] = SOURCE_ORIGINS.indexOf(s.from);
    this.element[k] = element;
    this.sourceParam[k] = this.params.addOf(kind, element, param, s.parameter);
  }

  /** The columns of the sources made (views); undefined when they did not fit. */
  facts(): SourceFacts | undefined {
    if (this.overflow) return undefined;
    const n = this.count;
    return {
      sigma: this.sigma.subarray(0, n),
      bound: this.bound.subarray(0, n),
      figure: this.figure.subarray(0, n),
      kind: this.kind.subarray(0, n),
      origin: this.origin.subarray(0, n),
      element: this.element.subarray(0, n),
      params: this.params,
      sourceParam: this.sourceParam.subarray(0, n),
    };
  }
}

/**
 * The most sources a circuit can have: a resistor's or an independent source's own, one per element that is not one of
 * the structures' devices (transistors), and per device at most two mismatch sources, and a part spread for a JFET: at
 * most the elements, the distinct devices and their JFETs (150,001 at 100,000 elements, as many as are made). Were it
 * ever exceeded, the sink would find its columns full and give no facts (the objects are read then).
 */
function sourceBound(circuit: Circuit, devices: StructureDevices): number {
  const elements = circuit.elements;
  const seen = uint8Column(elements.length);
  let unique = 0;
  let jfets = 0;
  for (let k = 0; k < devices.index.length; k++) {
    const i = devices.index[k];
    if (i >= 0 && !seen[i]) {
      seen[i] = 1;
      unique++;
      if (elements[i].kind === 'J') jfets++;
    }
  }
  return elements.length + unique + jfets;
}

/**
 * A circuit's tolerance sources with what a list made after a value edit needs to be patched from this one
 * (`patchedSources`): where each element's own source is, the tolerance written on each card, and what the other
 * sources were made from.
 */
export interface SourceList {
  sources: ToleranceSource[];
  /** Per element, the index of its own source (a resistor's or an independent source's) in `sources`; −1 when it has none. */
  sourceOf: Int32Array;
  /** Per element, the tolerance written on its card (NaN: none). */
  written: Float64Array;
  settings: SourceSettings;
  temperatureC: number;
  /** Each structure's id and device list, which the mismatch sources were made from. */
  ids: string[];
  devices: (readonly string[])[];
  /** Per source, 1 when it differs from the list this one was patched from; undefined for a list made afresh. */
  changed?: Uint8Array;
}

/** The sources of `toleranceSources` as a list a later one may be patched from (`devices`: the structures' devices, when the caller has them). */
export function sourceListOf(circuit: Circuit, structures: readonly Structure[], tolerances: Map<string, number>, settings: SourceSettings, temperatureC: number, devices?: StructureDevices): SourceList {
  return sourceListWithFacts(circuit, structures, tolerances, settings, temperatureC, devices).list;
}

/** `sourceListOf` with the sources' facts in columns (undefined when a σ is not normal: the list was filtered). */
export function sourceListWithFacts(circuit: Circuit, structures: readonly Structure[], tolerances: Map<string, number>, settings: SourceSettings, temperatureC: number, devices?: StructureDevices): { list: SourceList; facts: SourceFacts | undefined } {
  const { sources, facts } = madeSources(circuit, structures, tolerances, settings, temperatureC, devices ?? structureDevices(circuit, structures));
  const sourceOf = int32Column(circuit.elements.length).fill(-1);
  if (facts) elementSourcesOf(facts, sourceOf);
  else {
    for (let k = 0; k < sources.length; k++) {
      const p = sources[k].parameter;
      if (p.kind === 'resistance' || p.kind === 'source') sourceOf[p.element] = k;
    }
  }
  return { list: { sources, sourceOf, written: writtenTolerances(circuit, tolerances), settings, temperatureC, ids: structures.map((s) => s.id), devices: structures.map((s) => s.devices) }, facts };
}

/** Per element, the index of its own source (a resistor's or an independent source's), from the facts' kinds and elements. */
function elementSourcesOf(facts: SourceFacts, sourceOf: Int32Array): void {
  const { kind, element } = facts;
  for (let k = 0; k < kind.length; k++) if (kind[k] === KIND_RESISTOR || kind[k] === KIND_SOURCE) sourceOf[element[k]] = k;
}

/**
 * The source list of `circuit` made from `last`, the list of a circuit it differs from only in the resistances of the
 * elements `changed` (a value edit, or several): the sources of those elements and of every element whose written
 * tolerance differs are made again, the others (the rest of the elements', every device's mismatch and spread, which
 * read the structures, models and temperature) kept. Undefined when the settings, the temperature or the structures
 * differ, or an element gains or loses its source: the list is then made afresh.
 */
export function patchedSources(last: SourceList, circuit: Circuit, structures: readonly Structure[], tolerances: Map<string, number>, settings: SourceSettings, temperatureC: number, changed: ArrayLike<number>): SourceList | undefined {
  if (last.sourceOf.length !== circuit.elements.length || !sameSettings(last.settings, settings) || !Object.is(last.temperatureC, temperatureC) || !madeFromStructures(last, structures)) return undefined;
  const written = writtenTolerances(circuit, tolerances);
  const sources = last.sources.slice();
  const moved = uint8Column(sources.length);
  const remake = (e: number): boolean => {
    const k = last.sourceOf[e];
    const made = elementSource(circuit.elements[e], e, tolerances, settings);
    const now = made && isNormal(made) ? made : undefined;
    if ((k < 0) !== (now === undefined)) return false;
    if (now && !sameFigures(sources[k], now)) {
      sources[k] = now;
      moved[k] = 1;
    }
    return true;
  };
  for (let q = 0; q < changed.length; q++) if (!remake(changed[q])) return undefined;
  for (let e = 0; e < written.length; e++) if (!Object.is(written[e], last.written[e]) && !remake(e)) return undefined;
  return { ...last, sources, written, changed: moved };
}

/** Whether two sources of one parameter have the same figures. */
export function sameFigures(a: ToleranceSource, b: ToleranceSource): boolean {
  return a.nominal === b.nominal && a.sigma === b.sigma && a.bound === b.bound && a.figure === b.figure && a.from === b.from;
}

function sameSettings(a: SourceSettings, b: SourceSettings): boolean {
  return Object.is(a.resistorTolerance, b.resistorTolerance) && a.resistorFrom === b.resistorFrom && Object.is(a.supplyTolerance, b.supplyTolerance);
}

/** Whether the structures have the ids and devices a list was made from (the device lists are shared by a value edit's copies). */
export function madeFromStructures(last: SourceList, structures: readonly Structure[]): boolean {
  if (last.ids.length !== structures.length) return false;
  for (let s = 0; s < structures.length; s++) {
    const a = last.devices[s];
    const b = structures[s].devices;
    if (last.ids[s] !== structures[s].id || (a !== b && (a.length !== b.length || a.some((name, k) => name !== b[k])))) return false;
  }
  return true;
}

/** Per element, the tolerance written on its card (NaN: none). */
function writtenTolerances(circuit: Circuit, tolerances: Map<string, number>): Float64Array {
  const elements = circuit.elements;
  const out = float64Column(elements.length).fill(NaN);
  if (tolerances.size === 0) return out;
  for (let e = 0; e < elements.length; e++) out[e] = cardTolerance(tolerances, elements[e]) ?? NaN;
  return out;
}

/** The resistors' and the independent sources' tolerances. */
function elementSources(out: SourceSink, circuit: Circuit, tolerances: Map<string, number>, settings: SourceSettings): void {
  const elements = circuit.elements;
  for (let i = 0; i < elements.length; i++) {
    const source = elementSource(elements[i], i, tolerances, settings);
    if (source) out.push(source, source.parameter.kind === 'resistance' ? KIND_RESISTOR : KIND_SOURCE, i, '');
  }
}

/** A resistor's or an independent source's own tolerance source (undefined when it has none), before the normal-σ filter. */
function elementSource(el: Element, i: number, tolerances: Map<string, number>, settings: SourceSettings): ToleranceSource | undefined {
  if (el.kind === 'R') {
    const r = el.resistance;
    if (!(Number.isFinite(r) && r > 0)) return undefined;
    const written = cardTolerance(tolerances, el);
    const tol = written ?? settings.resistorTolerance;
    if (!(tol > 0)) return undefined;
    return { label: el.name, group: el.name, aspect: undefined, element: el.name, parameter: { kind: 'resistance', element: i }, nominal: r, sigma: (tol * r) / 3, bound: tol * r, from: written !== undefined ? 'card' : settings.resistorFrom, figure: tol, partSpread: undefined };
  }
  if (el.kind === 'V' || el.kind === 'I') {
    const v = el.dc;
    if (!(Number.isFinite(v) && v !== 0)) return undefined;
    const written = cardTolerance(tolerances, el);
    // A current source stands for a reference the designer gives; it spreads only when its card says so.
    const tol = written ?? (el.kind === 'V' ? settings.supplyTolerance : 0);
    if (!(tol > 0)) return undefined;
    return { label: el.name, group: el.name, aspect: undefined, element: el.name, parameter: { kind: 'source', element: i }, nominal: v, sigma: (tol * Math.abs(v)) / 3, bound: tol * Math.abs(v), from: written !== undefined ? 'card' : 'supply', figure: tol, partSpread: undefined };
  }
  return undefined;
}

/**
 * Every structure's devices as element indices (−1: a name the circuit does not have), structure s's at
 * `index[start[s] … start[s + 1] − 1]`, in the order of its `devices`: the names looked up once for the spread's outputs
 * (`structureOutputs`) and its mismatch sources, which each looked them up before.
 */
export interface StructureDevices {
  start: Int32Array;
  index: Int32Array;
}

export function structureDevices(circuit: Circuit, structures: readonly Structure[]): StructureDevices {
  // Element name -> index, the last of a name (the topology's table, built once per circuit).
  const byName = topologyOf(circuit).elementIndex;
  const { start, index } = structureDeviceSlots(structures);
  let at = 0;
  // Indexed: a for-of step makes an iterator result object until the function is optimised.
  for (let s = 0; s < structures.length; s++) {
    const devices = structures[s].devices;
    for (let k = 0; k < devices.length; k++) index[at++] = byName.get(devices[k]) ?? -1;
  }
  return { start, index };
}

/** `StructureDevices` with its places made and no device looked up yet (every index −1), for a pass that looks the names up anyway to fill. */
export function structureDeviceSlots(structures: readonly Structure[]): StructureDevices {
  const start = int32Column(structures.length + 1);
  for (let s = 0; s < structures.length; s++) start[s + 1] = start[s] + structures[s].devices.length;
  return { start, index: int32Column(start[structures.length]).fill(-1) };
}

/** A JFET's pinch-off voltage spreads from part to part: every JFET of a recognised structure, once, a lone one too. */
function jfetSpreads(out: SourceSink, circuit: Circuit, devices: StructureDevices): void {
  // Devices are marked by element index (one index per name), not kept in sets of names.
  const elements = circuit.elements;
  const seen = uint8Column(elements.length);
  for (let k = 0; k < devices.index.length; k++) {
    const i = devices.index[k];
    if (i < 0 || seen[i]) continue;
    seen[i] = 1;
    const el = elements[i];
    if (el.kind === 'J') pushJfetSpread(out, el, i);
  }
}

/** Mismatch: every device of a recognised structure varies on its own; the group names the structure's devices together. */
function mismatchSources(out: SourceSink, circuit: Circuit, structures: readonly Structure[], devices: StructureDevices, temperatureC: number): void {
  const elements = circuit.elements;
  const seen = uint8Column(elements.length);
  const vt = thermalVoltage(temperatureC);
  const members: number[] = [];
  const bjtModels = new Map<Bjt['model'], BjtModelFigures>();
  const groups = new GroupNames();
  for (let s = 0; s < structures.length; s++) {
    members.length = 0;
    for (let k = devices.start[s]; k < devices.start[s + 1]; k++) {
      const i = devices.index[k];
      if (i >= 0 && !seen[i]) members.push(i);
    }
    if (members.length < 2) continue;
    groups.start(structures[s].id);
    for (let m = 0; m < members.length; m++) {
      const i = members[m];
      seen[i] = 1;
      const el = elements[i];
      if (el.kind === 'Q') pushBjt(out, el, i, groups, vt, bjtModelFigures(el, bjtModels));
      else if (el.kind === 'M') pushMos(out, el, i, groups);
      else if (el.kind === 'J') pushJfetMismatch(out, el, i, groups);
    }
  }
}

/** The group names of one structure's mismatch, one string per group (its devices' sources share it, and ranking looks groups up by it). */
class GroupNames {
  private id = '';
  private readonly whats: string[] = [];
  private readonly names: string[] = [];

  start(id: string): void {
    this.id = id;
    this.whats.length = 0;
    this.names.length = 0;
  }

  /** `structure-id VBE`. */
  of(what: string): string {
    for (let k = 0; k < this.whats.length; k++) if (this.whats[k] === what) return this.names[k];
    const name = `${this.id} ${what}`;
    this.whats.push(what);
    this.names.push(name);
    return name;
  }
}

/** The sources whose σ and bound are normal, finite numbers: `all` itself when every one is (no copy of 30,000 at 20k). */
function normalSources(all: ToleranceSource[]): ToleranceSource[] {
  let first = 0;
  while (first < all.length && isNormal(all[first])) first++;
  if (first === all.length) return all;
  const out = all.slice(0, first);
  for (let k = first + 1; k < all.length; k++) if (isNormal(all[k])) out.push(all[k]);
  return out;
}

function isNormal(x: ToleranceSource): boolean {
  return x.sigma >= SMALLEST_NORMAL && Number.isFinite(x.sigma) && Number.isFinite(x.bound);
}

function figureOf(el: Bjt | Mosfet | Jfet, name: keyof typeof MISMATCH_DEFAULTS): { value: number; from: 'model' | 'default' } {
  const v = el.model.params[name];
  if (v !== undefined && Number.isFinite(v) && v >= 0) return { value: v, from: el.model.given.includes(name) ? 'model' : 'default' };
  return { value: MISMATCH_DEFAULTS[name], from: 'default' };
}

/** What a BJT's mismatch reads from its model, worked out once per model (an array's devices share a few). */
interface BjtModelFigures {
  nf: number;
  is: number;
  bf: number;
  vbe: { value: number; from: 'model' | 'default' };
  beta: { value: number; from: 'model' | 'default' };
}

function bjtModelFigures(el: Bjt, known: Map<Bjt['model'], BjtModelFigures>): BjtModelFigures {
  let f = known.get(el.model);
  if (!f) known.set(el.model, (f = { nf: modelValue(el, 'NF') || 1, is: modelValue(el, 'IS'), bf: modelValue(el, 'BF'), vbe: figureOf(el, 'MATCHVBE'), beta: figureOf(el, 'MATCHBF') }));
  return f;
}

function pushBjt(out: SourceSink, el: Bjt, i: number, group: GroupNames, vt: number, model: BjtModelFigures): void {
  const units = Math.max(el.area, 1e-30) * Math.max(el.m, 1e-30);
  const { nf, is, vbe, bf, beta } = model;
  // A VBE offset ΔV at equal current is an IS ratio of e^(ΔV/(NF·VT)): σ(ΔIS/IS) = σ(ΔVBE)/(NF·VT) for one device.
  const sigmaV = vbe.value / Math.sqrt(2 * units);
  if (is > 0 && sigmaV > 0) {
    const rel = sigmaV / (nf * vt);
    out.push({ label: `${el.name} VBE`, group: group.of('VBE'), aspect: 'VBE', element: el.name, parameter: { kind: 'model', element: i, param: 'IS' }, nominal: is, sigma: rel * is, bound: 3 * rel * is, from: vbe.from, figure: sigmaV, partSpread: undefined }, KIND_MISMATCH, i, 'IS');
  }
  const rel = beta.value / Math.sqrt(2 * units);
  if (bf > 0 && rel > 0) {
    out.push({ label: `${el.name} β`, group: group.of('β'), aspect: 'β', element: el.name, parameter: { kind: 'model', element: i, param: 'BF' }, nominal: bf, sigma: rel * bf, bound: 3 * rel * bf, from: beta.from, figure: rel, partSpread: undefined }, KIND_MISMATCH, i, 'BF');
  }
}

/**
 * What a field-effect device's mismatch reads: its threshold (VTO, shown as VTH for a MOSFET) and
 * its gain parameter, and the figures of record that set their σ per unit of area.
 */
interface FieldEffectMismatch {
  threshold: 'VTH' | 'VTO';
  thresholdFigure: 'MATCHVT' | 'MATCHVTO';
  gain: 'KP' | 'BETA';
  gainFigure: 'MATCHKP' | 'MATCHBETA';
}

const MOS_MISMATCH: FieldEffectMismatch = { threshold: 'VTH', thresholdFigure: 'MATCHVT', gain: 'KP', gainFigure: 'MATCHKP' };
const JFET_MISMATCH: FieldEffectMismatch = { threshold: 'VTO', thresholdFigure: 'MATCHVTO', gain: 'BETA', gainFigure: 'MATCHBETA' };

/** A field-effect device's threshold and gain mismatch, each device's σ the pair's Pelgrom figure over √(2·area) (docs/VARIATION.md). */
function pushFieldEffect(out: SourceSink, el: Mosfet | Jfet, i: number, group: GroupNames, area: number, m: FieldEffectMismatch): void {
  const vt = figureOf(el, m.thresholdFigure);
  const sigmaVt = vt.value / Math.sqrt(2 * area);
  if (sigmaVt > 0) {
    out.push({ label: `${el.name} ${m.threshold}`, group: group.of(m.threshold), aspect: m.threshold, element: el.name, parameter: { kind: 'model', element: i, param: 'VTO' }, nominal: modelValue(el, 'VTO'), sigma: sigmaVt, bound: 3 * sigmaVt, from: vt.from, figure: sigmaVt, partSpread: undefined }, KIND_MISMATCH, i, 'VTO');
  }
  const gain = modelValue(el, m.gain);
  const g = figureOf(el, m.gainFigure);
  const rel = g.value / Math.sqrt(2 * area);
  if (gain > 0 && rel > 0) {
    out.push({ label: `${el.name} ${m.gain}`, group: group.of(m.gain), aspect: m.gain, element: el.name, parameter: { kind: 'model', element: i, param: m.gain }, nominal: gain, sigma: rel * gain, bound: 3 * rel * gain, from: g.from, figure: rel, partSpread: undefined }, KIND_MISMATCH, i, m.gain);
  }
}

function pushMos(out: SourceSink, el: Mosfet, i: number, group: GroupNames): void {
  const area = el.w * el.l * el.m;
  if (!(area > 0) || !Number.isFinite(area)) return;
  pushFieldEffect(out, el, i, group, area, MOS_MISMATCH);
}

/** A JFET's own pinch-off spread: σ = SPREADVTO·|VTO| on VTO, independent of every other part. */
function pushJfetSpread(out: SourceSink, el: Jfet, i: number): void {
  const vto = modelValue(el, 'VTO');
  const spread = figureOf(el, 'SPREADVTO');
  const sigma = spread.value * Math.abs(vto);
  if (!(sigma > 0)) return;
  const label = `${el.name} VTO spread`;
  out.push({ label, group: label, aspect: undefined, element: el.name, parameter: { kind: 'model', element: i, param: 'VTO' }, nominal: vto, sigma, bound: 3 * sigma, from: spread.from, figure: sigma, partSpread: true }, KIND_PART_SPREAD, i, 'VTO');
}

/** The mismatch of a JFET among its structure's matched devices: VTO by MATCHVTO, BETA by MATCHBETA, each falling as 1/√(area·M). */
function pushJfetMismatch(out: SourceSink, el: Jfet, i: number, group: GroupNames): void {
  pushFieldEffect(out, el, i, group, Math.max(el.area, 1e-30) * Math.max(el.m, 1e-30), JFET_MISMATCH);
}

/** The varied parameters, each once: a resistor's or source's by its element, a model parameter by its name and element. */
export class ParameterList {
  readonly list: VariedParameter[] = [];
  private readonly resistance: Int32Array;
  private readonly source: Int32Array;
  private readonly model = new Map<string, Int32Array>();
  private temperature = -1;

  constructor(private readonly elementCount: number) {
    this.resistance = int32Column(elementCount).fill(-1);
    this.source = int32Column(elementCount).fill(-1);
  }

  /** The index of `p` in the list, added when new. */
  add(p: VariedParameter): number {
    if (p.kind === 'temperature') return this.temperature >= 0 ? this.temperature : (this.temperature = this.push(p));
    let table = p.kind === 'resistance' ? this.resistance : this.source;
    if (p.kind === 'model') {
      const byElement = this.model.get(p.param);
      if (byElement) table = byElement;
      else this.model.set(p.param, (table = int32Column(this.elementCount).fill(-1)));
    }
    return table[p.element] >= 0 ? table[p.element] : (table[p.element] = this.push(p));
  }

  /**
   * `add(p)` for a tolerance source's parameter `p` given by its kind code (`KIND_…`: a resistance, a source value, else
   * a model parameter), its element and, for a model parameter, its name: `p` itself is not read.
   */
  addOf(kind: number, element: number, param: string, p: VariedParameter): number {
    let table: Int32Array;
    if (kind === KIND_RESISTOR) table = this.resistance;
    else if (kind === KIND_SOURCE) table = this.source;
    else {
      const byElement = this.model.get(param);
      if (byElement) table = byElement;
      else this.model.set(param, (table = int32Column(this.elementCount).fill(-1)));
    }
    return table[element] >= 0 ? table[element] : (table[element] = this.push(p));
  }

  /** The index of element i's resistance or source value, added when new (no parameter object made for one already listed). */
  ofElement(kind: 'resistance' | 'source', element: number): number {
    const table = kind === 'resistance' ? this.resistance : this.source;
    return table[element] >= 0 ? table[element] : (table[element] = this.push({ kind, element }));
  }

  private push(p: VariedParameter): number {
    this.list.push(p);
    return this.list.length - 1;
  }
}
