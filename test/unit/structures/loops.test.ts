// Self-biased loops found by `feedLoops`: the answer kept for a list against a search of the list as it is now.

import { describe, expect, it } from 'vitest';
import { feedLoops } from '../../../shared-analysis/src/structures/loops';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { topologyOf } from '../../../shared-analysis/src/structures/topology';
import type { Structure } from '../../../shared-analysis/src/structures/types';
import { elaborate } from '../../../shared-analysis/src/elaborate';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { BJT_CELL } from '../checks/self-biased-cells';

/** The invented ΔVBE cell of the start-up tests beside an ordinary resistor-fed mirror, elaborated and recognised. */
function cellAndMirror(more = '') {
  const text = BJT_CELL('').replace('.end', `RREF vcc m 10k\nQM1 m m 0 qn\nQM2 out m 0 qn\nRL vcc out 4.7k\n${more}.end`);
  const uri = 'mem://cell.cir';
  const circuit = elaborate(parse(uri, text, { hasTitle: true }), new MemoryWorkspace({ [uri]: text })).circuit;
  return { topo: topologyOf(circuit), structures: recogniseStructures(circuit) };
}

const ids = (loops: Structure[][]) => loops.map((l) => l.map((s) => s.id));

describe('feed loops', () => {
  it('finds the cell and its closing mirror as one loop, the resistor-fed mirror in none (the cell as its start-up tests read it)', () => {
    const { topo, structures } = cellAndMirror();
    expect(structures.map((s) => s.id).sort()).toEqual(['ptat-cell:Q1', 'simple-mirror:QM1', 'simple-mirror:QP1']);
    expect(ids(feedLoops(topo, structures))).toEqual([['ptat-cell:Q1', 'simple-mirror:QP1']]);
  });

  it('finds only the cell among twenty chains of two mirrors where the first feeds the second and nothing feeds back', () => {
    // Worked out by hand: in chain k the NPN mirror QAk1/QAk2 (fed by RAk) sinks the PNP mirror QBk1/QBk2's
    // reference current, so the PNP mirror is driven by another structure, but no drive leads back to the NPN one.
    let chains = '';
    for (let k = 0; k < 20; k++) {
      chains += `RA${k} vcc a${k} 10k\nQA${k}1 a${k} a${k} 0 qn\nQA${k}2 b${k} a${k} 0 qn\nQB${k}1 b${k} b${k} vcc qp\nQB${k}2 o${k} b${k} vcc qp\nRO${k} o${k} 0 4.7k\n`;
    }
    const { topo, structures } = cellAndMirror(chains);
    // Driven by another structure: each chain's PNP mirror, and the cell's closing mirror QP1.
    const driven = structures.filter((s) => s.reference.feed === 'mirror-output').map((s) => s.id);
    expect(driven.filter((id) => id.startsWith('simple-mirror:QB'))).toHaveLength(20);
    expect(driven).toContain('simple-mirror:QP1');
    expect(ids(feedLoops(topo, structures))).toEqual([['ptat-cell:Q1', 'simple-mirror:QP1']]);
  });

  it('answers a list asked again as a fresh search does, and searches again when the list or its members changed', () => {
    const { topo, structures } = cellAndMirror();
    const first = feedLoops(topo, structures);
    // The kept answer, and a list the caller may change without changing the next answer.
    first.length = 0;
    expect(ids(feedLoops(topo, structures))).toEqual([['ptat-cell:Q1', 'simple-mirror:QP1']]);
    // The same list with its closing mirror taken out: the loop is gone (a stale answer would still show it).
    const closing = structures.findIndex((s) => s.id === 'simple-mirror:QP1');
    const [removed] = structures.splice(closing, 1);
    expect(feedLoops(topo, structures)).toEqual([]);
    // Put back in another place: a loop again, found from the cell, which now comes first in the list's order either way.
    structures.unshift(removed);
    expect(ids(feedLoops(topo, structures))).toEqual([['simple-mirror:QP1', 'ptat-cell:Q1']]);
    // A new list of the same members, and the same list with one member replaced by a copy: searched as they are.
    expect(ids(feedLoops(topo, [...structures]))).toEqual([['simple-mirror:QP1', 'ptat-cell:Q1']]);
    const copy: Structure = { ...removed, outputs: [] };
    structures[0] = copy;
    expect(feedLoops(topo, structures)).toEqual([]);
  });
});
