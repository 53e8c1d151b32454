// One netlist made ready for the corner phase in the corner tests: elaborated, solved at the nominal point (which must converge), its structures recognised.

import { expect } from 'vitest';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { circuitOf } from '../fixes/elaborated';

export function solvedNetlist(netlist: string, uri: string) {
  const circuit = circuitOf(netlist, uri);
  const solver = new DcSolver(circuit);
  const nominal = solver.solve({});
  expect(nominal.op.converged).toBe(true);
  return { circuit, solver, nominal, structures: recogniseStructures(circuit) };
}
