// The fuzz target: generated and mutated netlists through the engine, every editor feature at random
// positions, every output format and every fix, each case checked against the invariants of hostile
// input (docs/RELIABILITY.md). Used by `npm run fuzz` (any number of cases) and by CI (a seeded 20k).
//
// A case is a pure function of (seed, index): `caseInput(seed, i)` rebuilds it, so a failure found at
// case 731,204 of a long run is replayed alone with `npm run fuzz -- --seed S --from 731204 --cases 1`.
// The netlists are invented scenarios; nothing here is copied from elsewhere.
//
// Invariants, per case:
//   - nothing throws (analysis, features, reports, fixes) and no case runs past CASE_BUDGET_MS;
//   - every finding code and SARIF rule id is in the catalogue;
//   - every range (finding, related location, fix edit, hover, definition, reference, rename edit,
//     completion replace range, inlay offset, outline symbol, inactive branch) lies inside its document;
//   - every number in findings' data, the operating point, the structures, the output characteristic
//     and the JSON report (every corner included) is finite, so JSON writes it as itself (never NaN or
//     Infinity as null);
//   - no text shown to a person (messages, hovers, labels, outline, fix titles, reports) contains
//     NaN, Infinity, "undefined" as a leaked value or "[object Object]";
//   - every fix's edits lie in their document, do not overlap, and the edited text parses with no
//     more syntax errors than before; an added `.model` card defines the model it names;
//   - the text report echoes no raw terminal control character.

import { analyseSession, sizingFixesOf } from '../../shared-analysis/src/service';
import { findingCatalogue, type CodeInfo } from '../../shared-analysis/src/codes';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { MemoryWorkspace, type Finding, type Fix, type Span } from '../../shared-analysis/src/types';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { inlayHints, type InlayDetail } from '../../shared-analysis/src/features/inlay';
import { documentSymbols, type OutlineSymbol } from '../../shared-analysis/src/features/symbols';
import { definitionAt, prepareRename, referencesAt, renameAt } from '../../shared-analysis/src/features/navigation';
import { completionsAt } from '../../shared-analysis/src/features/completion';
import { outputCharacteristic } from '../../shared-analysis/src/features/sweep';
import { parse, startsWithDefinitionCard } from '../../shared-analysis/src/syntax/parser';
import { jsonReport, sarifReport, textReport } from '../../server/src/cli';
import { rng } from '../seeded-random';
import { FUZZ_ROOT, INCLUDING_SEED, SEED_LIBRARY as LIBRARY, SEED_NETLISTS as SEEDS } from './seeds';

declare const performance: { now(): number };

/** Wall-clock budget of one case; far above the normal cost (milliseconds), so only a runaway trips it. */
export const CASE_BUDGET_MS = 20_000;
export const DEFAULT_SEED = 20261202;
const ROOT = FUZZ_ROOT;

/** A violated invariant; the message names it and where. */
export class InvariantError extends Error {}

function check(ok: boolean, message: () => string): void {
  if (!ok) throw new InvariantError(message());
}

// ---------------------------------------------------------------------------------------------
// Inputs

/** Pieces inserted anywhere: syntax and values that reach every stage's error paths, and hostile names. */
const FRAGMENTS = [
  ' ', '\n', '\r\n', '\r', '\t', '+', '*', ';', '$ ', '$', '//', '=', '(', ')', '{', '}', "'", '"', ',', '.', '0', '1k', '1e400', '-1',
  '1e-300', '1e-320', '{1/0}', '{sqrt(-1)}', '{zz}', '{1e308*10}', '{constructor}', '{__proto__ == __proto__ ? 5 : 1}',
  '; expect 1mA ±5%', '; expect 0A', '; expect 1e-320A', '; expect 100uA ±', '* expect Q2 = 1e99A', '* expect QZ = 1mA',
  '.param a={b} b={a}', '.include "lib/drivers.inc"', '.include missing.inc', '.include /proc/self/environ', '.lib "lib/corners.lib" nosuch',
  '.subckt', '.ends', '.if (1)', '.elseif (0)', '.else', '.endif', '.control', '.endc', '.alter', '.end', '.endl', '.lib x', '.func f(x)=f(x)',
  'X9 a b cell', 'X8 a', '.model qz npn (is=0 bf=-1 vaf=-3)', '.model mz nmos (kp=0 vto=1e9)', '.model __proto__ npn', '.model QX constructor',
  'Q9 a b c qamp', 'Q7 a b c q$$', 'M9 a b c d nch W=0 L=1e3', 'F9 a b Vnope 1', 'R9 a a 0', 'V9 a a 1', 'I9 a 0 1e9', 'V8 n 0 1e12', 'R8 n 0 1e-30',
  'R7 __proto__ 0 1k', 'R6 constructor toString 1k', '.temp -400', '.temp 1e6', '.option scale=1e-6', 'M=0', 'M=-2', 'µ', 'Ω', '\u00a0', '\ud83d\ude00',
  '\u0000', '\ud800', '\u001b[31m', '\u009b', '\u202e', '\ufeff', '\u001a',
  'J9 a b c jn', 'J8 a b c jp 0', '.model jz njf (beta=-1 vto=1e9 is=-1)', 'S9 a b c d smod', 'W9 a b VCTL wmod', 'W8 a b Vnope wmod',
  '.model sz sw (ron=0 roff=-1 vh=-3)', 'R7 a b RPOLY L=1u', 'R6 a b 1k TC=1,2', 'TC2=1e9', 'B9 a b V={log(V(a))}', 'B8 a 0 I={1/V(b)}',
  'E9 a 0 POLY(3) a 0 b', 'G9 a b TABLE {V(c)} = (1,1) (0,2)', 'E8 a 0 VALUE={I(Vnope)}', 'B7 a 0 V={V(a,b,c)}', 'T9 a 0 a 0 Z0=50', 'T8 a b',
];

/** Engineering numbers a value may be replaced with, from ordinary to extreme. */
const NUMBERS = ['0', '-0', '1', '1e-18', '1e18', '1e300', '-1e300', '5meg', '0.1p', '1T', '3.3', '-12', '1e-320', '2X', '10kOhm', '4.7µ', '1e999', '-1e999', '{1e999}'];

/** A small seeded picker over one case's random stream. */
class Pick {
  constructor(readonly next: () => number) {}
  int(n: number): number {
    return Math.floor(this.next() * n);
  }
  one<T>(list: readonly T[]): T {
    return list[this.int(list.length)]!;
  }
  chance(p: number): boolean {
    return this.next() < p;
  }
  /** A short string of arbitrary UTF-16 code units, biased towards ASCII. */
  junk(max: number): string {
    let s = '';
    for (let k = this.int(max + 1); k > 0; k--) s += String.fromCharCode(this.chance(0.8) ? 32 + this.int(95) : this.int(0x10000));
    return s;
  }
}

function mutate(text: string, p: Pick): string {
  let t = text;
  for (let n = 1 + p.int(6); n > 0; n--) {
    const at = p.int(t.length + 1);
    switch (p.int(6)) {
      case 0:
      case 1:
        t = t.slice(0, at) + (p.chance(0.85) ? p.one(FRAGMENTS) : p.junk(5)) + t.slice(at);
        break;
      case 2:
        t = t.slice(0, at) + t.slice(at + 1 + p.int(14));
        break;
      case 3: {
        const start = t.lastIndexOf('\n', at - 1) + 1;
        const nl = t.indexOf('\n', at);
        const end = nl < 0 ? t.length : nl + 1;
        t = t.slice(0, end) + t.slice(start, end) + t.slice(end);
        break;
      }
      case 4: {
        // Replace a number-like word, so values (not only syntax) are fuzzed.
        const hits = [...t.matchAll(/(?<=[\s=({])-?\d[\w.]*/g)];
        if (hits.length === 0) break;
        const h = hits[p.int(hits.length)]!;
        t = t.slice(0, h.index) + p.one(NUMBERS) + t.slice(h.index! + h[0].length);
        break;
      }
      default:
        // Typing at the end of a file: the document stops mid-card.
        if (p.chance(0.3)) t = t.slice(0, at);
    }
  }
  return t;
}

/** A random network of sources, passives, transistors and subcircuit instances on a few nodes. */
function randomNetwork(p: Pick): string {
  const nodes = ['0', 'vcc', 'vee', 'a', 'b', 'c', 'd', 'gnd', '__proto__', 'n1'];
  const value = (): string => (p.chance(0.5) ? p.one(NUMBERS) : p.one(['1k', '10k', '100u', '5', '{vs}', '{vs/2}', '2.2meg', "'vs*2'"]));
  const lines = ['Random bias network', '.param vs=5', 'V1 vcc 0 {vs}', 'VN vee 0 -5'];
  for (let n = 1 + p.int(14), k = 1; k <= n; k++) {
    const a = p.one(nodes), b = p.one(nodes), c = p.one(nodes);
    switch (p.int(8)) {
      case 0: lines.push(`${p.one(['R', 'C', 'L', 'V', 'I'])}${k} ${a} ${b} ${value()}`); break;
      case 1: lines.push(`Q${k} ${a} ${b} ${c} ${p.one(['qn', 'qp', 'qx'])}${p.chance(0.3) ? ` ${p.one(['2', '0.5', '0'])}` : ''}`); break;
      case 2: lines.push(`M${k} ${a} ${b} ${c} ${c} ${p.one(['mn', 'mp', 'mx'])} ${p.one(['W=1u L=1u', 'W=10u L=0.5u M=2', 'W=0 L=1u', ''])}`); break;
      case 3: lines.push(`D${k} ${a} ${b} dd`); break;
      case 4: lines.push(`${p.one(['E', 'G'])}${k} ${a} ${b} ${c} ${p.one(nodes)} ${value()}`); break;
      case 5: lines.push(`${p.one(['F', 'H'])}${k} ${a} ${b} V1 ${value()}`); break;
      case 6: lines.push(`X${k} ${a} ${b} cell ratio=${p.one(['2', '0', '-1', '{vs}'])}`); break;
      default: lines.push(p.one(['; expect 1mA ±5%', '* expect Q1 = 100uA ±10%', '.temp 85', '.param vs=3', '.if (vs > 4)', '.else', '.endif']));
    }
  }
  lines.push('.subckt cell top out ratio=1', 'RR top r 10k', 'QR r r 0 qn', 'QO out r 0 qn {ratio}', '.ends cell');
  lines.push('.model qn NPN (BF=100 VAF=50)', '.model qp PNP (BF=60 VAF=30)', '.model mn NMOS (VTO=0.5 KP=100u LAMBDA=0.02)', '.model mp PMOS (VTO=-0.5 KP=40u)', '.model dd D (IS=1e-14)', '');
  return lines.join(p.chance(0.1) ? '\r\n' : '\n');
}

/** One case's files and the random stream that drives its probes. */
export interface FuzzCase {
  files: Record<string, string>;
  /** Whether the corner phase runs (it is the slowest stage, so only some cases pay for it). */
  corners: boolean;
  pick: Pick;
}

/** The case at `index` of a run seeded with `seed`: the same inputs every time. */
export function caseInput(seed: number, index: number): FuzzCase {
  const p = new Pick(rng((Math.imul(seed, 0x9e3779b1) ^ Math.imul(index + 1, 0x85ebca6b)) >>> 0));
  const files: Record<string, string> = { ...LIBRARY };
  const mode = p.int(10);
  if (mode < 6) files[ROOT] = mutate(p.one(SEEDS), p);
  else if (mode < 8) files[ROOT] = p.chance(0.5) ? mutate(randomNetwork(p), p) : randomNetwork(p);
  else if (mode < 9) {
    const lib = p.one(Object.keys(LIBRARY));
    files[lib] = mutate(LIBRARY[lib]!, p);
    files[ROOT] = SEEDS[INCLUDING_SEED]!;
  } else {
    // Text with no structure at all, sometimes from fragments only.
    let t = p.chance(0.5) ? 'Junk\n' : '';
    for (let k = p.int(12); k > 0; k--) t += p.chance(0.5) ? p.one(FRAGMENTS) + (p.chance(0.5) ? ' ' : '\n') : p.junk(12);
    files[ROOT] = t;
  }
  return { files, corners: p.chance(0.1), pick: p };
}

// ---------------------------------------------------------------------------------------------
// Invariants

/** A leaked value in text meant for people ("= undefined V", "NaN mA", "×Infinity"), not the English word "undefined". */
const BAD_TEXT = /NaN|Infinity|(?<!\b(?:is|are|be|left) )undefined|\[object Object\]/;
/** Raw terminal controls (C0 but tab and line breaks, DEL, C1): the text report must show them escaped. */
// eslint-disable-next-line no-control-regex
const RAW_CONTROL = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f]/;

function goodText(text: string, what: string): void {
  check(!BAD_TEXT.test(text), () => `${what} shows a leaked value: ${JSON.stringify(text.slice(0, 300))}`);
}

function finiteNumbers(value: unknown, path: string, seen = new Set<unknown>()): void {
  if (typeof value === 'number') {
    check(Number.isFinite(value), () => `${path} = ${value}`);
    return;
  }
  if (value === null || typeof value !== 'object' || seen.has(value)) return;
  seen.add(value);
  if (ArrayBuffer.isView(value)) return; // typed arrays stay in the process (solver state), never JSON
  for (const [k, v] of Object.entries(value)) finiteNumbers(v, `${path}.${k}`, seen);
}

/** Finite numbers only: JSON writes NaN and ±Infinity as null (ECMA-404), so these are what JSON cannot carry. */
function jsonSafe(value: unknown, path: string): void {
  if (value === undefined) return;
  finiteNumbers(value, path);
}

/** A `null` value in JSON text (after a colon, a comma or a bracket): where NaN or ±Infinity would have been written. */
const JSON_NULL = /[:,[]\s*null\b/;

/**
 * The first number that JSON cannot carry (NaN, ±Infinity: written as null, ECMA-404) in `value` as
 * JSON.stringify sees it: `toJSON` followed (the report's streamed tables), typed arrays read.
 */
function firstNonFinite(value: unknown, path: string, seen: Set<unknown>): string | undefined {
  if (typeof value === 'number') return Number.isFinite(value) ? undefined : `${path} = ${value}`;
  if (value === null || typeof value !== 'object' || seen.has(value)) return undefined;
  seen.add(value);
  const json = (value as { toJSON?: unknown }).toJSON;
  if (typeof json === 'function') return firstNonFinite((json as (k: string) => unknown).call(value, ''), path, seen);
  const entries: [string, unknown][] = ArrayBuffer.isView(value) ? Array.from(value as unknown as ArrayLike<number>, (v, i) => [String(i), v]) : Object.entries(value);
  for (const [k, v] of entries) {
    const bad = firstNonFinite(v, `${path}.${k}`, seen);
    if (bad) return bad;
  }
  return undefined;
}

/**
 * The whole document as the CLI writes it holds only numbers JSON carries: serialised once (the
 * streamed tables too), and only when the text shows a null is the document walked to tell a
 * null of its own from a NaN or an infinity written as null.
 */
export function jsonCarriesEveryNumber(value: unknown, path: string): void {
  const text = JSON.stringify(value);
  if (!JSON_NULL.test(text)) return;
  const bad = firstNonFinite(value, path, new Set());
  check(bad === undefined, () => `${bad} (JSON writes it as null)`);
}

function spanIn(a: Analysis, uri: string, span: Span, what: string): void {
  const doc = a.documents[uri];
  check(doc !== undefined, () => `${what} points into ${uri}, which the analysis did not read`);
  const len = doc!.text.length;
  check(
    Number.isInteger(span.start) && Number.isInteger(span.end) && span.start >= 0 && span.start <= span.end && span.end <= len,
    () => `${what}: ${JSON.stringify(span)} outside 0..${len} of ${uri}`,
  );
}

function checkOutline(a: Analysis, uri: string, symbols: OutlineSymbol[]): void {
  for (const s of symbols) {
    spanIn(a, uri, s.span, `outline ${s.name}`);
    spanIn(a, uri, s.selectionSpan, `outline name ${s.name}`);
    check(s.name.length > 0, () => 'an outline symbol with no name');
    goodText(`${s.name} ${s.detail ?? ''}`, 'outline');
    checkOutline(a, uri, s.children);
  }
}

function checkFindings(a: Analysis, findings: readonly Finding[], catalogue: Record<string, CodeInfo>): void {
  for (const f of findings) {
    check(catalogue[f.code] !== undefined, () => `finding code ${f.code} is not in the catalogue`);
    spanIn(a, f.uri, f.span, `finding ${f.code}`);
    for (const r of f.related ?? []) spanIn(a, r.uri, r.span, `related location of ${f.code}`);
    check(f.message.length > 0, () => `${f.code} has no message`);
    goodText(f.message, `message of ${f.code}`);
    jsonSafe(f.data, `${f.code}.data`);
    for (const fix of f.fixes ?? []) checkFixShape(a, f, fix);
  }
}

function checkFixShape(a: Analysis, f: Finding, fix: Fix): void {
  goodText(fix.title, `fix title of ${f.code}`);
  const byUri = new Map<string, Span[]>();
  for (const e of fix.edits) {
    spanIn(a, e.uri, e.span, `fix edit of ${f.code}`);
    const list = byUri.get(e.uri) ?? [];
    list.push(e.span);
    byUri.set(e.uri, list);
  }
  for (const [uri, spans] of byUri) {
    spans.sort((x, y) => x.start - y.start || x.end - y.end);
    for (let k = 1; k < spans.length; k++) check(spans[k]!.start >= spans[k - 1]!.end, () => `fix "${fix.title}" of ${f.code} has overlapping edits in ${uri}`);
  }
}

/**
 * Applies a fix and reads the result again: no new syntax errors; a `.model` card it adds defines its
 * name. `errorsBefore` keeps each document's syntax-error count across the fixes of one analysis.
 */
function checkFixParses(a: Analysis, f: Finding, fix: Fix, errorsBefore = new Map<string, number>()): void {
  const byUri = new Map<string, typeof fix.edits>();
  for (const e of fix.edits) byUri.set(e.uri, [...(byUri.get(e.uri) ?? []), e]);
  for (const [uri, edits] of byUri) {
    const doc = a.documents[uri]!;
    let text = doc.text;
    for (const e of [...edits].sort((x, y) => y.span.start - x.span.start)) text = text.slice(0, e.span.start) + e.newText + text.slice(e.span.end);
    const hasTitle = uri === a.uri && !startsWithDefinitionCard(doc.text);
    let before = errorsBefore.get(uri);
    if (before === undefined) {
      before = parse(uri, doc.text, { hasTitle }).errors.length;
      errorsBefore.set(uri, before);
    }
    const after = parse(uri, text, { hasTitle });
    check(after.errors.length <= before, () => `fix "${fix.title}" of ${f.code} leaves text that does not parse (${after.errors.length} syntax errors, ${before} before): ${after.errors.map((x) => x.message).join('; ').slice(0, 300)}`);
    for (const e of edits) {
      const m = /^\.model\s+(\S+)/i.exec(e.newText.trimStart());
      if (!m) continue;
      const added = after.cards.some((c) => c.kind === 'model' && c.name.text === m[1]);
      check(added, () => `fix "${fix.title}" of ${f.code} adds a .model card that does not define ${m[1]}`);
    }
  }
}

const RENAMES = ['nn', 'x_2', '0', '', 'a b', 'vcc', '\u0000', 'R1', '__proto__', 'constructor'];
const DETAILS: InlayDetail[] = ['off', 'terse', 'full'];

/** Every editor feature at a few random positions (and both ends) of every document. */
function checkFeatures(a: Analysis, p: Pick): void {
  for (const [uri, doc] of Object.entries(a.documents)) {
    const text = doc.text;
    const isRoot = uri === a.uri;
    checkOutline(a, uri, documentSymbols(a, uri));
    const detail = p.one(DETAILS);
    const from = p.int(text.length + 1);
    for (const h of inlayHints(a, uri, { start: from, end: text.length }, detail)) {
      // A card that overlaps the range from before it gets its label at its own end, so only the document bounds hold.
      check(h.offset >= 0 && h.offset <= text.length, () => `inlay offset ${h.offset} outside 0..${text.length}`);
      goodText(`${h.label} ${h.tooltip ?? ''}`, 'inlay hint');
    }
    // Offsets a stale or confused client could send, too: one before the start and one past the end.
    const offsets = isRoot ? [0, text.length, -1, text.length + 1] : [];
    for (let k = isRoot ? 5 : 2; k > 0; k--) offsets.push(p.int(text.length + 1));
    for (const offset of offsets) {
      const hover = hoverAt(a, uri, offset);
      if (hover) {
        spanIn(a, uri, hover.span, `hover at ${offset}`);
        goodText(hover.markdown, `hover at ${offset}`);
      }
      for (const l of definitionAt(a, uri, offset)) spanIn(a, l.uri, l.span, `definition at ${offset}`);
      for (const l of referencesAt(a, uri, offset, { includeDeclaration: p.chance(0.5) })) spanIn(a, l.uri, l.span, `reference at ${offset}`);
      const prep = prepareRename(a, uri, offset);
      if ('span' in prep) spanIn(a, uri, prep.span, `rename range at ${offset}`);
      else goodText(prep.error, 'rename refusal');
      const renamed = renameAt(a, uri, offset, p.one(RENAMES));
      if ('edits' in renamed) for (const e of renamed.edits) spanIn(a, e.uri, e.span, `rename edit at ${offset}`);
      else goodText(renamed.error, 'rename refusal');
      for (const c of completionsAt(a, uri, offset)) {
        spanIn(a, uri, c.replace, `completion ${c.label} at ${offset}`);
        check(c.replace.end <= Math.max(0, Math.min(offset, text.length)), () => `completion ${c.label} at ${offset} replaces text after the cursor`);
        goodText(`${c.label} ${c.detail ?? ''}`, 'completion');
      }
    }
  }
  for (const r of a.inactive ?? []) spanIn(a, r.uri, r.span, 'inactive branch');
}

function checkSweep(a: Analysis, p: Pick): void {
  const outputs = a.structures.flatMap((s) => s.outputs.map((o) => o.device));
  const device = outputs.length > 0 && p.chance(0.8) ? p.one(outputs) : p.one(['QNOPE', 'Q1', '__proto__']);
  const points = p.one([2, 5, 9, 1, 2.5, 0]);
  const r = outputCharacteristic(a, device, points);
  if ('error' in r) {
    goodText(r.error, 'sweep refusal');
    return;
  }
  jsonSafe(r, `outputCharacteristic(${device})`);
  check(r.points.length >= 2 && r.points.length <= Math.max(2, points), () => `${device}: ${r.points.length} points of ${points}`);
  for (let k = 1; k < r.points.length; k++) check(r.points[k]!.v > r.points[k - 1]!.v, () => `${device}: sweep out of order`);
}

function checkReports(a: Analysis, catalogue: Record<string, CodeInfo>): void {
  const result = { path: 'top.cir', absolute: ROOT, analysis: a };
  // Every corner too, so the per-corner records are checked as well as their summary.
  jsonCarriesEveryNumber(jsonReport([result], { allCorners: true, handAnalysisSteps: true }), 'jsonReport');
  const sarif = sarifReport([result]) as { runs: { results: { ruleId: string; message: { text: string }; locations: { physicalLocation: { region: Record<string, number> } }[] }[] }[] };
  for (const r of sarif.runs[0]!.results) {
    check(catalogue[r.ruleId] !== undefined, () => `SARIF rule ${r.ruleId} is not in the catalogue`);
    for (const v of Object.values(r.locations[0]!.physicalLocation.region)) check(Number.isInteger(v) && v >= 1, () => `SARIF region value ${v}`);
  }
  const text = textReport(result);
  goodText(text, 'text report');
  check(!RAW_CONTROL.test(text), () => `the text report echoes a raw control character: ${JSON.stringify(text.match(RAW_CONTROL)![0])}`);
}

const CATALOGUE = findingCatalogue();

/** The analysis-level invariants alone (findings, operating point, structures), for the target's own tests. */
export function checkAnalysis(a: Analysis): void {
  checkFindings(a, a.findings, CATALOGUE);
  jsonSafe(a.operatingPoint, 'operatingPoint');
  jsonSafe(a.structures, 'structures');
}

/** Checks that applying `fix` of `finding` leaves text that parses, for the target's own tests. */
export function checkFix(a: Analysis, finding: Finding, fix: Fix): void {
  checkFixShape(a, finding, fix);
  checkFixParses(a, finding, fix);
}

/** Runs case `index` of the run seeded `seed`; throws an InvariantError (or the engine's own error) on a violation. */
export function runCase(seed: number, index: number): void {
  const input = caseInput(seed, index);
  const p = input.pick;
  const t0 = performance.now();
  const session = analyseSession({ uri: ROOT, text: input.files[ROOT]!, version: 1 }, new MemoryWorkspace(input.files), { corners: { enabled: input.corners } });
  const a = session.analysis;
  checkAnalysis(a);
  checkFeatures(a, p);
  if (a.structures.length > 0) checkSweep(a, p);
  // Every fix (the sizing ones of up to two missed targets: each costs several solves).
  let sized = 0;
  const errorsBefore = new Map<string, number>();
  for (const f of a.findings) {
    const fixes = [...(f.fixes ?? [])];
    if (f.code === 'target-missed' && sized < 2) {
      sized++;
      const more = sizingFixesOf(session, f);
      for (const fix of more) checkFixShape(a, f, fix);
      fixes.push(...more);
    }
    for (const fix of fixes) checkFixParses(a, f, fix, errorsBefore);
  }
  checkReports(a, CATALOGUE);
  const ms = performance.now() - t0;
  check(ms < CASE_BUDGET_MS, () => `the case took ${ms.toFixed(0)} ms`);
}

/** The netlist of a case, for a failure report. */
export function caseText(seed: number, index: number): string {
  return caseInput(seed, index).files[ROOT]!;
}
