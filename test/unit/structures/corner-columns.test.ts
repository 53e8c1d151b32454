// Corner results stored column-wise: the per-corner records built from the columns, the per-output summary, and a copy across threads.

import { describe, expect, it } from 'vitest';
import { copyStructure, cornerColumns, cornerRecords, setCornerColumns, summariseOutputs, type CornerColumns } from '../../../shared-analysis/src/structures/corner-columns';
import { analyse } from '../../../shared-analysis/src/service';
import { dropNonFinite } from '../../../shared-analysis/src/output-guard';
import type { Structure } from '../../../shared-analysis/src/structures/types';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { rng } from '../../seeded-random';

/** Three corners, two outputs, one derived voltage; the second corner did not converge. Invented numbers. */
function sample(): CornerColumns {
  return {
    axis: {
      labels: ['supply −5 %', 'supply +5 %', '125 °C'],
      supplyScale: Float64Array.of(0.95, 1.05, 1),
      temperatureC: Float64Array.of(27, 27, 125),
      betaScale: Float64Array.of(1, 1, 1),
      process: [undefined, undefined, 'slow'],
      converged: Uint8Array.of(1, 0, 1),
    },
    outputs: ['Q2', 'Q3'],
    iref: Float64Array.of(1e-3, 0, 1.1e-3),
    // Output o at corner k sits at o·3 + k.
    iout: Float64Array.of(0.9e-3, 0, 1.2e-3, 2e-3, 0, 1.8e-3),
    headroom: Float64Array.of(1.5, 0, -0.1, 2, 0, 0.2),
    outOfRegion: Uint8Array.of(0, 0, 1, 0, 0, 0),
    voltageNames: ['VREF'],
    voltages: Float64Array.of(1.2, NaN, NaN),
  };
}

describe('corner columns', () => {
  it('build the records Structure.corners lists, a corner that did not converge carrying zeros', () => {
    const recs = cornerRecords(sample());
    expect(recs.map((r) => r.label)).toEqual(['supply −5 %', 'supply +5 %', '125 °C']);
    expect(recs[0]).toEqual({ label: 'supply −5 %', supplyScale: 0.95, temperatureC: 27, betaScale: 1, converged: true, iref: 1e-3, iout: { Q2: 0.9e-3, Q3: 2e-3 }, headroom: { Q2: 1.5, Q3: 2 }, outOfRegion: [], voltages: { VREF: 1.2 } });
    expect(recs[1]).toEqual({ label: 'supply +5 %', supplyScale: 1.05, temperatureC: 27, betaScale: 1, converged: false, iref: 0, iout: { Q2: 0, Q3: 0 }, headroom: { Q2: 0, Q3: 0 }, outOfRegion: [] });
    // A voltage that could not be read is left out, not shown as NaN.
    expect(recs[2].voltages).toEqual({});
    expect(recs[2].outOfRegion).toEqual(['Q2']);
    expect(recs[2].process).toBe('slow');
    expect('process' in recs[0]).toBe(false);
  });

  it('summarise each output over the converged corners only, corners by the names given, members in the order the JSON writes them', () => {
    const [q2, q3] = summariseOutputs(sample(), ['low', 'high', 'hot']);
    expect(q2).toEqual({ device: 'Q2', minCurrent: { value: 0.9e-3, corner: 'low' }, maxCurrent: { value: 1.2e-3, corner: 'hot' }, minHeadroom: { value: -0.1, corner: 'hot' }, outOfRegionAt: ['hot'] });
    expect(Object.keys(q2)).toEqual(['device', 'minCurrent', 'maxCurrent', 'minHeadroom', 'outOfRegionAt']);
    expect(q3.minCurrent).toEqual({ value: 1.8e-3, corner: 'hot' });
    expect(q3.outOfRegionAt).toEqual([]);
  });

  it('summarise as a plain scan of the per-corner records does, the first corner winning a tie', () => {
    const r = rng(11);
    const C = 26;
    const outputs = ['QA', 'QB', 'QC'];
    // Few distinct values, so extremes tie between corners; some corners not converged.
    const pick = (values: number[]) => values[Math.floor(r() * values.length)];
    const cols: CornerColumns = {
      axis: {
        labels: Array.from({ length: C }, (_, k) => `corner ${k}`),
        supplyScale: new Float64Array(C).fill(1),
        temperatureC: new Float64Array(C).fill(27),
        betaScale: new Float64Array(C).fill(1),
        process: new Array(C).fill(undefined),
        converged: Uint8Array.from({ length: C }, () => (r() < 0.8 ? 1 : 0)),
      },
      outputs,
      iref: new Float64Array(C),
      iout: Float64Array.from({ length: outputs.length * C }, () => pick([1e-3, 2e-3, 3e-3])),
      headroom: Float64Array.from({ length: outputs.length * C }, () => pick([-0.2, 0.5, 1.5])),
      outOfRegion: Uint8Array.from({ length: outputs.length * C }, () => (r() < 0.3 ? 1 : 0)),
      voltageNames: [],
      voltages: new Float64Array(0),
    };
    const records = cornerRecords(cols).filter((c) => c.converged);
    // Each corner named by a key of its own, as the CLI names them.
    const name = (label: string) => `k${label.slice('corner '.length)}`;
    const extreme = (read: (c: (typeof records)[number]) => number, better: (a: number, b: number) => boolean) => {
      let best: { value: number; corner: string } | undefined;
      for (const c of records) if (!best || better(read(c), best.value)) best = { value: read(c), corner: name(c.label) };
      return best;
    };
    summariseOutputs(cols, cols.axis.labels.map(name)).forEach((s, o) => {
      const device = outputs[o];
      expect(s.minCurrent).toEqual(extreme((c) => c.iout[device], (a, b) => a < b));
      expect(s.maxCurrent).toEqual(extreme((c) => c.iout[device], (a, b) => a > b));
      expect(s.minHeadroom).toEqual(extreme((c) => c.headroom[device], (a, b) => a < b));
      expect(s.outOfRegionAt).toEqual(records.filter((c) => c.outOfRegion.includes(device)).map((c) => name(c.label)));
    });
  });

  it('give a structure its records on first read, and copy them as plain records', () => {
    const s = { id: 's', corners: [] } as unknown as Structure;
    const cols = sample();
    setCornerColumns(s, cols);
    expect(cornerColumns(s)).toBe(cols);
    expect(s.corners).toEqual(cornerRecords(cols));
    expect(s.corners).toBe(s.corners);
    expect(JSON.parse(JSON.stringify(s)).corners).toEqual(cornerRecords(cols));
    expect(structuredClone(cols).iout).toEqual(cols.iout);
    s.corners = [];
    expect(s.corners).toEqual([]);
    expect(cornerColumns(s)).toBeUndefined();
  });

  it('are read through one accessor shared by every structure, in the place the JSON lists corners, and walked once assigned', () => {
    // Two invented NPN mirrors fed from 5 V.
    const text = 'mirrors\nVCC vcc 0 5\nR1 vcc r1 4.3k\nQ1 r1 r1 0 QN\nQ2 o1 r1 0 QN\nRL1 vcc o1 2k\nR2 vcc r2 10k\nQ3 r2 r2 0 QN\nQ4 o2 r2 0 QN\nRL2 vcc o2 1k\n.model QN NPN (IS=1e-15 BF=100 VAF=80)\n.end\n';
    const a = analyse({ uri: '/m.cir', text }, new MemoryWorkspace({ '/m.cir': text }));
    expect(a.structures.length).toBe(2);
    const [s1, s2] = a.structures;
    const get1 = Object.getOwnPropertyDescriptor(s1, 'corners')?.get;
    expect(get1).toBeTypeOf('function');
    expect(Object.getOwnPropertyDescriptor(s2, 'corners')?.get).toBe(get1);
    const keys = Object.keys(s1);
    expect(keys.slice(keys.indexOf('outputResistance'), keys.indexOf('outputResistance') + 3)).toEqual(['outputResistance', 'corners', 'solved']);
    expect(s1.corners.length).toBe(cornerColumns(s1)!.axis.labels.length);
    // An assigned list is an ordinary value again: the finiteness walk reads it and drops what is not finite.
    s2.corners = [{ ...s1.corners[0]!, iref: Number.NaN }];
    expect(cornerColumns(s2)).toBeUndefined();
    const removed: string[] = [];
    dropNonFinite(s2, 's2', removed);
    expect(removed).toEqual(['s2.corners[0].iref']);
    expect('iref' in s2.corners[0]!).toBe(false);
  });

  it('are left out of a copy, which keeps the accessor in their place and the original untouched', () => {
    // An invented NPN mirror with a VBE multiplier beside it (a structure with a derived voltage), corners and spread on.
    const text = 'copies\nVCC vcc 0 5\nR1 vcc r 4.3k\nQ1 r r 0 QN\nQ2 o r 0 QN\nRL vcc o 2k\nRM vcc c 2k\nRA c b 2.2k\nRB b 0 1k\nQM c b 0 QN\n.model QN NPN (IS=1e-15 BF=100 VAF=80)\n.end\n';
    const a = analyse({ uri: '/c.cir', text }, new MemoryWorkspace({ '/c.cir': text }));
    expect(a.structures.some((s) => (s.voltages?.length ?? 0) > 0)).toBe(true);
    for (const s of a.structures) {
      const before = JSON.stringify(s);
      const copy = copyStructure(s, 'variation');
      // The plain path: a spread of the structure with no corners and no spread, field order included.
      const plain: Record<string, unknown> = { ...s, corners: [] };
      delete plain['variation'];
      expect(JSON.stringify(copy)).toBe(JSON.stringify(plain));
      expect(Object.getOwnPropertyDescriptor(copy, 'corners')?.get).toBe(Object.getOwnPropertyDescriptor(s, 'corners')?.get);
      // The lists the corner phase writes into are the copy's own; the columns given to the copy are read back as records.
      if (s.voltages) expect(copy.voltages![0]).not.toBe(s.voltages[0]);
      setCornerColumns(copy, cornerColumns(s)!);
      expect(copy.corners).toEqual(s.corners);
      expect(JSON.stringify(s)).toBe(before);
    }
  });

  it('hold what an analysis measured at every corner, read back through the records', () => {
    // An invented NPN mirror: 4.3 kΩ from 5 V into the reference, 2 kΩ load.
    const text = 'mirror\nVCC vcc 0 5\nR1 vcc r 4.3k\nQ1 r r 0 QN\nQ2 o r 0 QN\nRL vcc o 2k\n.model QN NPN (IS=1e-15 BF=100 VAF=80)\n.end\n';
    const a = analyse({ uri: '/m.cir', text }, new MemoryWorkspace({ '/m.cir': text }));
    const s = a.structures[0];
    const cols = cornerColumns(s)!;
    expect(cols.axis.labels.length).toBe(26);
    const C = cols.axis.labels.length;
    s.corners.forEach((c, k) => {
      expect(c.iout['Q2']).toBe(cols.iout[k]);
      expect(c.headroom['Q2']).toBe(cols.headroom[k]);
      expect(c.converged).toBe(true);
    });
    // Physics, not bookkeeping: the output current is higher at +5 % supply than at −5 % (a larger IREF = (VCC − VBE)/R1).
    const at = (label: string) => cols.iout[cols.axis.labels.indexOf(label)];
    expect(at('supply +5 %')).toBeGreaterThan(at('supply −5 %'));
    expect(C).toBe(s.corners.length);
  });
});
