// The point's tables on the main thread look names up through the element index's tables by lower-case name; names
// that differ only by case (which the elaborator never makes, but a table must not depend on it) get tables of their own.

import { describe, expect, it } from 'vitest';
import { installPointTables, type PointColumns } from '../../../server/src/point-tables';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import type { OperatingPoint } from '../../../shared-analysis/src/solve/types';

/** A lower-case table as the element index makes it: the last of two names that lower-case alike wins. */
const lowerTable = (names: readonly string[]) => new Map(names.map((n, i) => [n.toLowerCase(), i]));

function tables(nodes: string[], elements: string[]): OperatingPoint {
  const circuit = { nodes, elements: elements.map((name) => ({ name })) } as unknown as Circuit;
  const n = elements.length;
  const columns: PointColumns = {
    volts: Float64Array.from(nodes, (_, i) => i * 1.5),
    // The devices table lists the elements last to first.
    order: Int32Array.from({ length: n }, (_, k) => n - 1 - k),
    types: ['resistor'],
    type: new Int8Array(n),
    current: Float64Array.from({ length: n }, (_, k) => k * 1e-3),
    voltage: Float64Array.from({ length: n }, (_, k) => k),
    power: Float64Array.from({ length: n }, (_, k) => k * 1e-3 * k),
  };
  const op = {} as OperatingPoint;
  installPointTables(op, circuit, columns, () => ({ nodes: lowerTable(nodes), elements: lowerTable(elements) }));
  return op;
}

describe("the point's tables read through the index's lower-case tables", () => {
  it('finds each name as written and no other case of it, through the index or through tables of their own', () => {
    // The first circuit's names are distinct in lower case (the index's tables serve); the second's are not.
    for (const [nodes, elements] of [
      [['0', 'Out', 'mid'], ['R1', 'Rload', 'Q7']],
      [['0', 'A', 'a'], ['RX', 'Rx', 'R2']],
    ] as const) {
      const op = tables([...nodes], [...elements]);
      // The independent reading: positions counted here from the lists themselves.
      nodes.forEach((name, i) => expect(op.nodes[name], name).toBe(i * 1.5));
      elements.forEach((name, e) => {
        const k = elements.length - 1 - e;
        expect(op.devices[name], name).toEqual({ type: 'resistor', current: k * 1e-3, voltage: k, power: k * 1e-3 * k });
      });
      for (const other of [...nodes, ...elements].flatMap((n) => [n.toLowerCase(), n.toUpperCase()]).filter((n) => !(nodes as readonly string[]).includes(n) && !(elements as readonly string[]).includes(n))) {
        expect(op.nodes[other], other).toBeUndefined();
        expect(op.devices[other], other).toBeUndefined();
        expect(other in op.devices).toBe(false);
      }
      expect(Object.keys(op.devices)).toEqual([...elements].reverse());
    }
  });
});
