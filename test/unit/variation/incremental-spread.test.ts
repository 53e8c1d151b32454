// The spread analysis after a value edit keeps the records of the outputs the edit cannot reach (their terms lie in
// parts of the circuit joined to the edited one only through rails held by ideal sources) and derives the others again.
// The check: after seeded random edits on invented circuits (resistor values, tolerance notes, targets), with a corner
// phase after most edits (some edits pile up before one), the whole spread result (every output's figures, ranked
// contributors, largest sensitivities, supply slopes, target yield, and the source list), every structure's spread and
// the corner phase's findings (yield findings included) equal a cold analysis's of the edited text, the independent
// computation; and records were kept, so the comparison judged kept ones. Treating a reached output as kept, or a
// changed tolerance source as unchanged, fails it.

import { describe, expect, it } from 'vitest';
import { addCorners, variationOf, type AnalysisSession } from '../../../shared-analysis/src/service';
import { keptSpread } from '../../../shared-analysis/src/incremental';
import { readTargets } from '../../../shared-analysis/src/checks/targets';
import { dropNonFinite, keepFinite } from '../../../shared-analysis/src/output-guard';
import { unkeptSpread } from '../../../shared-analysis/src/variation/index';
import { rng } from '../../seeded-random';
import { coldSession, editedSession, expectSame, randomValueEdit } from '../solve/same-analysis';

const URI = '/t/incremental-spread.cir';
const OPTIONS = { corners: { enabled: false } };
/** Resistors without tolerance: an edited resistor is then no source of spread, and only the reach tells which outputs it moved. */
const EXACT_RESISTORS = { corners: { enabled: false }, variation: { resistorTolerance: 0 } };
/** The random tests analyse a few hundred cells cold after every edit: longer than the default. */
const LONG = 120_000;

type Options = typeof OPTIONS | typeof EXACT_RESISTORS;

const cold = (text: string, options: Options = OPTIONS): AnalysisSession => coldSession(URI, text, options);
const incremental = (text: string, previous?: AnalysisSession, options: Options = OPTIONS): AnalysisSession => editedSession(URI, text, options, previous);

// Invented: NPN sink cells on a 3.3 V and a 5 V rail (220 cells: over 400 unknowns, so the spread waits for the corner
// phase).
// Every third reference resistor carries a tolerance note, every fourth output device a target with its own window, and
// every fifth load resistor a target of its own current without one (the default window, the series' tolerance).
function noteCells(cells: number): string {
  const L = ['sink cells with tolerance notes and targets', 'VA va 0 DC 3.3', 'VB vb 0 DC 5', '.model QN NPN (IS=2e-15 BF=110 VAF=60)'];
  for (let i = 0; i < cells; i++) {
    const rail = i % 2 === 0 ? 'va' : 'vb';
    const rr = i % 2 === 0 ? 2.7 + (i % 4) * 0.4 : 4.3 + (i % 3) * 0.8;
    const iref = ((i % 2 === 0 ? 3.3 : 5) - 0.7) / (rr * 1e3);
    const note = i % 3 === 0 ? ` ; tol ${1 + (i % 2)}%` : '';
    const target = i % 4 === 1 ? ` ; expect ${(iref * 1e3).toFixed(3)}mA ±${3 + (i % 3)}%` : '';
    const loadTarget = i % 5 === 2 ? ` ; expect ${(iref * 1e3).toFixed(3)}mA` : '';
    L.push(`RR${i} ${rail} r${i} ${rr.toFixed(2)}k${note}`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN${target}`, `RL${i} ${rail} o${i} ${(0.9 + (i % 3) * 0.3).toFixed(2)}k${loadTarget}`);
  }
  L.push('.end', '');
  return L.join('\n');
}

// Invented: a PNP mirror whose two outputs feed an NPN mirror's reference and a degenerated NPN output through one node
// (one part: an edit anywhere in it reaches all three structures), a resistor between the rails alone (a part of its
// own), and sink cells on both rails (210: past 400 unknowns).
function coupledBesideCells(cells: number): string {
  const L = [
    'coupled mirrors beside sink cells',
    'VCC vcc 0 DC 4',
    'VL vl 0 DC 2.5',
    '.model QN NPN (IS=3e-15 BF=140 VAF=90)',
    '.model QP PNP (IS=1.5e-15 BF=70 VAF=45)',
    'RP p 0 15k ; tol 0.5%',
    'QP1 p p vcc QP',
    'QP2 n p vcc QP',
    'QP3 s p vcc QP',
    'QN1 n n 0 QN',
    'QN2 m n 0 QN ; expect 250uA ±8%',
    'RM vcc m 5.6k',
    'QN3 s2 n e3 QN',
    'RE3 e3 0 390',
    'RS s s2 2.2k',
    'RX vcc vl 12k',
  ];
  for (let i = 0; i < cells; i++) {
    const rail = i % 3 === 0 ? 'vcc' : 'vl';
    L.push(`RR${i} ${rail} r${i} ${(3.9 + (i % 5) * 0.7).toFixed(1)}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} ${rail} o${i} ${(1.2 + (i % 4) * 0.5).toFixed(1)}k`);
  }
  L.push('.end', '');
  return L.join('\n');
}

/** The text with one tolerance note's or target's figure (chosen by `random`) changed, or a resistor value when it has none. */
function randomEdit(text: string, random: () => number): string {
  const lines = text.split('\n');
  const noted = lines.flatMap((l, i) => (/; (tol|expect) /.test(l) ? [i] : []));
  if (noted.length === 0 || random() < 0.6) return randomValueEdit(text, random);
  const at = noted[Math.floor(random() * noted.length)];
  lines[at] = lines[at].replace(/(tol |expect )([0-9.]+)/, (_m, word: string, figure: string) => `${word}${(Number(figure) * (0.8 + 0.4 * random())).toPrecision(3)}`);
  return lines.join('\n');
}

/** Runs the corner phase on both sessions and compares the spread; returns how many outputs `got` kept and the yield findings. */
function expectSameSpread(got: AnalysisSession, want: AnalysisSession): { kept: number; yieldFindings: number } {
  const a = addCorners(got.analysis, { solver: got.solver!, nominal: got.nominal!, incremental: got.incremental });
  const b = addCorners(want.analysis, { solver: want.solver!, nominal: want.nominal! });
  expect(a.map((f) => [f.code, f.span, f.message, f.related])).toEqual(b.map((f) => [f.code, f.span, f.message, f.related]));
  const spread = (s: AnalysisSession) => {
    const { stats: _stats, ...rest } = s.analysis.variation!;
    return { ...rest, sources: s.analysis.variation!.sources, structures: s.analysis.structures.map((st) => st.variation) };
  };
  expectSame(spread(got), spread(want), 'analysis.variation', 1e-6);
  const outputs = want.analysis.variation!.outputs.length;
  expect(want.analysis.variation!.stats.adjointSolves).toBe(outputs);
  return { kept: outputs - got.analysis.variation!.stats.adjointSolves, yieldFindings: b.filter((f) => f.code === 'target-yield-low').length };
}

describe('the spread analysis after value edits keeps the outputs the edit cannot reach', () => {
  // The sink cells' targets sit near their nominal currents, so some yield findings are made; the coupled circuit's one
  // target is missed at nominal (a finding of the nominal checks, not the spread's).
  for (const [name, text, options, edits, withYieldFindings] of [
    ['sink cells with tolerance notes and targets', noteCells(220), OPTIONS, 8, true],
    ['coupled mirrors beside sink cells', coupledBesideCells(210), OPTIONS, 7, false],
    ['sink cells, resistors without tolerance', noteCells(220), EXACT_RESISTORS, 5, false],
  ] as const) {
    it(`equals a cold spread analysis after random edits, some piled up between phases: ${name}`, () => {
      const random = rng(20261203);
      let current = text;
      let session = incremental(current, undefined, options);
      // Nothing to keep before the first spread analysis.
      expect(expectSameSpread(session, cold(current, options)).kept).toBe(0);
      let kept = 0;
      let yieldFindings = 0;
      for (let k = 0; k < edits; k++) {
        current = randomEdit(current, random);
        session = incremental(current, session, options);
        // Every third edit is superseded before its corner phase: the next spread keeps what the one before left.
        if (k % 3 === 1) continue;
        const same = expectSameSpread(session, cold(current, options));
        kept += same.kept;
        yieldFindings += same.yieldFindings;
      }
      // Records were kept, and there were yield findings among them, so the comparison judged both.
      expect(kept).toBeGreaterThan(0);
      if (withYieldFindings) expect(yieldFindings).toBeGreaterThan(0);
    }, LONG);
  }

  it('derives only the edited cell’s outputs after a one-value edit, every output on a rail after its tolerance edit, none after a comment', () => {
    const text = noteCells(220);
    const first = incremental(text);
    expectSameSpread(first, cold(text));
    // As the worker does when a Monte Carlo run finishes: figures written into the analysis's outputs. A cold analysis
    // has none, so the record of an output the next edit cannot reach is made again, not kept with them.
    const sampled = first.analysis.variation!.outputs[0];
    sampled.monteCarlo = { runs: 10, converged: 10, mean: sampled.nominal, sigma: sampled.sigma, min: sampled.nominal, max: sampled.nominal, histogram: [10] };
    const edited = text.replace(/^(RR7 \S+ \S+ )(\S+)/m, (_m, head: string) => `${head}3.9k`);
    expect(edited).not.toBe(text);
    const next = incremental(edited, first);
    // The device derivatives and the columns ∂F/∂p are made for the edited cell's part alone (and the rail sources):
    // its two transistors, and the other part of the output with Monte Carlo figures (cell 0: two more).
    const { circuit, structures, documents, options } = next.analysis;
    const spread = variationOf(circuit!, structures, documents, next.solver!, next.nominal!, readTargets(documents).targets, options, keptSpread(next.incremental, circuit!).reuse);
    expect(spread!.devicesDerived).toBe(4);
    // The sources were patched from the last list: the edited resistor's made again.
    expect(Array.from(spread!.sourceList.changed!).filter((c) => c === 1).length).toBe(1);
    const outputs = expectSameSpread(next, cold(edited)).kept + next.analysis.variation!.stats.adjointSolves;
    // A resistor's value is not in its source's summary: the result reads its sources from the last result's columns.
    const columnsOf = (s: AnalysisSession) => s.incremental!.spreadRecord!.record.sourceColumns;
    expect(columnsOf(next)).toBeDefined();
    expect(columnsOf(next)).toBe(columnsOf(first));
    // Cell 7: its reference current, its output and its load's target current, and the output with Monte Carlo figures.
    expect(next.analysis.variation!.stats.adjointSolves).toBe(4);
    // A tolerance note on the 5 V rail's source reaches every output on that rail and leaves the 3.3 V rail's.
    const noted = edited.replace('VB vb 0 DC 5', 'VB vb 0 DC 5 ; tol 2%');
    const last = incremental(noted, next);
    expectSameSpread(last, cold(noted));
    expect(last.analysis.variation!.stats.adjointSolves).toBe(outputs / 2);
    // The supply's figure changed: columns of its own.
    expect(columnsOf(last)).not.toBe(columnsOf(next));
    // A comment that changes nothing the spread reads: every record kept, no transposed solve.
    const commented = noted.replace(/^(RR9 .*)$/m, '$1 ; checked');
    const after = incremental(commented, last);
    expectSameSpread(after, cold(commented));
    expect(after.analysis.variation!.stats.adjointSolves).toBe(0);
  }, LONG);
});

describe('the structures’ outputs after a value edit', () => {
  it('are the last analysis’s only for the structures they were made of', () => {
    const first = incremental(noteCells(220));
    addCorners(first.analysis, { solver: first.solver!, nominal: first.nominal!, incremental: first.incremental });
    const record = first.incremental!.spreadRecord!.record;
    // Another netlist (one cell fewer) handed the record: its own outputs are made, none of the record's kept.
    const other = cold(noteCells(219));
    const { circuit, structures, documents, options } = other.analysis;
    const reuse = { last: record, changed: new Int32Array(0), reached: () => true, scope: () => undefined };
    const targets = readTargets(documents).targets;
    const got = variationOf(circuit!, structures, documents, other.solver!, other.nominal!, targets, options, reuse)!;
    const want = variationOf(circuit!, structures, documents, other.solver!, other.nominal!, targets, options)!;
    expect(got.specs.map((o) => o.key)).toEqual(want.specs.map((o) => o.key));
    expect(got.kept).toBeUndefined();
    expect(got.specs.length).toBeLessThan(record.specs.length);
  }, LONG);
});

describe('the finiteness walk after a spread analysis that kept records', () => {
  it('looks at the outputs it made and names a figure that is not finite as a walk of the whole result does', () => {
    const text = noteCells(220);
    const first = incremental(text);
    addCorners(first.analysis, { solver: first.solver!, nominal: first.nominal!, incremental: first.incremental });
    const edited = text.replace(/^(RR11 \S+ \S+ )(\S+)/m, (_m, head: string) => `${head}4.1k`);
    const next = incremental(edited, first);
    addCorners(next.analysis, { solver: next.solver!, nominal: next.nominal!, incremental: next.incremental });
    const record = next.incremental!.spreadRecord!.record;
    const detail = { result: next.analysis.variation!, specs: [...record.specs], sources: [...record.sourceList.sources], bySource: record.rows, sensitivityMs: 0, finite: record.finite, kept: new Uint8Array(record.specs.length), devicesDerived: 0, sourceList: record.sourceList, varied: record.varied, structureSpecs: record.structureSpecs };
    detail.kept.fill(1);
    // Cell 11's two outputs were made again: the walk looks at those (and the stats), not at the kept ones.
    const fresh = record.specs.flatMap((s, o) => (s.structure?.endsWith(':QR11') ? [o] : []));
    expect(fresh.length).toBe(2);
    for (const o of fresh) detail.kept[o] = 0;
    const { parts, structures } = unkeptSpread(detail);
    expect(Object.keys(parts)).toEqual([...fresh.map((o) => `variation.outputs[${o}]`), 'variation.stats']);
    expect([...structures]).toEqual([record.specs[fresh[0]].structure]);
    // A figure that is not finite in a record made now: the same path as the whole result's walk gives (dropNonFinite, the independent path).
    next.analysis.variation!.outputs[fresh[1]].sigma = NaN;
    const whole: string[] = [];
    dropNonFinite(structuredClone({ outputs: next.analysis.variation!.outputs.map((o) => ({ ...o })) }), 'variation', whole);
    expect(whole).toEqual([`variation.outputs[${fresh[1]}].sigma`]);
    expect(keepFinite([], parts, URI)?.data?.['paths']).toEqual(whole);
  });
});
