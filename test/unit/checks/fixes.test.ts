// Every actionable finding has a fix that works: each fix kind applied, the netlist re-analysed, the finding gone and no new warning.

import { describe, expect, it } from 'vitest';
import { actionable, analyseWithFixes, applyAndRecheck, lineOf } from './netlist-check';

/** The bundled demo's situation, reduced: a 12 V NPN mirror whose status-lamp output saturates under 33 kΩ. */
const LAMP = `NPN mirror with a saturated lamp output
VCC vcc 0 12
RREF vcc ref 22k
Q1 ref ref 0 QSIG
Q2 exc ref 0 QSIG
RBRIDGE vcc exc 4.7k
Q4 lamp ref 0 QSIG
RLAMP vcc lamp 33k
.model QSIG npn (IS=2e-15 BF=180 VAF=90)
.end
`;

describe('mirror-output-out-of-region: the saturated output', () => {
  it('offers the load resistor, re-solved, with the current and headroom it gives (preferred)', () => {
    const a = analyseWithFixes(LAMP);
    const f = a.findings.find((x) => x.code === 'mirror-output-out-of-region')!;
    expect(lineOf(a, f)).toBe(7);
    expect(f.message).toMatch(/Keep V\(lamp\) ≥ 0\.9\d+ V \(the edge at 0\.6\d+ V plus the 0\.3 V margin\), i\.e\. RLAMP ≤ 2\d\.\d kΩ/);
    const [load, reference] = f.fixes!;
    expect(load.preferred).toBe(true);
    expect(load.title).toMatch(/^Set RLAMP to 2\dk \(E24\): Q4 → \d+ µA, headroom [\d.]+ V$/);
    expect(reference.title).toMatch(/^Set RREF to \d+k \(E24\): Q4 → \d+ µA, headroom [\d.]+ V; the other outputs move with it \(Q2 → \d+ µA\)$/);
    // Source: Ohm's law on the load — with the chosen RLAMP the lamp node sits IC·RLAMP below the 12 V rail, at least the margin beyond the base.
    const headroom = Number(/headroom ([\d.]+) V/.exec(load.title)![1]);
    expect(headroom).toBeGreaterThanOrEqual(0.3);
  });

  it('the load fix, applied, leaves the output active with its margin and raises nothing new', () => {
    const { after } = applyAndRecheck(LAMP, 'mirror-output-out-of-region');
    expect(after.findings.some((x) => x.code === 'mirror-headroom-low')).toBe(false);
    const q4 = after.operatingPoint!.devices.Q4;
    expect(q4.type === 'bjt' && q4.region).toBe('forward-active');
  });

  it('the reference-resistor fix, applied, does the same by lowering the current', () => {
    const { after, fixed } = applyAndRecheck(LAMP, 'mirror-output-out-of-region', (fixes) => fixes.find((f) => f.title.startsWith('Set RREF')));
    expect(fixed).toContain('RLAMP vcc lamp 33k');
    expect(after.structures[0]!.headroom['Q4']).toBeGreaterThanOrEqual(0.3);
  });

  it('an NMOS output in triode gets the same two fixes', () => {
    const text = `NMOS mirror output in triode
VDD vdd 0 3.3
RREF vdd g 20k
M1 g g 0 0 NM W=10u L=1u
M2 d g 0 0 NM W=10u L=1u
RL vdd d 100k
.model NM nmos (KP=100u VTO=0.5)
.end
`;
    const a = analyseWithFixes(text);
    const f = a.findings.find((x) => x.code === 'mirror-output-out-of-region')!;
    expect(f.fixes!.map((x) => x.title.split(' ')[1])).toEqual(['RL', 'RREF']);
    applyAndRecheck(text, 'mirror-output-out-of-region');
    applyAndRecheck(text, 'mirror-output-out-of-region', (fixes) => fixes[1]);
  });
});

describe('mirror-headroom-low', () => {
  it('an output just above its edge gets a load fix that restores the margin', () => {
    const text = LAMP.replace('RLAMP vcc lamp 33k', 'RLAMP vcc lamp 22k');
    const a = analyseWithFixes(text);
    expect(actionable(a).map((x) => x.code)).toEqual(['mirror-headroom-low']);
    const { after } = applyAndRecheck(text, 'mirror-headroom-low');
    expect(actionable(after)).toEqual([]);
  });
});

describe('target-missed: the resistor that really sets the current', () => {
  it('a target on an output load sizes the reference resistor, not the load', () => {
    const text = `Target on the output's load
VCC vcc 0 12
RREF vcc ref 10k
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 4.7k ; expect 1.5mA
.model QN npn (BF=150)
.end
`;
    const { fix } = applyAndRecheck(text, 'target-missed');
    expect(fix.title).toMatch(/^Set RREF to /);
  });

  it('a 1:1 source-degenerated mirror sizes its shared reference resistor, keeping the match', () => {
    const text = `1:1 source-degenerated NMOS mirror with a target
VDD vdd 0 5
RREF vdd a 20k
M1 a a s1 0 NM W=10u L=1u
RS1 s1 0 2k
M2 out a s2 0 NM W=10u L=1u
RS2 s2 0 2k
RL vdd out 5k
* expect M2 = 200uA
.model NM nmos (KP=100u VTO=0.6)
.end
`;
    const { fixed, fix } = applyAndRecheck(text, 'target-missed');
    expect(fix.title).toMatch(/^Set RREF to /);
    expect(fixed).toContain('RS1 s1 0 2k');
    expect(fixed).toContain('RS2 s2 0 2k');
  });

  it('a reference branch with a diode in series sizes the resistor of that branch', () => {
    const text = `Reference with a series diode
VCC vcc 0 12
RREF vcc a 10k
D1 a b DN
Q1 b b 0 QN
Q2 out b 0 QN ; expect 800uA
RL vcc out 4.7k
.model DN d (IS=1e-14)
.model QN npn (BF=150)
.end
`;
    const { fix } = applyAndRecheck(text, 'target-missed');
    expect(fix.title).toMatch(/^Set RREF to 13k \(E24\): Q2 → 8\d\d µA/);
  });

  it('a Widlar output sizes its own emitter resistor', () => {
    const text = `Widlar source with a target
VCC vcc 0 12
RREF vcc ref 22k
Q1 ref ref 0 QN
Q2 out ref e2 QN ; expect 50uA
RE e2 0 4.7k
RL vcc out 10k
.model QN npn (BF=150)
.end
`;
    const { fix } = applyAndRecheck(text, 'target-missed');
    expect(fix.title).toMatch(/^Set RE to /);
  });

  it('when no standard value can meet the target, says why instead of promising values', () => {
    const text = `Target beyond what the load lets the output carry
VCC vcc 0 5
RREF vcc ref 4.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN ; expect 20mA
RL vcc out 1k
.model QN npn (BF=150)
.end
`;
    const a = analyseWithFixes(text);
    const f = a.findings.find((x) => x.code === 'target-missed')!;
    expect(f.message).not.toMatch(/offered values/);
    const usable = (f.fixes ?? []).filter((x) => !x.disabled);
    const reason = (f.fixes ?? []).find((x) => x.disabled)?.disabled;
    expect(usable).toEqual([]);
    expect(reason).toMatch(/the nearest (it gets|reachable) is [\d.]+ mA/);
  });

  it('a target the output cannot reach before the current levels off gets the nearest reachable current, not values far off', () => {
    // 5 V across a 1 kΩ load caps the output near 5 mA (Ohm's law): 50 mA is out of reach whatever RREF is.
    const text = `Target past the load's limit
VCC vcc 0 5
RREF vcc ref 4.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN ; expect 50mA ±1%
RL vcc out 1k
.model QN npn (IS=1e-15 BF=100 VAF=80)
.end
`;
    const a = analyseWithFixes(text);
    const f = a.findings.find((x) => x.code === 'target-missed')!;
    expect((f.fixes ?? []).filter((x) => !x.disabled)).toEqual([]);
    const reason = (f.fixes ?? []).find((x) => x.disabled)?.disabled ?? '';
    const reach = /the nearest reachable is ([\d.]+) mA/.exec(reason);
    expect(reach, reason).not.toBeNull();
    expect(Number(reach![1])).toBeGreaterThan(4.5);
    expect(Number(reach![1])).toBeLessThanOrEqual(5);
  });

  it('the demo mirror: its target fixes say that the saturated output stays saturated', () => {
    const text = LAMP.replace('Q2 exc ref 0 QSIG', 'Q2 exc ref 0 QSIG ; expect 450uA ±2%');
    const a = analyseWithFixes(text);
    const f = a.findings.find((x) => x.code === 'target-missed')!;
    for (const fix of f.fixes!) expect(fix.title).toMatch(/Q4 stays saturated \(its extra base current lowers the other outputs: fix it first\)/);
  });
});

describe('models that differ only in IS', () => {
  it('are read as an intended ratio: a mirror-ratio note, no unmatched warning and no "use one model" fix', () => {
    const a = analyseWithFixes(`Mirror ratioed by IS
VCC vcc 0 5
RREF vcc a 4.3k
Q1 a a 0 QA
Q2 out a 0 QB
RL vcc out 1k
.model QA npn (IS=1e-16 BF=100)
.model QB npn (IS=2e-16 BF=100)
.end
`);
    expect(a.findings.some((f) => f.code === 'mirror-unmatched')).toBe(false);
    const ratio = a.findings.find((f) => f.code === 'mirror-ratio')!;
    expect(ratio.message).toMatch(/Q2 is a 1:2 output .* only in IS \(2e-16 vs 1e-16\), read as an intended ratio of 2/);
    expect(ratio.fixes ?? []).toEqual([]);
    // Source: the transport model (docs/DEVICE-MODELS.md, "Bipolar transistor") — at equal VBE, IC2/IC1 = IS2/IS1 = 2 (base currents aside).
    const q1 = a.operatingPoint!.devices.Q1;
    const q2 = a.operatingPoint!.devices.Q2;
    expect(q1.type === 'bjt' && q2.type === 'bjt' && q2.ic / q1.ic).toBeCloseTo(2, 1);
  });

  it('IS together with another difference stays unmatched, with its fix', () => {
    const a = analyseWithFixes(`Mirror with two unmatched models
VCC vcc 0 5
RREF vcc a 4.3k
Q1 a a 0 QA
Q2 out a 0 QB
RL vcc out 1k
.model QA npn (IS=1e-16 BF=100)
.model QB npn (IS=2e-16 BF=50)
.end
`);
    const f = a.findings.find((x) => x.code === 'mirror-unmatched')!;
    expect(f.message).toMatch(/differ in IS .*, BF/);
    expect(f.fixes?.[0]?.title).toMatch(/Use model QA/);
  });
});

describe('model and card fixes, applied', () => {
  it('a missing model: the default card of the kind the wiring points at', () => {
    const text = `PNP mirror whose model is missing
VCC vcc 0 5
Q1 a a vcc QPX
RREF a 0 10k
Q2 out a vcc QPX
RL out 0 1k
.end
`;
    const { fixed, after } = applyAndRecheck(text, 'model-not-found');
    expect(fixed).toMatch(/\.model QPX pnp \(IS=1e-16 BF=100 BR=1 NF=1 NR=1 XTI=3 EG=1\.11\)/);
    expect(after.structures.map((s) => s.technology)).toEqual(['pnp']);
  });

  it('an unmatched mirror: one model for every device', () => {
    const text = `Mirror with two models
VCC vcc 0 5
RREF vcc a 4.3k
Q1 a a 0 QA
Q2 out a 0 QB
RL vcc out 1k
.model QA npn (BF=100)
.model QB npn (BF=50)
.end
`;
    const { fixed } = applyAndRecheck(text, 'mirror-unmatched');
    expect(fixed).toContain('Q2 out a 0 QA');
  });
});
