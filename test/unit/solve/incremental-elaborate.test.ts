// Patching the last elaboration after an edit of one resistor's number (`patchedElaboration`) against the elaborator's
// own reading of the whole edited text (the independent computation): the circuit, the symbols, the findings and the
// inactive ranges written out as JSON must be the same text, for many seeded random edits, among them edits that must
// fall back (a parameter, a `.param` card, a node, a card inside a subcircuit, a zero, negative or out-of-range value,
// an expression). Then the whole analysis of each edit, through the patch, against a cold analysis.

import { describe, expect, it } from 'vitest';
import { analyseSession, type AnalysisSession } from '../../../shared-analysis/src/service';
import { patchedElaborationOf, reparsedDocument } from '../../../shared-analysis/src/incremental';
import { elaborationSettings } from '../../../shared-analysis/src/incremental-elaborate';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { rng } from '../../seeded-random';
import { expectSame } from './same-analysis';

const URI = '/t/patch.cir';
/** The server's first pass: corners later, in a phase of their own. */
const OPTIONS = { corners: { enabled: false } };

/**
 * An invented bias network with what a patch must carry over or refuse: a `.param` that cards use, M=, TC1= and a
 * rating on resistor cards, an unknown parameter (a finding of the elaborator after the edited cards), a subcircuit
 * defined after a first instance and used again later, a resistor taking its value from a model, an `.if` block with a
 * branch not taken, models after the cards that use them, and a loop through a controlled source that is singular when RF is 1k (the point does not converge).
 */
const NETLIST = [
  'Patched elaboration: a bias network',
  '.param rb=22k gain=2',
  'VCC vcc 0 DC 5',
  'R1 vcc b1 47k',
  'R2 b1 0 10k M=2',
  'RB vcc b2 {rb}',
  'Q1 c1 b1 e1 QN',
  'Q2 c2 b2 e1 QN',
  'RE e1 0 1k TC1=1e-3',
  'RC vcc c1 4.7k RATEDPOWER=0.25',
  'RD vcc c2 3.3k',
  'RX c1 0 100k FOO=1',
  'X1 vcc c1 cell',
  '.subckt cell a b',
  'RS a b 10k',
  '.ends cell',
  'RM vcc m1 RMOD L=10u W=1u',
  'RN m1 0 2.2k',
  '.if (gain > 1)',
  'R5 vcc d5 33k',
  '.else',
  'R6 vcc d5 33k',
  '.endif',
  'D5 d5 0 DN',
  'VIN in 0 1',
  'R0 in a 2k',
  'E1 o 0 a 0 2',
  'RF o a 1.5k',
  'R9 a 0 2k',
  'RL c2 0 10k',
  'X2 vcc d5 cell',
  'RT d5 t 1k',
  'RU t 0 1k',
  '.model QN NPN (IS=1e-15 BF=120 VAF=80)',
  '.model DN D (IS=1e-14)',
  '.model RMOD R (RSH=100)',
  '.end',
  '',
].join('\n');

/** Values that keep the patch (numbers in several notations and lengths) and values that must fall back to a whole elaboration. */
const PLAIN = ['4.7k', '10000', '1.2e3', '33K', '2.2meg', '1k', '1000', '680', '0.5k', '12.75k'];
const REFUSED = ['rb', '{rb*2}', '0', '-1k', '2e16'];

/** The text with one random edit: mostly a resistor card's number, sometimes something a patch must refuse. */
function randomEdit(text: string, random: () => number): string {
  const lines = text.split('\n');
  const pick = <T>(list: readonly T[]): T => list[Math.floor(random() * list.length)]!;
  const cards = lines.flatMap((l, i) => (/^R\S* \S+ \S+ \S/.test(l) ? [i] : []));
  const at = pick(cards);
  const fields = lines[at]!.split(' ');
  const roll = random();
  if (roll < 0.08) lines[1] = `.param rb=${pick(['22k', '27k', '3.3k'])} gain=2`;
  else if (roll < 0.13) fields[2] = pick(['b1', 'c2', 'x9']);
  else fields[3] = roll < 0.25 ? pick(REFUSED) : pick(PLAIN);
  if (roll >= 0.08) lines[at] = fields.join(' ');
  return lines.join('\n');
}

function session(text: string, previous?: AnalysisSession): AnalysisSession {
  const control = previous ? { keepIncremental: true, previous: previous.incremental, warmStart: previous.warmStart } : { keepIncremental: true };
  return analyseSession({ uri: URI, text }, new MemoryWorkspace({ [URI]: text }), OPTIONS, control);
}

function cold(text: string): AnalysisSession {
  return analyseSession({ uri: URI, text }, new MemoryWorkspace({ [URI]: text }), OPTIONS);
}

/** Everything an elaboration gives but the documents (which `incremental-parse.test.ts` compares), as JSON: key order and all. */
function elaborationJson(r: { circuit: unknown; symbols: unknown; findings: unknown; inactive: unknown }): string {
  return JSON.stringify({ circuit: r.circuit, symbols: r.symbols, findings: r.findings, inactive: r.inactive });
}

/**
 * The point, the structures and the findings as `expectSameAnalysis` compares them, but the device records to 1e-9
 * relative plus 1e-12 absolute: a voltage across a resistor between two nodes at almost the same potential is a
 * difference of two node voltages, and carries their last-bit rounding (1e-16 V against 0 V).
 */
function expectSamePoint(got: AnalysisSession, want: AnalysisSession): void {
  expectSame(got.analysis.operatingPoint!.nodes, want.analysis.operatingPoint!.nodes, 'nodes', 1e-12);
  const devices = (s: AnalysisSession) => JSON.parse(JSON.stringify(s.analysis.operatingPoint!.devices)) as Record<string, Record<string, unknown>>;
  const a = devices(got);
  const b = devices(want);
  expect(Object.keys(a)).toEqual(Object.keys(b));
  for (const name of Object.keys(b)) {
    for (const [k, v] of Object.entries(b[name]!)) {
      const x = a[name]![k];
      if (typeof v === 'number' && typeof x === 'number') expect(Math.abs(x - v), `${name}.${k}`).toBeLessThanOrEqual(1e-9 * Math.abs(v) + 1e-12);
      else expect(x, `${name}.${k}`).toEqual(v);
    }
  }
  const rest = (s: AnalysisSession) => ({ findings: s.analysis.findings, structures: s.analysis.structures.map((st) => ({ ...st, corners: st.corners })) });
  expectSame(rest(got), rest(want), 'analysis', 1e-6);
}

describe('patching the elaboration after a value edit', () => {
  it('gives the elaborator’s own result for every random edit, falls back where it must, and leaves the last elaboration as it was (seeded)', () => {
    const random = rng(20261203);
    const settings = elaborationSettings({});
    let text = NETLIST;
    let last = session(text);
    let patched = 0;
    let refused = 0;
    for (let n = 0; n < 160; n++) {
      const edited = randomEdit(text, random);
      const state = last.incremental;
      const reread = state?.document ? reparsedDocument(state.document, edited) : undefined;
      if (state && reread) {
        const before = JSON.stringify(state.circuit);
        const patch = patchedElaborationOf(state, reread, settings);
        const whole = elaborate(parse(URI, edited, { hasTitle: true }), new MemoryWorkspace({ [URI]: edited }));
        if (patch) {
          patched++;
          expect(JSON.parse(elaborationJson(patch.result)), edited).toEqual(JSON.parse(elaborationJson(whole)));
          expect(elaborationJson(patch.result), edited).toBe(elaborationJson(whole));
          expect(patch.result.documents[URI]).toBe(reread);
          // The changed element is named: the one element whose resistance differs.
          const differs = whole.circuit.elements.flatMap((e, i) => (e.kind === 'R' && state.circuit.elements[i]?.kind === 'R' && !Object.is(e.resistance, (state.circuit.elements[i] as typeof e).resistance) ? [i] : []));
          expect(patch.changed).toEqual(differs);
        } else refused++;
        expect(JSON.stringify(state.circuit)).toBe(before);
      }
      last = session(edited, last);
      text = edited;
      if (n % 40 === 39) {
        text = NETLIST;
        last = session(text);
      }
    }
    // Both ways must be taken often enough to be tested.
    expect(patched).toBeGreaterThan(50);
    expect(refused).toBeGreaterThan(5);
  });

  it('elaborates afresh a netlist with a behavioural source (its program holds offsets and the solver’s scratch values)', () => {
    const text = NETLIST.replace('RL c2 0 10k', 'B1 bo 0 V={V(c1)*gain}\nRL bo 0 10k');
    const last = session(text);
    const edited = text.replace('RU t 0 1k', 'RU t 0 1.5k');
    const reread = reparsedDocument(last.incremental!.document!, edited);
    expect(reread).toBeDefined();
    expect(patchedElaborationOf(last.incremental!, reread!, elaborationSettings({}))).toBeUndefined();
    // Without the behavioural source the same edit is patched.
    const plain = session(NETLIST);
    expect(patchedElaborationOf(plain.incremental!, reparsedDocument(plain.incremental!.document!, NETLIST.replace('RU t 0 1k', 'RU t 0 1.5k'))!, elaborationSettings({}))).toBeDefined();
  });

  it('elaborates afresh a netlist that reads another file (its text may have changed since)', () => {
    const lib = '/t/models.lib';
    const text = NETLIST.replace(/^\.model QN .*$/m, `.include "${lib}"`);
    const read = (t: string, model: string) => new MemoryWorkspace({ [URI]: t, [lib]: model });
    const first = analyseSession({ uri: URI, text }, read(text, '.model QN NPN (IS=1e-15 BF=120 VAF=80)\n'), OPTIONS, { keepIncremental: true });
    const edited = text.replace('RU t 0 1k', 'RU t 0 1.5k');
    expect(patchedElaborationOf(first.incremental!, reparsedDocument(first.incremental!.document!, edited)!, elaborationSettings({}))).toBeUndefined();
    // The included model changed along with the edit: the analysis reads it (BF 50, not 120).
    const next = analyseSession({ uri: URI, text: edited }, read(edited, '.model QN NPN (IS=1e-15 BF=50 VAF=80)\n'), OPTIONS, { keepIncremental: true, previous: first.incremental, warmStart: first.warmStart });
    expect(next.analysis.circuit!.models['qn']!.params['BF']).toBe(50);
  });

  it('gives a cold analysis’s result for every random edit through the patch, a point that does not converge included (seeded)', () => {
    const random = rng(20261204);
    let text = NETLIST;
    let last = session(text);
    let unconverged = 0;
    for (let n = 0; n < 60; n++) {
      // Now and then, from the netlist as written, the one edit that makes the loop singular (RF to 1k), through the patch.
      if (n % 10 === 4) {
        last = session(NETLIST);
        text = NETLIST.replace(/^RF o a \S+/m, 'RF o a 1k');
        expect(patchedElaborationOf(last.incremental!, reparsedDocument(last.incremental!.document!, text)!, elaborationSettings({}))).toBeDefined();
      } else text = randomEdit(text, random);
      const next = session(text, last);
      const want = cold(text);
      const exact = (s: AnalysisSession) => s.analysis.findings.map((f) => ({ code: f.code, severity: f.severity, span: f.span, message: f.message, related: f.related, fixes: f.fixes }));
      expect(exact(next), text).toEqual(exact(want));
      expect(JSON.stringify(next.analysis.circuit)).toBe(JSON.stringify(want.analysis.circuit));
      if (want.analysis.operatingPoint?.converged) expectSamePoint(next, want);
      else unconverged++;
      last = next;
    }
    expect(unconverged).toBeGreaterThanOrEqual(6);
  });
});
