// The tolerance sources' facts, gathered in columns as each source is made (`sourceListWithFacts`), stand in for the
// source objects in the readers that took them from the objects: the ranking's σ and bound, the report's source list
// (kind, figure, origin), each element's own source and the varied parameters. The checks: every column entry is its
// source's field (the kind named as the report's source list names it: a resistor's, a supply's or current source's, a
// part spread, else a mismatch), and each source's parameter the first equal one met in the list; a list holding a
// source whose σ is below the smallest normal double (2.2250738585072014e-308, IEEE 754 binary64) is filtered and has
// no facts; and in a whole spread analysis each output's σ and worst case are the root of the summed squares and the
// sum of the magnitudes of derivative × the source object's σ and bound (summed in the row's order, as the ranking
// sums), each source's parameter is the first equal parameter of the varied list, and the report's source entries
// carry each object's label, kind, figure and origin.

import { describe, expect, it } from 'vitest';
import { sourceRowOf, sourceSummaries } from '../../../shared-analysis/src/variation';
import { SOURCE_ORIGINS, readCardTolerances, sourceListWithFacts, toleranceSources, type SourceSettings, type ToleranceSource } from '../../../shared-analysis/src/variation/sources';
import { coldSession } from '../solve/same-analysis';

const URI = '/t/source-facts.cir';
const SETTINGS: SourceSettings = { resistorTolerance: 0.05, resistorFrom: 'series', supplyTolerance: 0.05 };

// Invented: NPN, PNP, NMOS and PMOS mirrors and two JFET stages, with tolerance notes on a supply, a current source and two resistors.
const MIXED = `mixed sources
VCC vcc 0 DC 12 ; tol 2%
VEE vee 0 DC -5
IB1 vcc 0 100u ; tol 1%
.model QN NPN (IS=2e-15 BF=150 VAF=90 MATCHVBE=1m)
.model QP PNP (IS=1e-15 BF=80 VAF=50)
.model MN NMOS (VTO=0.7 KP=120u LAMBDA=0.02)
.model MP PMOS (VTO=-0.8 KP=50u LAMBDA=0.03 MATCHVT=8e-9)
.model JN NJF (VTO=-2 BETA=1m LAMBDA=0.01)
R1 vcc n1 22k ; tol 0.1%
Q1 n1 n1 0 QN
Q2 o1 n1 0 QN 2
Q3 o2 n1 0 QN
RL1 vcc o1 4.7k
RL2 vcc o2 3.3k ; tolerance 5%
R2 n2 0 47k
Q4 n2 n2 vcc QP
Q5 o3 n2 vcc QP
RL3 o3 0 2.2k
R3 vcc n3 33k
M1 n3 n3 0 0 MN W=10u L=2u
M2 o4 n3 0 0 MN W=20u L=2u
RL4 vcc o4 5k
R4 n4 vee 40k
M3 n4 n4 vcc vcc MP W=20u L=1u
M4 o5 n4 vcc vcc MP W=20u L=1u
RL5 o5 vee 4k
J1 d1 0 s1 JN
RS1 s1 0 1k
RD1 vcc d1 5k
J2 d2 0 s2 JN
RS2 s2 0 1k
RD2 vcc d2 5k
.end
`;

/** The kind the report gives a source, from the source object (docs/VARIATION.md's four kinds). */
function kindName(s: ToleranceSource): string {
  if (s.parameter.kind === 'resistance') return 'resistor';
  if (s.parameter.kind === 'source') return 'source';
  return s.partSpread ? 'part spread' : 'mismatch';
}

const KIND_NAMES = ['resistor', 'source', 'mismatch', 'part spread'];

function made(text: string) {
  const session = coldSession(URI, text, {});
  const { circuit, structures, documents } = session.analysis;
  return { session, ...sourceListWithFacts(circuit!, structures, readCardTolerances(documents), SETTINGS, 27), circuit: circuit!, structures, documents };
}

describe('tolerance source facts', () => {
  it('hold each source’s own fields, in list order', () => {
    const { list, facts, circuit, structures, documents } = made(MIXED);
    const sources = list.sources;
    // Every kind is present: resistors, supplies and a current source, mismatch of every device type, part spreads.
    const kinds = new Set(sources.map(kindName));
    expect([...kinds].sort()).toEqual(['mismatch', 'part spread', 'resistor', 'source']);
    for (const type of ['Q', 'M']) expect(sources.some((s) => kindName(s) === 'mismatch' && s.element.startsWith(type))).toBe(true);
    expect(facts).toBeDefined();
    const f = facts!;
    for (const column of [f.sigma, f.bound, f.figure, f.kind, f.origin, f.element, f.sourceParam]) expect(column.length).toBe(sources.length);
    sources.forEach((s, k) => {
      expect(f.sigma[k]).toBe(s.sigma);
      expect(f.bound[k]).toBe(s.bound);
      expect(f.figure[k]).toBe(s.figure);
      expect(KIND_NAMES[f.kind[k]]).toBe(kindName(s));
      expect(SOURCE_ORIGINS[f.origin[k]]).toBe(s.from);
      expect(f.element[k]).toBe(s.parameter.kind === 'temperature' ? -1 : s.parameter.element);
      // The element index names the element the source is of.
      expect(circuit.elements[f.element[k]].name).toBe(s.element);
      // Its parameter is the first of the list's sources' parameters equal to it, listed in the order first met.
      const first = sources.findIndex((t) => JSON.stringify(t.parameter) === JSON.stringify(s.parameter));
      const distinctBefore = new Set(sources.slice(0, first).map((t) => JSON.stringify(t.parameter))).size;
      expect(f.sourceParam[k]).toBe(distinctBefore);
      expect(f.params.list[f.sourceParam[k]]).toBe(sources[first].parameter);
    });
    expect(f.params.list.length).toBe(new Set(sources.map((t) => JSON.stringify(t.parameter))).size);
    // The list is the one `toleranceSources` makes.
    expect(sources).toEqual(toleranceSources(circuit, structures, readCardTolerances(documents), SETTINGS, 27));
    // Each element's own source is found at its index.
    sources.forEach((s, k) => {
      if (s.parameter.kind === 'resistance' || s.parameter.kind === 'source') expect(list.sourceOf[s.parameter.element]).toBe(k);
    });
    expect(Array.from(list.sourceOf).filter((k) => k >= 0).length).toBe(sources.filter((s) => s.parameter.kind !== 'model').length);
  });

  it('are not made for a list that leaves out a source whose σ is not normal', () => {
    // Invented: a mirror whose load's written tolerance (1e-310 %) gives a σ of about 3.3e-310 Ω, below the smallest normal double.
    const TINY = `tiny tolerance
VCC vcc 0 DC 5
.model QN NPN (IS=1e-15 BF=100)
R1 vcc n1 10k
Q1 n1 n1 0 QN
Q2 o1 n1 0 QN
RL vcc o1 1k ; tol 1e-310%
RX o1 0 100k
.end
`;
    const { list, facts } = made(TINY);
    expect(facts).toBeUndefined();
    expect(list.sources.map((s) => s.label)).not.toContain('RL');
    expect(list.sources.map((s) => s.label)).toContain('RX');
    expect(list.sources.every((s) => s.sigma >= 2.2250738585072014e-308)).toBe(true);
    // The list's own-source index counts the sources as filtered.
    list.sources.forEach((s, k) => {
      if (s.parameter.kind === 'resistance' || s.parameter.kind === 'source') expect(list.sourceOf[s.parameter.element]).toBe(k);
    });
  });

  it('give the spread analysis the σ, bound, parameters and report entries of the source objects', () => {
    const { session } = made(MIXED);
    const detail = session.variation!;
    expect(detail).toBeDefined();
    const { sources, bySource, varied, result } = detail;
    expect(result.outputs.length).toBeGreaterThan(5);
    result.outputs.forEach((out, o) => {
      const row = sourceRowOf(bySource, o);
      let variance = 0;
      let worst = 0;
      for (let q = 0; q < row.index.length; q++) {
        const s = sources[row.index[q]];
        const a = Math.abs(row.value[q] * s.sigma);
        variance += a * a;
        worst += Math.abs(row.value[q] * s.bound);
      }
      expect(out.sigma).toBe(Math.sqrt(variance));
      expect(out.worstCase).toBe(worst);
    });
    // Each source's parameter: the first parameter of the varied list equal to it.
    sources.forEach((s, k) => {
      const j = varied.params.list.findIndex((p) => JSON.stringify(p) === JSON.stringify(s.parameter));
      expect(varied.sourceParam[k]).toBe(j);
    });
    const entries = sourceSummaries(result);
    expect(entries.length).toBe(sources.length);
    sources.forEach((s, k) => expect(entries.at(k)).toEqual({ name: s.label, kind: kindName(s), figure: s.figure, from: s.from }));
  });
});
