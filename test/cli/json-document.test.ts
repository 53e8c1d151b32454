// The JSON document's structure entries against the analysis they come from: what an output's spread leaves
// out inside a structure is exactly what its place there says (README, "JSON output").

import { describe, expect, it } from 'vitest';
import { cornerKey, jsonReport } from '../../server/src/cli';
import { analyseSession } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import type { Structure } from '../../shared-analysis/src/structures/types';
import type { OutputVariation } from '../../shared-analysis/src/variation/types';

// A bipolar mirror, a PMOS mirror, a VBE multiplier (a structure that produces a voltage) and a load with a target
// of its own, outside every structure.
const NETLIST = `Spread bench
VCC vcc 0 DC 10
VDD vdd 0 DC 3.3
RREF vcc ref 9.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 1k
MREF g g vdd vdd PM W=20u L=2u
MOUT pout g vdd vdd PM W=40u L=2u
RSET g 0 47k
RP pout 0 10k ; expect 60uA ±20%
RB vcc c 2k
QM c b 0 QN
RM1 c b 10k
RM2 b 0 4.7k
.model QN NPN (BF=100 IS=1e-16 VAF=80)
.model PM PMOS (VTO=-0.6 KP=50u LAMBDA=0.05)
.end
`;

type Written = Record<string, unknown>;

describe('the JSON document: spreads under their structures', () => {
  it('leaves out of each output\'s spread exactly what its place says, and writes the rest unchanged', () => {
    const uri = '/bench/spread.cir';
    const analysis = analyseSession({ uri, text: NETLIST }, new MemoryWorkspace({ [uri]: NETLIST })).analysis;
    const doc = JSON.parse(JSON.stringify(jsonReport([{ path: uri, absolute: uri, analysis }] as never))) as {
      files: { structures: { id: string; variation?: Record<string, unknown> }[]; variation: { outputsOutsideStructures: Written[] } }[];
    };
    const entries = doc.files[0]!.structures;
    const seen = { iref: 0, iout: 0, voltages: 0 };
    for (const s of analysis.structures) {
      const v = s.variation;
      if (!v) continue;
      const written = entries.find((e) => e.id === s.id)!.variation!;
      const check = (o: OutputVariation, w: Written, place: { output: string; key: string; unit: string; element?: string }): void => {
        // What the place says (outputs.ts builds each output's identity from the same three facts).
        expect({ output: o.output, key: o.key, unit: o.unit, structure: o.structure, element: o.element }).toEqual({ ...place, structure: s.id, element: place.element });
        for (const k of ['output', 'key', 'unit', 'structure', 'element']) expect(w).not.toHaveProperty(k);
        expect(w['sigma']).toBe(o.sigma);
        expect(w['worstCaseRelative']).toBe(o.worstCaseRelative);
        expect(w['contributors']).toEqual(JSON.parse(JSON.stringify(o.contributors.slice(0, 3))));
      };
      if (v.iref) {
        seen.iref++;
        check(v.iref, written['iref'] as Written, { output: 'IREF', key: `${s.id} iref`, unit: 'A', element: s.reference.device });
      }
      for (const [device, o] of Object.entries(v.iout)) {
        seen.iout++;
        check(o, (written['iout'] as Record<string, Written>)[device]!, { output: device, key: `${s.id} out ${device}`, unit: 'A', element: device });
      }
      for (const [name, o] of Object.entries(v.voltages ?? {})) {
        seen.voltages++;
        check(o, (written['voltages'] as Record<string, Written>)[name]!, { output: name, key: `${s.id} voltage ${name}`, unit: 'V' });
      }
    }
    expect(seen.iref).toBeGreaterThan(0);
    expect(seen.iout).toBeGreaterThanOrEqual(2);
    expect(seen.voltages).toBeGreaterThan(0);
    // An output outside every structure has no place to say it: it keeps its identity.
    const outside = doc.files[0]!.variation.outputsOutsideStructures;
    expect(outside.map((o) => [o['key'], o['output'], o['unit'], o['element']])).toEqual([['element RP', 'RP', 'A', 'RP']]);
  });

  it('summarises a structure\'s corners from its columns as from its records, as a scan of the records does', () => {
    const uri = '/bench/spread.cir';
    const analysis = analyseSession({ uri, text: NETLIST }, new MemoryWorkspace({ [uri]: NETLIST })).analysis;
    type Summary = { corners: number; converged: number; outputs: Written[] };
    const summaries = (structures: Structure[]): Summary[] => {
      const doc = JSON.parse(JSON.stringify(jsonReport([{ path: uri, absolute: uri, analysis: { ...analysis, structures } }] as never))) as { files: { structures: { cornerSummary: Summary }[] }[] };
      return doc.files[0]!.structures.map((e) => e.cornerSummary);
    };
    // Copies through JSON carry their corners as records only (the columns stay with the analysed structures).
    const copies = JSON.parse(JSON.stringify(analysis.structures)) as Structure[];
    const fromColumns = summaries(analysis.structures);
    expect(summaries(copies)).toEqual(fromColumns);
    // Worked out here from the records: each extreme at the first converged corner that reaches it, corners by key.
    copies.forEach((s, i) => {
      const converged = s.corners.filter((c) => c.converged);
      expect(converged.length).toBeGreaterThan(0);
      const at = (read: (c: (typeof converged)[number]) => number, better: (a: number, b: number) => boolean) => {
        const best = converged.reduce((b, c) => (better(read(c), read(b)) ? c : b));
        return { value: read(best), corner: cornerKey(best.label) };
      };
      expect(fromColumns[i]).toEqual({
        corners: s.corners.length,
        converged: converged.length,
        outputs: s.outputs.map((o) => ({
          device: o.device,
          minCurrent: at((c) => c.iout[o.device] ?? 0, (a, b) => a < b),
          maxCurrent: at((c) => c.iout[o.device] ?? 0, (a, b) => a > b),
          minHeadroom: at((c) => c.headroom[o.device] ?? 0, (a, b) => a < b),
          outOfRegionAt: converged.filter((c) => c.outOfRegion.includes(o.device)).map((c) => cornerKey(c.label)),
        })),
      });
    });
  });

  it('writes each structure as its own fields in their order, corners summarised, the estimate without its steps, however the entry is made', () => {
    // README, "JSON output": a structure's entry is its fields with `corners` replaced by `cornerSummary` (both with
    // --all-corners) and the estimate's `steps` left out (kept with --hand-analysis-steps); a field left undefined is
    // absent, as JSON.stringify leaves it (ECMA-262, SerializeJSONObject). Worked out here from each structure's own fields.
    const uri = '/bench/spread.cir';
    const analysis = analyseSession({ uri, text: NETLIST }, new MemoryWorkspace({ [uri]: NETLIST })).analysis;
    const plain = (v: unknown): unknown => (v === undefined ? undefined : JSON.parse(JSON.stringify(v)));
    const entries = (structures: Structure[], detail: { allCorners?: boolean; handAnalysisSteps?: boolean }): Written[] =>
      (JSON.parse(JSON.stringify(jsonReport([{ path: uri, absolute: uri, analysis: { ...analysis, structures } }] as never, detail))) as { files: { structures: Written[] }[] }).files[0]!.structures;
    // The analysed structures (fields in recognition's order), and copies with a field of their own after those, whose
    // entries the CLI makes another way (field by field).
    const reordered = analysis.structures.map((s) => {
      const copy: Record<string, unknown> = {};
      for (const k of Object.keys(s)) copy[k] = (s as unknown as Record<string, unknown>)[k];
      copy['note'] = 'copied';
      return copy as unknown as Structure;
    });
    let checked = 0;
    for (const structures of [analysis.structures, reordered]) {
      for (const detail of [{}, { allCorners: true, handAnalysisSteps: true }]) {
        const written = entries(structures, detail);
        structures.forEach((s, i) => {
          const fields = s as unknown as Record<string, unknown>;
          const entry = written[i]!;
          const names = Object.keys(s).filter((k) => fields[k] !== undefined).flatMap((k) => (k === 'corners' ? ('allCorners' in detail ? ['cornerSummary', 'corners'] : ['cornerSummary']) : [k]));
          expect(Object.keys(entry)).toEqual(names);
          for (const k of names) {
            if (k === 'cornerSummary' || k === 'variation') continue;
            if (k === 'estimate' && !('handAnalysisSteps' in detail)) {
              const { steps: _steps, ...rest } = s.estimate!;
              expect(Object.keys(entry[k] as object)).toEqual(Object.keys(plain(rest) as object));
              expect(entry[k]).toEqual(plain(rest));
            } else expect(entry[k]).toEqual(plain(fields[k]));
          }
          // The spread keeps its outputs' tables in their order (what each output keeps: the test above).
          if (s.variation) expect(Object.keys(entry['variation'] as object)).toEqual(Object.keys(s.variation).filter((k) => (s.variation as Record<string, unknown>)[k] !== undefined));
          checked++;
        });
      }
    }
    // Three structures (two mirrors and a VBE multiplier, whose estimate has other fields), two ways, two levels of detail.
    expect(checked).toBe(12);
  });
});

