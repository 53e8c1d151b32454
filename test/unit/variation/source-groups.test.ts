// The tolerance sources' groups (sources of one group are summed when an output's contributors are ranked), numbered
// without comparing names when the list's names keep them apart (`groupsApart`: every element's name its own and
// without a space, every structure's id likewise), against the numbering written out here: groups by equal name, in
// the order of their first source. Invented netlists: bipolar and MOS mirrors, a Wilson mirror and JFET self-biased
// sources with supplies and resistors (names kept apart); invented circuits with an element name used twice (the
// elaborator keeps one element per name, so these are built as circuits) and a list in another order (by name).

import { describe, expect, it } from 'vitest';
import { groupsApart, readCardTolerances, sourceListOf, type SourceList, type ToleranceSource } from '../../../shared-analysis/src/variation/sources';
import { sourceGroupNumbers } from '../../../shared-analysis/src/variation/index';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { coldSession } from '../solve/same-analysis';
import { fixture } from '../structures/fixtures';

const URI = '/t/source-groups.cir';

/** Invented: NPN and NMOS mirrors with two and three outputs, a Wilson mirror, JFET self-biased sources, two supplies. */
function netlist(): string {
  const L = ['mixed cells', 'VCC vcc 0 DC 5', 'VJ vj 0 DC 12', '.model QN NPN (IS=2e-15 BF=120 VAF=70)', '.model MN NMOS (VTO=0.6 KP=1e-4 LAMBDA=0.02)', '.model JN NJF (VTO=-2 BETA=1e-3)'];
  for (let i = 0; i < 4; i++) {
    L.push(`RQ${i} vcc q${i} 4.7k ; tol 1%`, `QR${i} q${i} q${i} 0 QN`, `QA${i} qa${i} q${i} 0 QN`, `QB${i} qb${i} q${i} 0 QN 2`, `RQA${i} vcc qa${i} 1k`, `RQB${i} vcc qb${i} 470`);
    L.push(`RM${i} vcc m${i} 22k`, `MR${i} m${i} m${i} 0 0 MN W=10u L=1u`, `MA${i} ma${i} m${i} 0 0 MN W=20u L=1u`, `RMA${i} vcc ma${i} 5k`);
    L.push(`RW${i} vcc w${i} 10k`, `QW1${i} w${i} wb${i} 0 QN`, `QW2${i} wb${i} wb${i} 0 QN`, `QW3${i} wo${i} w${i} wb${i} QN`, `RWL${i} vcc wo${i} 2k`);
    L.push(`RJ${i} vj jd${i} 2k`, `JS${i} jd${i} 0 js${i} JN`, `RJS${i} js${i} 0 ${500 + 100 * i}`);
  }
  L.push('.end', '');
  return L.join('\n');
}

const SETTINGS = { resistorTolerance: 0.05, resistorFrom: 'series', supplyTolerance: 0.05 } as const;

function listOf(text: string): SourceList {
  const { circuit, structures, documents } = coldSession(URI, text, {}).analysis;
  return sourceListOf(circuit!, structures, readCardTolerances(documents), SETTINGS, 27);
}

/** Groups by equal name, numbered in the order of their first source. */
function byName(sources: readonly ToleranceSource[]): number[] {
  const seen = new Map<string, number>();
  return sources.map((s) => {
    if (!seen.has(s.group)) seen.set(s.group, seen.size);
    return seen.get(s.group)!;
  });
}

describe('tolerance source groups', () => {
  it('are numbered as by name when the names keep them apart', () => {
    const { sources } = listOf(netlist());
    expect(groupsApart(sources)).toBe(true);
    // Every kind of group the list holds: a resistor's, a supply's, BJT VBE and β, MOS VTH and KP, a JFET's spread.
    expect(new Set(sources.map((s) => s.aspect ?? (s.partSpread ? 'spread' : s.parameter.kind)))).toEqual(new Set(['resistance', 'source', 'VBE', 'β', 'VTH', 'KP', 'spread']));
    // Mismatch groups of several sources, so numbering by order of appearance alone would fail.
    const numbers = Array.from(sourceGroupNumbers(sources));
    expect(new Set(numbers).size).toBeLessThan(sources.length);
    expect(numbers).toEqual(byName(sources));
  });

  it('are numbered by name when an element name is used twice', () => {
    for (const kind of ['wilson-mirror', 'cascode-mirror'] as const) {
      const { b } = fixture(kind, 'npn');
      // A second RREF (a resistor's group is its name: both resistors are one group) and a second Q1 (one device's name twice).
      b.r('RREF', 'vcc', 'x', 2e3).q('Q1', 'x', 'x', '0', 'dev');
      const circuit = b.build();
      const { sources } = sourceListOf(circuit, recogniseStructures(circuit), new Map(), SETTINGS, 27);
      expect(groupsApart(sources)).toBe(false);
      expect(sources.filter((s) => s.group === 'RREF')).toHaveLength(2);
      expect(Array.from(sourceGroupNumbers(sources))).toEqual(byName(sources));
    }
  });

  it('of a list not made by sourceListOf (a copy) are numbered by name', () => {
    const sources = listOf(netlist()).sources.slice().reverse();
    expect(groupsApart(sources)).toBe(false);
    expect(Array.from(sourceGroupNumbers(sources))).toEqual(byName(sources));
  });
});
