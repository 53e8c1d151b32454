// The tolerance sources after a value edit, patched from the last list (`patchedSources`): the edited resistors' sources
// and those of cards whose tolerance note changed made again, the rest kept. The check: after seeded random edits of
// values and tolerance notes (changed, added, removed, or set to 0 %, which takes a resistor's source away) on an
// invented netlist, the patched list equals the list made afresh from the edited text (every source's every field, the
// element index and the written tolerances), or is refused when an element gained or lost its source; and it is refused
// for other structures, settings or temperature. Taking out the rule for changed resistances or for changed notes
// fails it.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import type { AnalysisSession } from '../../../shared-analysis/src/service';
import { patchedSources, readCardTolerances, sourceListOf, type SourceList, type SourceSettings } from '../../../shared-analysis/src/variation/sources';
import { rng } from '../../seeded-random';
import { coldSession, randomValueEdit } from '../solve/same-analysis';

const URI = '/t/patched-sources.cir';
const SETTINGS: SourceSettings = { resistorTolerance: 0.05, resistorFrom: 'series', supplyTolerance: 0.05 };
const TEMPERATURE = 27;

// Invented: NPN sink cells on a 5 V rail, every fourth reference resistor with a tolerance note, every sixth load with one.
function cells(count: number): string {
  const L = ['sink cells with notes', 'VCC vcc 0 DC 5', '.model QN NPN (IS=2e-15 BF=120 VAF=70)'];
  for (let i = 0; i < count; i++) {
    const rr = i % 4 === 0 ? ` ; tol ${1 + (i % 3)}%` : '';
    const rl = i % 6 === 1 ? ` ; tol 0.5%` : '';
    L.push(`RR${i} vcc r${i} ${(3.3 + (i % 5) * 0.6).toFixed(1)}k${rr}`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} vcc o${i} ${(1 + (i % 3) * 0.4).toFixed(1)}k${rl}`);
  }
  L.push('.end', '');
  return L.join('\n');
}

/** One edit: a resistor's value, or a card's tolerance note changed, added, removed or set to 0 %. */
function randomEdit(text: string, random: () => number): string {
  const lines = text.split('\n');
  const cards = lines.flatMap((l, i) => (/^R/.test(l) ? [i] : []));
  const at = cards[Math.floor(random() * cards.length)];
  const what = random();
  if (what < 0.4) return randomValueEdit(text, random);
  const noted = /; tol [0-9.]+%/.test(lines[at]);
  if (what < 0.6 && noted) lines[at] = lines[at].replace(/; tol [0-9.]+%/, '');
  else if (what < 0.7) lines[at] = noted ? lines[at].replace(/tol [0-9.]+%/, 'tol 0%') : `${lines[at]} ; tol 0%`;
  else {
    const note = `tol ${(0.1 + 4.9 * random()).toPrecision(3)}%`;
    lines[at] = noted ? lines[at].replace(/tol [0-9.]+%/, note) : `${lines[at]} ; ${note}`;
  }
  return lines.join('\n');
}

function listOf(s: AnalysisSession, settings = SETTINGS, temperatureC = TEMPERATURE): SourceList {
  const { circuit, structures, documents } = s.analysis;
  return sourceListOf(circuit!, structures, readCardTolerances(documents), settings, temperatureC);
}

function patched(last: SourceList, s: AnalysisSession, changed: number[], settings = SETTINGS, temperatureC = TEMPERATURE): SourceList | undefined {
  const { circuit, structures, documents } = s.analysis;
  return patchedSources(last, circuit!, structures, readCardTolerances(documents), settings, temperatureC, changed);
}

/** The elements whose resistance differs between two circuits of the same elements (worked out here, element by element). */
function changedResistances(before: Circuit, after: Circuit): number[] {
  return after.elements.flatMap((el, i) => (el.kind === 'R' && (before.elements[i] as typeof el).resistance !== el.resistance ? [i] : []));
}

/** Whether the two lists vary the same parameters in the same order (the same elements have sources). */
function sameParameters(a: SourceList, b: SourceList): boolean {
  return a.sources.length === b.sources.length && a.sources.every((s, k) => JSON.stringify(s.parameter) === JSON.stringify(b.sources[k].parameter));
}

describe('tolerance sources patched after value and note edits', () => {
  it('equal the list made afresh from the edited text, or are refused when an element gains or loses its source', () => {
    const random = rng(3122026);
    let text = cells(24);
    let session = coldSession(URI, text, {});
    let list = listOf(session);
    let patchedCount = 0;
    let refused = 0;
    let remade = 0;
    for (let k = 0; k < 40; k++) {
      const edited = randomEdit(text, random);
      const next = coldSession(URI, edited, {});
      const fresh = listOf(next);
      const got = patched(list, next, changedResistances(session.analysis.circuit!, next.analysis.circuit!));
      if (sameParameters(list, fresh)) {
        expect(got).toBeDefined();
        expect(got!.sources).toEqual(fresh.sources);
        expect(Array.from(got!.sourceOf)).toEqual(Array.from(fresh.sourceOf));
        expect(Array.from(got!.written)).toEqual(Array.from(fresh.written));
        // The sources made again are those whose figures differ from the last list's.
        const differs = fresh.sources.map((s, i) => (JSON.stringify(s) === JSON.stringify(list.sources[i]) ? 0 : 1));
        expect(Array.from(got!.changed!)).toEqual(differs);
        remade += differs.reduce((a: number, b) => a + b, 0);
        patchedCount++;
        list = got!;
      } else {
        expect(got).toBeUndefined();
        refused++;
        list = fresh;
      }
      text = edited;
      session = next;
    }
    // Both ways were taken, and sources were made again.
    expect(patchedCount).toBeGreaterThan(20);
    expect(refused).toBeGreaterThan(0);
    expect(remade).toBeGreaterThan(10);
  }, 60_000);

  it('are refused for other structures, settings or temperature', () => {
    const text = cells(6);
    const a = coldSession(URI, text, {});
    const list = listOf(a);
    expect(patched(list, a, [])).toBeDefined();
    expect(patched(list, a, [], { ...SETTINGS, resistorTolerance: 0.01 })).toBeUndefined();
    expect(patched(list, a, [], SETTINGS, 85)).toBeUndefined();
    // A structure with its devices in another order: other mismatch groups.
    const { circuit, structures, documents } = a.analysis;
    const other = structures.map((s, i) => (i === 0 ? { ...s, devices: [...s.devices].reverse() } : s));
    expect(patchedSources(list, circuit!, other, readCardTolerances(documents), SETTINGS, TEMPERATURE, [])).toBeUndefined();
    expect(patchedSources(list, circuit!, structures.map((s) => ({ ...s })), readCardTolerances(documents), SETTINGS, TEMPERATURE, [])).toBeDefined();
  });
});
