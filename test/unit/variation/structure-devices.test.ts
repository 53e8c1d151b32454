// The spread's outputs fill the structures' device indices as they look the names up, for the mismatch sources to
// read: the lists must be what looking every device up in the element table on its own gives (−1 for a name the
// circuit does not have), whether or not a structure's reference node is known.

import { describe, expect, it } from 'vitest';
import { structureOutputs } from '../../../shared-analysis/src/variation/outputs';
import { structureDevices, structureDeviceSlots } from '../../../shared-analysis/src/variation/sources';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { circuitOf } from '../fixes/elaborated';

// Invented: an NPN mirror with two outputs and a PNP mirror.
const CELLS = `two mirrors
VCC vcc 0 DC 5
.model QN NPN (IS=1e-15 BF=120)
.model QP PNP (IS=1e-15 BF=60)
R1 vcc a 4.3k
Q1 a a 0 QN
Q2 b a 0 QN
Q3 c a 0 QN 2
RB vcc b 2k
RC vcc c 1k
R4 d 0 10k
Q4 d d vcc QP
Q5 e d vcc QP
RE e 0 2k
.end
`;

describe('structure device indices filled by the outputs', () => {
  it('are the element table look-ups of every device', () => {
    const circuit = circuitOf(CELLS);
    const structures = recogniseStructures(circuit);
    expect(structures.length).toBe(2);
    // A structure whose list names a device the circuit lacks, and one whose reference node is unknown.
    const edited = [
      { ...structures[0], devices: [...structures[0].devices, 'QMISSING'] },
      { ...structures[1], reference: { ...structures[1].reference, node: 'nowhere' } },
    ];
    for (const list of [structures, edited]) {
      const filled = structureDeviceSlots(list);
      structureOutputs(circuit, list, filled);
      const alone = structureDevices(circuit, list);
      expect(Array.from(filled.start)).toEqual(Array.from(alone.start));
      expect(Array.from(filled.index)).toEqual(Array.from(alone.index));
      const names = circuit.elements.map((e) => e.name);
      list.forEach((s, k) => s.devices.forEach((d, j) => expect(filled.index[filled.start[k] + j]).toBe(names.lastIndexOf(d))));
    }
  });
});
