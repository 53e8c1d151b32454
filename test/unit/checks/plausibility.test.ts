// Plausibility: an unpowered circuit, a small-signal part carrying amperes, a node far outside the rails, misspelt cards and model names — each located, naming the likely slip, with a fix that works.

import { describe, expect, it } from 'vitest';
import { actionable, analyseNetlist, applyAndRecheck, check, lineOf } from './netlist-check';
import { analyseSession } from '../../../shared-analysis/src/service';
import { checkPlausibility } from '../../../shared-analysis/src/checks/plausibility';
import { pointVectors } from '../../../shared-analysis/src/solve/point';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

const ONE_M = `Reference resistor written 1M
VCC vcc 0 12
RREF vcc ref 1M
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 10k
.model QN npn (IS=1e-16 BF=100)
.end
`;

describe('current-implausible', () => {
  it('a reference resistor written 1M (1 mΩ) gives kiloamperes, and the finding names the suffix', () => {
    const a = analyseNetlist(ONE_M);
    const f = a.findings.filter((x) => x.code === 'current-implausible');
    expect(f.map((x) => lineOf(a, x))).toEqual([4, 5]);
    expect(f[0].message).toMatch(/Q1 carries [\d.]+ kA/);
    expect(f[0].message).toMatch(/RREF = 1M is 1 mΩ: a netlist reads M as milli; 1MEG is 1 MΩ; did you mean 1meg\?/);
    expect(f[0].related?.[0]?.message).toMatch(/RREF/);
    // The power findings of the same devices are not repeated beside it.
    expect(a.findings.some((x) => x.code === 'power-over-rating' && (x.data?.['device'] === 'Q1' || x.data?.['device'] === 'Q2'))).toBe(false);
  });

  it('its fix writes 1meg, verified by a re-solve, and the re-analysed circuit is plausible', () => {
    const { fixed, fix } = applyAndRecheck(ONE_M, 'current-implausible');
    expect(fixed).toContain('RREF vcc ref 1meg');
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IREF = (VCC − VBE)/R ≈ (12 − 0.6)/1 MΩ ≈ 11 µA.
    expect(fix.title).toMatch(/Write 1meg for RREF \(1 MΩ\): Q1 then carries 1\d\.\d µA/);
  });

  it('a part with its own RATEDPOWER may carry amperes', () => {
    const a = analyseNetlist(`Power transistor on purpose
VCC vcc 0 12
RB vcc b 100
Q1 vcc b e QPWR
RE e 0 5 RATEDPOWER=50
.model QPWR npn (BF=50 RATEDPOWER=40)
.end
`);
    expect(a.findings.filter((x) => x.code === 'current-implausible')).toEqual([]);
  });
});

describe('node-outside-rails', () => {
  it('a current source written without a suffix drives a node to kilovolts', () => {
    const text = `Bias current written without its suffix
VCC vcc 0 5
IB vcc b 1
RB b 0 2k
.end
`;
    check(text, [{ code: 'node-outside-rails', line: 3, says: [/Node b sits at 2 kV, far outside the rails \(≈ 0 V to 5 V\)/, /IB = 1 has no suffix, so it is 1 A; did you mean 1m\?/] }]);
    const { fixed, fix } = applyAndRecheck(text, 'node-outside-rails');
    expect(fixed).toContain('IB vcc b 1m');
    // Source: Ohm's law — 1 mA pushed into node b through 2 kΩ to ground gives 2 V.
    expect(fix.title).toMatch(/b then sits at 2 V/);
  });

  it("reads the same nodes from the solver's vectors as from a copy of the point that has only its tables", () => {
    const text = `Two nodes pushed out, read by index and by name
VCC vcc 0 5
IB vcc b 1
RB b 0 2k
IC vcc c 2
RC c 0 1k
RD vcc d 1k
RE d 0 1k
.end
`;
    const uri = '/t/vectors.cir';
    const session = analyseSession({ uri, text }, new MemoryWorkspace({ [uri]: text }), { corners: { enabled: false } });
    const op = session.nominal!.op;
    const ctx = { circuit: session.analysis.circuit!, documents: session.analysis.documents, options: session.analysis.options };
    // The independent reading: a JSON copy of the point, which carries the name-keyed tables and no vectors.
    const copy = JSON.parse(JSON.stringify(op)) as typeof op;
    expect(pointVectors(op)).toBeDefined();
    expect(pointVectors(copy)).toBeUndefined();
    const byIndex = checkPlausibility({ ...ctx, op });
    expect(byIndex.filter((f) => f.code === 'node-outside-rails').map((f) => f.data?.['node'])).toEqual(['b', 'c']);
    expect(byIndex).toEqual(checkPlausibility({ ...ctx, op: copy }));
  });
});

describe('circuit-not-powered', () => {
  it('a supply on the title line: one warning on line 1 naming it', () => {
    check(
      `VCC vcc 0 12
RREF vcc ref 10k
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 1k
.model QN npn
.end
`,
      [{ code: 'circuit-not-powered', line: 1, says: [/no voltage or current source/, /`VCC vcc 0 12`, reads like a source/] }],
    );
  });

  it('every source at 0 V: one warning, and no device is called saturated on noise', () => {
    const a = check(
      `Mirror with its supply at zero
VCC vcc 0 0
RREF vcc ref 10k
Q1 ref ref 0 QN
Q2 out ref 0 QN 2
RL vcc out 1k
.model QN npn (IS=1e-16 BF=100 VAF=50)
.end
`,
      [
        { code: 'circuit-not-powered', line: 2, says: [/every source is 0 \(VCC\)/] },
        { code: 'reference-starved', line: 3, says: [/≈ 0 V across RREF/] },
      ],
    );
    expect(a.findings.some((f) => f.code === 'mirror-ratio' || f.code === 'mirror-output-out-of-region')).toBe(false);
    for (const f of a.findings) expect(f.message).not.toMatch(/fV|aV|fA\b|e-\d/);
  });
});

describe('misspelt cards and model names', () => {
  it('`.modle` gets "did you mean .model?" and a fix that writes it', () => {
    const text = `Misspelt model card
VCC vcc 0 5
RREF vcc a 4.3k
Q1 a a 0 QN
Q2 out a 0 QN
RL vcc out 1k
.modle QN npn (BF=100)
.end
`;
    const a = analyseNetlist(text);
    const card = a.findings.find((f) => f.code === 'dot-card-unknown')!;
    expect(lineOf(a, card)).toBe(7);
    expect(card.message).toMatch(/did you mean \.model\?/);
    // The unknown model is traced to the misspelt card, and its first fix corrects that card.
    const missing = a.findings.find((f) => f.code === 'model-not-found')!;
    expect(missing.message).toMatch(/`\.modle QN` card on line 7 looks like its definition: did you mean \.model\?/);
    expect(missing.fixes?.[0]?.title).toMatch(/Correct `\.modle` to `\.model` on line 7/);
    const { after } = applyAndRecheck(text, 'dot-card-unknown');
    expect(actionable(after)).toEqual([]);
    expect(after.structures.map((s) => s.kind)).toEqual(['simple-mirror']);
  });

  it('a model name one letter off gets "did you mean" and that rename as its first fix', () => {
    const text = `Model name typo
VCC vcc 0 5
RREF vcc a 4.3k
Q1 a a 0 QNPN1
Q2 out a 0 QNPM1
RL vcc out 1k
.model QNPN1 npn (BF=100)
.end
`;
    const a = analyseNetlist(text);
    const f = a.findings.find((x) => x.code === 'model-not-found')!;
    expect(lineOf(a, f)).toBe(5);
    expect(f.message).toMatch(/did you mean `QNPN1`\?/);
    expect(f.fixes?.[0]).toMatchObject({ title: 'Use model QNPN1 (did you mean QNPN1?)', preferred: true });
    const { fixed, after } = applyAndRecheck(text, 'model-not-found');
    expect(fixed).toContain('Q2 out a 0 QNPN1');
    expect(actionable(after)).toEqual([]);
  });

  it('a missing model is offered first as the kind its wiring points at', () => {
    const a = analyseNetlist(`PNP whose model is missing
VCC vcc 0 5
Q3 x x vcc QPX
RX x 0 10k
.end
`);
    const f = a.findings.find((x) => x.code === 'model-not-found')!;
    // Its emitter sits on the highest rail: a PNP.
    expect(f.fixes?.[0]?.title).toBe('Add a .model card for QPX as a PNP transistor with default parameters');
  });
});
