// Splitting an analysis into parts for the thread boundary and putting it back together loses nothing.

import { describe, expect, it } from 'vitest';
import { adoptKeptCards, mergePart, partMerger, splitAnalysis, splitAnalysisLazily } from '../../server/src/analysis-transfer';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { addCorners, analyse, analyseSession } from '../../shared-analysis/src/service';
import { cornerColumns, setCornerColumns } from '../../shared-analysis/src/structures/corner-columns';
import { attachVariation } from '../../shared-analysis/src/variation/index';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { connectionCount, connectionsOf, indexBuilder, indexOf, terminalNames } from '../../shared-analysis/src/features/document-index';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { restoreNameTables } from '../../shared-analysis/src/names';
import { rng } from '../seeded-random';
import { expectSame } from '../unit/solve/same-analysis';

/** The one helper: split, pass every message through a structured clone (as postMessage does), merge, compare. */
function check(text: string, hoverAtText: string[]): void {
  const ws = new MemoryWorkspace({ '/t/main.cir': text });
  const original = analyse({ uri: '/t/main.cir', text, version: 3 }, ws, { corners: { enabled: false } });
  const { header, parts } = splitAnalysis(original);
  // The header is small whatever the circuit's size: the point's node and device tables come in parts, as columns.
  expect(Object.keys(header.operatingPoint!.nodes)).toEqual([]);
  expect(Object.keys(header.operatingPoint!.devices)).toEqual([]);
  expect(parts.filter((p) => p.kind === 'point')).toHaveLength(1);
  const copy = structuredClone(header);
  const builder = indexBuilder(copy.circuit!);
  for (const p of parts) {
    const before = copy.circuit!.elements.length;
    mergePart(copy, structuredClone(p));
    if (p.kind === 'elements') builder.add(copy.circuit!.elements, before);
  }
  builder.finish(copy);
  expect(copy).toEqual(original);
  // The tables built part by part are the ones built in one go.
  expect(indexOf(copy)).toEqual(indexOf(original));
  expect(copy.circuit!.elements[indexOf(copy).elementByName.get('q2')!]).toBe(copy.circuit!.elements.find((e) => e.name === 'Q2'));
  // The terminals on each node against a plain scan of the elements, in element order, then terminal order.
  for (const a of [copy, original]) {
    const scan = a.circuit!.nodes.map((): string[] => []);
    for (const el of a.circuit!.elements) el.nodes.forEach((n, t) => scan[n]?.push(`${el.name} ${terminalNames(el)[t]}`));
    scan.forEach((expected, n) => {
      expect(connectionsOf(a, n).map((c) => `${c.element.name} ${c.terminal}`), `node ${n}`).toEqual(expected);
      expect(connectionCount(a, n)).toBe(expected.length);
      expect(connectionsOf(a, n, 1).length).toBe(Math.min(1, expected.length));
    });
  }
  // Models are shared objects again, as the elaborator made them.
  for (const e of copy.circuit!.elements) if ('model' in e) expect(Object.values(copy.circuit!.models)).toContain(e.model);
  for (const needle of hoverAtText) {
    const at = text.indexOf(needle) + 1;
    expect(hoverAt(copy, '/t/main.cir', at)).toEqual(hoverAt(original, '/t/main.cir', at));
  }
}

describe('analysis transfer', () => {
  it('round-trips a mirror with an unbounded Early voltage and many cards', () => {
    // Q3's card goes on past a comment line: the comment is kept inside the card (`comments`), a card within a card.
    const lines = ['Transfer check', 'VCC vcc 0 DC 10', 'RREF vcc ref 9.3k', 'Q1 ref ref 0 QN', 'Q2 out ref 0 QN', 'Q3 out3 ref 0', '* the model follows', '+ QN', 'RL vcc out 1k', 'RL3 vcc out3 1k', '.model QN NPN (BF=100)'];
    // Enough resistors to need several parts of each kind.
    for (let k = 0; k < 4000; k++) lines.push(`RX${k} vcc x${k} 1k`, `RY${k} x${k} 0 2k`);
    lines.push('.end', '');
    const text = lines.join('\n');
    expect(analyse({ uri: '/t/main.cir', text }, new MemoryWorkspace({ '/t/main.cir': text })).documents['/t/main.cir']!.cards[5]!.comments).toHaveLength(1);
    check(text, ['Q2 out', 'QN\nRL', 'RX17 ', 'x3999 0']);
  });

  it("reads the point's tables from columns exactly as the engine's tables read", () => {
    // Node names that are array indices (an object lists those first, in numeric order), names an object would
    // inherit, transistors and a diode (records that travel whole), sources and resistors (records from the columns).
    const text = [
      'Point tables',
      'VCC 10 0 DC 9',
      'IB 0 2 1m',
      'R1 10 2 4.7k',
      'R2 2 1 1k',
      'Rc 1 0 2k',
      'RREF 10 __proto__ 8.2k',
      'Q1 __proto__ __proto__ 0 QN',
      'Q2 constructor __proto__ 0 QN',
      'RL 10 constructor 3k',
      'D1 2 toString DM',
      'RD toString 0 1k',
      '.model QN NPN (BF=100)',
      '.model DM D (IS=1e-14)',
      '.end',
      '',
    ].join('\n');
    const uri = '/t/main.cir';
    const original = analyse({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), { corners: { enabled: false } });
    const { header, parts } = splitAnalysis(original);
    expect(parts.filter((p) => p.kind === 'point-records').length).toBeGreaterThan(0);
    const copy = structuredClone(header);
    for (const p of parts) mergePart(copy, structuredClone(p));
    // The independent computation: the tables the engine builds itself from the solver's vectors.
    const op = original.operatingPoint!;
    const taken = copy.operatingPoint!;
    expect(Object.keys(taken.nodes)).toEqual(Object.keys(op.nodes));
    expect(Object.keys(taken.nodes).slice(0, 3)).toEqual(['0', '1', '2']);
    expect(Object.keys(taken.devices)).toEqual(Object.keys(op.devices));
    expect(JSON.stringify(taken)).toBe(JSON.stringify(op));
    // Look-ups go through the element index's tables by lower-case name: a name in another case is not a key.
    const otherCase = (names: string[]) => names.flatMap((n) => [n.toLowerCase(), n.toUpperCase()]);
    expect(otherCase(Object.keys(op.devices)).some((n) => !(n in op.devices))).toBe(true);
    for (const name of [...Object.keys(op.devices), ...otherCase(Object.keys(op.devices)), 'nothing', 'toString', 'constructor', '__proto__', 'hasOwnProperty']) {
      expect(taken.devices[name], name).toEqual(op.devices[name]);
      expect(name in taken.devices, name).toBe(name in op.devices);
    }
    for (const name of [...Object.keys(op.nodes), ...otherCase(Object.keys(op.nodes)), 'nothing', 'valueOf']) {
      expect(taken.nodes[name], name).toBe(op.nodes[name]);
      expect(name in taken.nodes, name).toBe(name in op.nodes);
    }
    expect(Object.getPrototypeOf(taken.devices)).toBe(null);
    // A record read twice is one object, as in a table; nothing may write to a taken-in point's tables.
    expect(taken.devices['R1']).toBe(taken.devices['R1']);
    expect(() => {
      taken.devices['R1'] = taken.devices['R2']!;
    }).toThrow(TypeError);
    // A point without the solver's vectors (a copy) travels as its tables' entries, and reads the same.
    const plain = structuredClone(original);
    const split = splitAnalysis(plain);
    expect(split.parts.filter((p) => p.kind === 'point')).toHaveLength(0);
    // As the server does: a cloned header's tables get their prototype-free form back before parts are merged into them.
    const plainCopy = restoreNameTables(structuredClone(split.header));
    for (const p of split.parts) mergePart(plainCopy, structuredClone(p));
    expect(JSON.stringify(plainCopy.operatingPoint)).toBe(JSON.stringify(op));
  });

  it("gives each structure's name-keyed tables their prototype-free form as its part is merged", () => {
    // Invented: 120 NPN mirror cells with degenerated outputs (three structure parts of 50), each with its tables.
    const lines = ['Structure tables', 'VCC vcc 0 DC 9', '.model QN NPN (BF=100 VAF=60)'];
    for (let c = 0; c < 120; c++) lines.push(`RR${c} vcc r${c} ${10 + (c % 5)}k`, `QR${c} r${c} r${c} 0 QN`, `QO${c} o${c} r${c} e${c} QN`, `RE${c} e${c} 0 100`, `RL${c} vcc o${c} 2k`);
    lines.push('.end', '');
    const text = lines.join('\n');
    const uri = '/t/tables.cir';
    const original = analyse({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), { corners: { enabled: false } });
    expect(original.structures.length).toBeGreaterThan(100);
    const { header, parts } = splitAnalysis(original);
    // As the server takes a result in: the header's tables restored, then every part through the merger.
    const taken = restoreNameTables(structuredClone(header));
    const merger = partMerger(taken);
    for (const p of parts) for (const _ of merger.steps(structuredClone(p)));
    merger.finish();
    const tables = (a: Analysis) => a.structures.flatMap((st) => [st.headroom, st.compliance, st.outputResistance, st.roles, st.parts, st.params, st.solved?.iout, st.estimate?.iout, st.estimate?.voltages].filter((t) => t !== undefined));
    expect(tables(taken).length).toBeGreaterThan(original.structures.length * 3);
    // The independent computation: the engine's own tables are made prototype-free (nameTable) where they are built.
    expect(tables(original).every((t) => Object.getPrototypeOf(t) === null)).toBe(true);
    expect(tables(taken).every((t) => Object.getPrototypeOf(t) === null)).toBe(true);
    expect(JSON.stringify(taken.structures)).toBe(JSON.stringify(original.structures));
  });

  it('keeps the held cards an edit leaves alone, moved past the edit, and equals a full transfer', () => {
    const lines = ['Kept cards', 'VCC vcc 0 DC 10', 'RREF vcc ref 9.3k ; the reference', 'Q1 ref ref 0 QN', 'Q2 out ref 0 QN', 'RL vcc out 1k', '.model QN NPN (BF=100)', '* a comment line'];
    for (let k = 0; k < 600; k++) lines.push(`RX${k} vcc x${k} ${1 + (k % 9)}k`, `RY${k} x${k} 0 2k`);
    lines.push('.end', '');
    const before = lines.join('\n');
    // Each edit against the text above: a value made longer and shorter, a digit at a token's start, a
    // comment's text, a card added, the title, the first and the last character, no change at all.
    const edits: [string, string, boolean][] = [
      ['RREF vcc ref 9.3k', 'RREF vcc ref 10.25k', true],
      ['RY599 x599 0 2k', 'RY599 x599 0 2', true],
      ['RX300 vcc x300 4k', 'RX300 vcc x300 5k', true],
      ['RX300 vcc x300 4k', 'RX300 vcc x300 14k', true],
      ['; the reference', '; the new reference', true],
      ['* a comment line', '* a comment line that grew', true],
      ['RL vcc out 1k\n', 'RL vcc out 1k\nRZ out 0 1meg\n', false],
      ['Kept cards', 'Kept cardz', true],
      ['.end\n', '.end', true],
      ['Q2 out', 'Q2 out', true],
    ];
    const uri = '/t/main.cir';
    const run = (text: string): Analysis => analyse({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), { corners: { enabled: false } });
    const first = splitAnalysisLazily(run(before));
    const sent = first.prepare();
    // What the main thread holds: the first analysis taken in whole (its point's tables read from columns, which
    // do not clone: a fresh one is taken in for each edit, since adopting a result moves the held cards past the edit).
    const firstParts = first.parts.map((make) => structuredClone(make()));
    const takeInFirst = (): Analysis => {
      const taken = structuredClone(first.header);
      for (const p of firstParts) mergePart(taken, structuredClone(p));
      return taken;
    };
    const heldCopy = takeInFirst();
    for (const [from, to, keeps] of edits) {
      const held = takeInFirst();
      expect(before.includes(from), from).toBe(true);
      const after = before.replace(from, to);
      const original = run(after);
      const next = splitAnalysisLazily(original, sent);
      next.prepare();
      const parts = next.parts.map((make) => structuredClone(make()));
      const kept = parts.filter((p) => p.kind === 'cards-kept').length;
      const cardParts = parts.filter((p) => p.kind === 'cards' || p.kind === 'cards-kept').length;
      // Only the part(s) holding the edited card travel as JSON; a card added moves every later card into another part.
      if (keeps) expect(kept, to).toBeGreaterThan(0);
      expect(kept, to).toBeLessThanOrEqual(cardParts);
      const copy = structuredClone(next.header);
      for (const p of parts) mergePart(copy, p, held);
      // The held analysis is left as it was until the result is adopted (it answers requests meanwhile).
      expect(held).toEqual(heldCopy);
      adoptKeptCards(copy);
      // The independent computation: the parser's own cards of the edited text.
      expect(copy.documents[uri], to).toEqual(original.documents[uri]);
      // Kept cards are the held objects themselves, moved or not: no second copy.
      const shared = copy.documents[uri]!.cards.filter((c, k) => c === held.documents[uri]!.cards[k]).length;
      if (keeps) expect(shared, to).toBeGreaterThan(0);
    }
    const held = takeInFirst();
    // The same text again: every card is kept, and the very same objects are shared.
    const again = splitAnalysisLazily(run(before), sent);
    again.prepare();
    const parts = again.parts.map((make) => make());
    expect(parts.filter((p) => p.kind === 'cards').length).toBe(0);
    const copy = structuredClone(again.header);
    for (const p of parts) mergePart(copy, p, held);
    expect(copy.documents[uri]!.cards[5]).toBe(held.documents[uri]!.cards[5]);
  });

  it("gives a taken-in element its card's span objects, as the engine's element holds them, but not a card the adoption moves", () => {
    // Invented: lines of one length after a parameter card, so that an edit which lengthens that card by exactly one
    // line moves every later card onto the next one's old offsets (span for span), and changes every later element's value.
    const lines = ['Shared spans', 'VCC vcc 0 DC 10', '.param a=2', '.model QN NPN (BF=100)', 'Q1 ref ref 0 QN'];
    for (let k = 0; k < 300; k++) lines.push(`RX${String(k).padStart(3, '0')} vcc x${String(k).padStart(3, '0')} {a}k`);
    lines.push('.end', '');
    const before = lines.join('\n');
    const uri = '/t/main.cir';
    const first = takeInWhole(uri, before, undefined, undefined);
    // The independent reference: the engine's own object graph, where an element's origin holds its card's spans.
    const sharing = (a: Analysis) =>
      a.circuit!.elements.map((e) => {
        const card = a.documents[uri]!.cards.find((c) => c.span.start === e.origin.span.start)!;
        const tokenOf = (s: unknown) => card.tokens.some((t) => t.span === s);
        // The node spans are the card's own list of node tokens (each token its own span: span-token.test.ts).
        const nodes = card.kind === 'element' ? card.nodes : undefined;
        return [e.name, e.origin.span === card.span, e.origin.nodeSpans!.every(tokenOf), e.origin.valueSpan === undefined || tokenOf(e.origin.valueSpan), e.origin.nodeSpans === nodes];
      });
    expect(sharing(first.original).every(([, ...same]) => same.every(Boolean))).toBe(true);
    expect(sharing(first.analysis)).toEqual(sharing(first.original));
    // One line longer: the cards past it are the held ones, moved on adoption; the elements past it travel again.
    const edited = before.replace('.param a=2', `.param a=3 ; ${'w'.repeat(lines[6]!.length + 1 - ' ; '.length)}`);
    expect(edited.length - before.length).toBe(lines[6]!.length + 1);
    const next = takeInWhole(uri, edited, first.sent, first.held);
    expect(next.kept).toBeGreaterThan(290);
    expect(next.sentElements).toBeGreaterThan(290);
    expect(next.analysis.circuit).toEqual(next.original.circuit);
    expect(next.analysis.documents[uri]).toEqual(next.original.documents[uri]);
  });

  it('after random edits that regroup cards, keeps only cards the parser makes again and elements the elaborator makes again (seeded)', () => {
    // Snippets that change how lines group into cards and how the first line reads: continuation and
    // comment lines, blocks, sections, conditions, the end card, line breaks, a definition card as the
    // first line (no title then). The independent computation is the parser's own cards of each text.
    const snippets = ['\n', '\r\n', ' ', '\t', '+ m=2\n', '\n+ QN', '* note\n', '; c', 'k', '{a*2}', "'", 'R9 a 0 1k\n', '.control\nrun\n', '.endc\n',
      '.lib sec\n', '.endl\n', '.subckt S a b\n', '.ends\n', '.if (a==1)\n', '.endif\n', '.end\n', '.alter\n', '.title T\n', '.model QN NPN (BF=90)\n', '.param a=1\n', 'Q7 o r 0 QN\n'];
    const lines = ['Random edits', 'VCC vcc 0 DC 10', '.param a=2', 'RREF vcc ref {a*4.65}k ; the reference', 'Q1 ref ref 0 QN', 'Q2 out ref 0', '* between', '+ QN', '.control', 'op', '.endc'];
    for (let k = 0; k < 30; k++) lines.push(`RX${k} vcc x${k} ${1 + (k % 9)}k`, k % 7 === 3 ? `+ m=${k}` : `* line ${k}`);
    // Elements flattened from a subcircuit: their origin is the definition's card, and the instance's card in `instances`.
    lines.push('.subckt CELL top bot p=1', 'RA top mid {p}k', 'QC mid mid bot QN', '.ends CELL', 'XC1 vcc 0 CELL p=2', 'XC2 x3 0 CELL', 'XC3 x5 0 CELL p={a}');
    lines.push('.model QN NPN (BF=100)', '.end', '');
    const uri = '/t/main.cir';
    const random = rng(20261203);
    const pick = <T>(xs: readonly T[]): T => xs[Math.floor(random() * xs.length)]!;
    let text = lines.join('\n');
    let keptCards = 0;
    let sentCards = 0;
    let keptElements = 0;
    let sentElements = 0;
    let { sent, held } = takeInWhole(uri, text, undefined, undefined);
    for (let round = 0; round < 300; round++) {
      const next = randomEdit(text, round, random, pick, snippets);
      const result = takeInWhole(uri, next, sent, held);
      expect(result.analysis.documents[uri], `round ${round}`).toEqual(result.original.documents[uri]);
      expect(result.analysis.circuit, `round ${round}`).toEqual(result.original.circuit);
      // Every element's model is the new circuit's own object of that name, kept or sent.
      for (const e of result.analysis.circuit?.elements ?? []) if ('model' in e && e.model) expect(Object.values(result.analysis.circuit!.models)).toContain(e.model);
      keptElements += result.keptElements;
      sentElements += result.sentElements;
      keptCards += result.kept;
      sentCards += result.sentCount;
      ({ sent, held } = result);
      text = next;
    }
    // The edits are small: most cards and elements are kept rather than sent.
    expect(keptCards).toBeGreaterThan(5 * sentCards);
    expect(keptElements).toBeGreaterThan(3 * sentElements);
  });

  it('after value edits the engine analysed incrementally, sends only the edited element and takes in the cold circuit (seeded)', () => {
    // The elaboration patch of a value edit shares every element object it did not change with the last circuit:
    // those travel as runs of the held elements, and the circuit taken in must still be a cold analysis's.
    const lines = ['Shared elements', 'VCC vcc 0 DC 9', '.model QN NPN (BF=110 VAF=60)'];
    for (let k = 0; k < 12; k++) lines.push(`RR${k} vcc r${k} ${20 + k}k`, `QR${k} r${k} r${k} 0 QN`, `QO${k} o${k} r${k} 0 QN`, `RL${k} vcc o${k} ${2 + (k % 4)}.2k`);
    lines.push('.end', '');
    const uri = '/t/main.cir';
    const random = rng(20261204);
    const options = { corners: { enabled: false } };
    let text = lines.join('\n');
    let session = analyseSession({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), options, { keepIncremental: true });
    let { sent, held } = takeInWhole(uri, text, undefined, undefined, session.analysis);
    for (let round = 0; round < 40; round++) {
      // A resistor's number of the same length or of another length.
      const line = 3 + Math.floor(random() * 12) * 4 + (random() < 0.5 ? 0 : 3);
      const value = random() < 0.5 ? `${10 + Math.floor(random() * 90)}k` : `${1 + Math.floor(random() * 9)}.${Math.floor(random() * 10)}${Math.floor(random() * 10)}k`;
      lines[line] = lines[line]!.replace(/\S+$/, value);
      text = lines.join('\n');
      const cold = analyse({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), options);
      session = analyseSession({ uri, text, version: round + 2 }, new MemoryWorkspace({ [uri]: text }), options, { keepIncremental: true, previous: session.incremental, warmStart: session.warmStart });
      const result = takeInWhole(uri, text, sent, held, session.analysis);
      // The independent computation: the elaborator's own circuit and the parser's own cards of the edited text.
      expect(result.analysis.circuit, `round ${round}`).toEqual(cold.circuit);
      expect(result.analysis.documents[uri], `round ${round}`).toEqual(cold.documents[uri]);
      // Only the edited resistor is encoded (none when the value read the same); every other element is a held one.
      expect(result.sentElements, `round ${round}`).toBeLessThanOrEqual(1);
      expect(result.sentElements + result.keptElements).toBe(cold.circuit!.elements.length);
      ({ sent, held } = result);
    }
  });

  it("after value edits, sends only the structures the engine analysed again and takes in a cold analysis's structures (seeded)", () => {
    // A value edit hands the structures it cannot have changed on as copies of their first-pass snapshots: those travel as
    // `structures-kept` and the receiver copies its held ones, which the corner phase of the last result has written
    // into since (corners, spread). With over 400 unknowns the spread is left to the corner phase, as at 20k.
    const large = valueEditRounds(70, 300, 24, 20261205);
    expect(large.firstPassSpread).toBe(false);
    // A value edit reaches a cell or two: nearly every structure is kept.
    expect(large.keptStructures).toBeGreaterThan(0.9 * large.valueRounds * 70);
    // A small circuit's spread comes with its first pass, and its snapshots leave it out: every structure travels.
    const small = valueEditRounds(12, 0, 8, 20261206);
    expect(small.firstPassSpread).toBe(true);
    expect(small.keptStructures).toBe(0);
  });
});

/**
 * `rounds` seeded edits of an invented sink array (`cells` cells, every fifth a Widlar source, and a ladder of `ladder`
 * resistors) analysed as the worker does, each result taken in onto the last as the main thread does after its corner
 * phase's columns and spread were put on that one; each taken-in result's structures checked against a cold analysis.
 * Counts the structures kept in the rounds that changed values (or only a comment line).
 */
function valueEditRounds(cells: number, ladder: number, rounds: number, seed: number): { keptStructures: number; valueRounds: number; firstPassSpread: boolean } {
  const lines = ['Kept structures', 'VCC vcc 0 DC 9', '.model QN NPN (BF=110 VAF=60)'];
  for (let k = 0; k < cells; k++) {
    const widlar = k % 5 === 2;
    lines.push(`RR${k} vcc r${k} ${20 + (k % 9)}k`, `QR${k} r${k} r${k} 0 QN`, widlar ? `QO${k} o${k} r${k} e${k} QN` : `QO${k} o${k} r${k} 0 QN`, `RL${k} vcc o${k} ${2 + (k % 4)}.2k`);
    if (widlar) lines.push(`RE${k} e${k} 0 ${100 + 10 * k}`);
  }
  for (let k = 0; k < ladder; k++) lines.push(`RX${k} ${k === 0 ? 'vcc' : `x${k}`} ${k === ladder - 1 ? '0' : `x${k + 1}`} 1k`);
  lines.push('.end', '');
  const uri = '/t/main.cir';
  const random = rng(seed);
  const options = { corners: { enabled: false } };
  const resistors = lines.flatMap((l, i) => (/^R[RLE]\d/.test(l) ? [i] : []));
  let text = lines.join('\n');
  let session = analyseSession({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), options, { keepIncremental: true });
  const firstPassSpread = session.analysis.variation !== undefined;
  let { sent, held } = takeInWhole(uri, text, undefined, undefined, session.analysis, firstPasses(session));
  let keptStructures = 0;
  let valueRounds = 0;
  for (let round = 0; round < rounds; round++) {
    // What the main thread does with a result once it is taken in: the corner phase's columns and spread put on it.
    addCorners(session.analysis, { solver: session.solver!, nominal: session.nominal!, incremental: session.incremental });
    held.structures.forEach((s, i) => setCornerColumns(s, cornerColumns(session.analysis.structures[i]!)!));
    attachVariation(held.structures, session.analysis.variation!);
    const heldCorners = held.structures.map((s) => s.corners.length);
    expect(heldCorners.every((n) => n > 0) && held.structures.every((s) => s.variation !== undefined)).toBe(true);
    // Mostly a resistor's number (of the same or another length); now and then a comment line (every span past it
    // moves, the circuit stays) or the model (every structure analysed again).
    if (round % 8 === 5) lines[2] = lines[2]!.replace(/BF=\d+/, `BF=${100 + round}`);
    else if (round % 8 === 6) lines.splice(3, 0, `* note ${round}`);
    else {
      const line = resistors[Math.floor(random() * resistors.length)]! + lines.filter((l) => l.startsWith('* note')).length;
      lines[line] = lines[line]!.replace(/\S+$/, random() < 0.5 ? `${10 + Math.floor(random() * 90)}k` : `${1 + Math.floor(random() * 9)}.${Math.floor(random() * 10)}k`);
    }
    text = lines.join('\n');
    const cold = analyse({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), options);
    session = analyseSession({ uri, text, version: round + 2 }, new MemoryWorkspace({ [uri]: text }), options, { keepIncremental: true, previous: session.incremental, warmStart: session.warmStart });
    const result = takeInWhole(uri, text, sent, held, session.analysis, firstPasses(session));
    // The independent computation: a cold analysis of the edited text (its numbers up to the rounding of Newton's other
    // start, as the engine's own incremental tests compare them); and the worker's own structures, field order included.
    expectSame(asJson(result.analysis.structures), asJson(cold.structures), `round ${round}: structures`, 1e-9);
    expect(JSON.stringify(result.analysis.structures), `round ${round}`).toBe(JSON.stringify(session.analysis.structures));
    // The held result answers requests until the new one is accepted: its corners and spread are still there.
    expect(held.structures.map((s) => s.corners.length)).toEqual(heldCorners);
    if (round % 8 === 5) expect(result.keptStructures, `round ${round}`).toBe(0);
    else {
      valueRounds++;
      keptStructures += result.keptStructures;
    }
    ({ sent, held } = result);
  }
  return { keptStructures, valueRounds, firstPassSpread };
}

/** What a structure list writes as JSON (the form hovers, reports and the CLI read it in), read back. */
const asJson = (x: unknown): unknown => JSON.parse(JSON.stringify(x));

/** The first-pass snapshot the engine keeps of each structure of a session (what the worker hands the split). */
function firstPasses(session: ReturnType<typeof analyseSession>) {
  return session.incremental?.structures.map((k) => k.firstPass);
}

/**
 * One random edit of `text`: a snippet inserted at a line start or anywhere, with a few characters cut after it; a
 * character replaced in place (same length, same spans, other text); a whole line deleted or doubled; now and then
 * a definition card or another line put before the title, or a model put into the subcircuit.
 */
function randomEdit(text: string, round: number, random: () => number, pick: <T>(xs: readonly T[]) => T, snippets: readonly string[]): string {
  const lineStart = text.lastIndexOf('\n', Math.floor(random() * text.length)) + 1;
  const lineEnd = text.indexOf('\n', lineStart) + 1 || text.length;
  const at = random() < 0.5 ? lineStart : Math.floor(random() * (text.length + 1));
  switch (round % 7) {
    case 6: {
      // A model of the subcircuit's own that shadows the top-level one (its elements' model changes, their cards do not), and back.
      const local = '.model QN NPN (BF=50)\n.ends CELL';
      return text.includes(local) ? text.replace(local, '.ends CELL') : text.replace('.ends CELL', local);
    }
    case 0:
      return pick(['.model QN NPN\n', '.lib sec\n', 'R0 a 0 1\n', '', '']) + (random() < 0.5 ? text.slice(text.indexOf('\n') + 1) : text);
    case 1:
      return text.slice(0, at) + pick(['1', '2', 'k', '+', '*', '.', ' ', 'x']) + text.slice(at + 1);
    case 2:
      return random() < 0.5 ? text.slice(0, lineStart) + text.slice(lineEnd) : text.slice(0, lineEnd) + text.slice(lineStart, lineEnd) + text.slice(lineEnd);
    default:
      return text.slice(0, at) + (random() < 0.8 ? pick(snippets) : '') + text.slice(at + (random() < 0.4 ? Math.floor(random() * 12) : 0));
  }
}

/**
 * The analysis of `text` split (against `sent`, what was sent of the held analysis), passed through structured clones as postMessage does,
 * merged onto `held` and adopted, as the server takes in a result; with how many cards were kept and how many sent.
 */
function takeInWhole(
  uri: string,
  text: string,
  sent: ReturnType<ReturnType<typeof splitAnalysisLazily>['prepare']> | undefined,
  held: Analysis | undefined,
  original = analyse({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), { corners: { enabled: false } }),
  snapshots?: Parameters<typeof splitAnalysisLazily>[2],
) {
  const split = splitAnalysisLazily(original, sent, snapshots);
  const nextSent = split.prepare();
  const copy = structuredClone(split.header);
  let kept = 0;
  let sentCount = 0;
  let keptElements = 0;
  let sentElements = 0;
  let keptStructures = 0;
  for (const make of split.parts) {
    const part = structuredClone(make());
    if (part.kind === 'structures-kept') keptStructures += part.count;
    if (part.kind === 'cards-kept') kept += part.count;
    if (part.kind === 'cards') sentCount += part.starts.length;
    if (part.kind === 'elements') {
      for (const e of JSON.parse(part.json) as unknown[]) {
        if (Array.isArray(e)) keptElements += e[1] as number;
        else sentElements++;
      }
    }
    mergePart(copy, part, held);
  }
  adoptKeptCards(copy);
  return { analysis: copy, original, sent: nextSent, held: copy, kept, sentCount, keptElements, sentElements, keptStructures };
}

