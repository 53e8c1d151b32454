// The spread's outputs fill the structures' device indices as they look the names up, for the mismatch sources to
// read: the lists must be what looking every device up in the element table on its own gives (−1 for a name the
// circuit does not have), whether or not a structure's reference node is known.

import { describe, expect, it } from 'vitest';
import { structureOutputs } from '../../../shared-analysis/src/variation/outputs';
import { knownPlans, plannedMeasurements } from '../../../shared-analysis/src/structures/measure';
import { topologyOf } from '../../../shared-analysis/src/structures/topology';
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

  it('are the same, with the same outputs, when read from the measurement plans the nominal check made of the list', () => {
    // Invented: the two mirrors above and an NMOS mirror, whose gates draw no current.
    const circuit = circuitOf(CELLS.replace('.end', '.model NM NMOS (KP=1e-4 VTO=0.6)\nIM vcc g 50u\nM1 g g 0 0 NM W=10u L=1u\nM2 h g 0 0 NM W=10u L=1u\nRH vcc h 20k\n.end'));
    const structures = recogniseStructures(circuit);
    expect(structures.length).toBe(3);
    const topo = topologyOf(circuit);
    // A list nobody planned is read by the look-ups; the same structures in a list the nominal check planned, from its plans.
    const looked = [...structures];
    const planned = [...structures];
    plannedMeasurements(topo, planned);
    expect(knownPlans(topo, looked)).toBeUndefined();
    expect(knownPlans(topo, planned)).toBeDefined();
    const filledLooked = structureDeviceSlots(looked);
    const filledPlanned = structureDeviceSlots(planned);
    const a = structureOutputs(circuit, looked, filledLooked);
    const b = structureOutputs(circuit, planned, filledPlanned);
    expect(b).toEqual(a);
    expect(Array.from(filledPlanned.index)).toEqual(Array.from(filledLooked.index));
    // Kirchhoff's current law at the NPN mirror's reference node a: its reference collector and all three bases are there;
    // at the NMOS mirror's g only the reference drain is (a MOSFET's gate draws no DC current).
    const at = (name: string) => circuit.elements.findIndex((e) => e.name === name);
    const irefOf = (device: string) => b.find((o) => o.role === 'iref' && o.element === device)!.functional.terms;
    expect(irefOf('Q1')).toEqual([
      { kind: 'terminal', element: at('Q1'), terminal: 0, weight: 1 },
      { kind: 'terminal', element: at('Q1'), terminal: 1, weight: 1 },
      { kind: 'terminal', element: at('Q2'), terminal: 1, weight: 1 },
      { kind: 'terminal', element: at('Q3'), terminal: 1, weight: 1 },
    ]);
    expect(irefOf('M1')).toEqual([{ kind: 'terminal', element: at('M1'), terminal: 0, weight: 1 }]);
  });
});
