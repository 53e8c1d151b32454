// Every device judged at the operating point: each wiring mistake gets its located finding naming the cause, and off devices get none.

import { describe, expect, it } from 'vitest';
import { dissipation, powerLimit } from '../../../shared-analysis/src/checks/devices/power';
import { resolveOptions } from '../../../shared-analysis/src/analysis';
import { check } from './netlist-check';

describe('device-reversed', () => {
  it('a PNP output with collector and emitter swapped is reverse-active and its emitter–base junction beyond breakdown', () => {
    const a = check(
      `PNP mirror output with collector and emitter swapped
VCC vcc 0 12
Q1 ref ref vcc QP
R1 ref 0 10k
Q2 vcc ref out QP
RL out 0 4.7k
.model QP pnp (IS=1e-15 BF=80 VAF=50)
.end
`,
      [
        { code: 'device-reversed', line: 5, says: [/Q2 \(PNP\) is reverse-active/, /VCB = \+0\.7\d* V/, /collector and emitter look swapped/, /collector sits on the rail vcc \(12 V\)/] },
        { code: 'junction-beyond-breakdown', line: 5, says: [/reverse-biased by 8\.\d+ V/, /VEB = −8\.\d+ V/, /5–6 V/] },
      ],
    );
    // Source: the transport model (docs/DEVICE-MODELS.md) — a reverse-active device's emitter is the terminal the current leaves by:
    // the load carries the current Q2 passes, V(out) = IE·RL with the emitter current flowing out into RL.
    const q2 = a.operatingPoint!.devices.Q2;
    expect(q2.type === 'bjt' && q2.region).toBe('reverse-active');
    expect(a.operatingPoint!.nodes.out).toBeCloseTo(-(q2.type === 'bjt' ? q2.ie : 0) * 4.7e3, 6);
  });

  it('every NPN reversed the same way points at the supply polarity instead', () => {
    check(
      `NPN pair on a supply written with the wrong sign
VCC vcc 0 -5
RB1 0 b1 100k
Q1 vcc b1 x1 QN
RX1 x1 0 1k
RB2 0 b2 100k
Q2 vcc b2 x2 QN
RX2 x2 0 1k
.model QN npn (BF=100 BR=2)
.end
`,
      [
        { code: 'device-reversed', line: 4, says: [/supply polarity looks reversed/] },
        { code: 'device-reversed', line: 7, says: [/supply polarity looks reversed/] },
      ],
    );
  });

  it('a discrete NMOS whose drain and source are exchanged conducts through its body diode', () => {
    check(
      `NMOS source follower with drain and source pins exchanged
VDD vdd 0 5
VG g 0 3
M1 s g vdd vdd NM W=10u L=1u
RS s 0 1k
.model NM nmos (KP=1m VTO=1)
.end
`,
      [{ code: 'device-reversed', line: 4, says: [/drain .* below its source/, /body diode/, /drain and source look swapped/] }],
    );
  });
});

describe('mirror-line-shunted', () => {
  it('an NMOS mirror output with drain and gate swapped takes the reference current and starves the reference', () => {
    const a = check(
      `NMOS mirror output with drain and gate swapped
VDD vdd 0 5
R1 vdd ref 10k
M1 ref ref 0 0 NM W=10u L=1u
M2 ref out 0 0 NM W=10u L=1u
RL vdd out 10k
.model NM nmos (KP=100u VTO=0.7)
.end
`,
      [{ code: 'mirror-line-shunted', line: 5, says: [/M2's drain sits on ref, the gate line of the diode-connected M1/, /M1 carries ≈ 0 A/, /drain and gate look swapped/] }],
    );
    // Source: Shichman–Hodges triode law (docs/DEVICE-MODELS.md) with VGS = 5 V, KCL at ref: (5 − V)/10 kΩ = β·((VGS − VTH)·V − V²/2).
    const beta = 100e-6 * 10;
    let v = 0.1;
    for (let k = 0; k < 50; k++) {
      const f = (5 - v) / 1e4 - beta * (4.3 * v - (v * v) / 2);
      const df = -1 / 1e4 - beta * (4.3 - v);
      v -= f / df;
    }
    expect(a.operatingPoint!.nodes.ref).toBeCloseTo(v, 6);
  });

  it('the same mistake with an NPN (collector and base swapped)', () => {
    check(
      `NPN mirror output with collector and base swapped
VCC vcc 0 5
R1 vcc ref 4.3k
Q1 ref ref 0 QN
Q2 ref out 0 QN
RL vcc out 10k
.model QN npn (BF=100)
.end
`,
      [{ code: 'mirror-line-shunted', line: 5, says: [/collector sits on ref/, /collector and base look swapped/] }],
    );
  });
});

describe('current-source-out-of-region', () => {
  it('a wide-swing NMOS cascode with too large a load: the cascode and the bottom device are in triode', () => {
    check(
      `Wide-swing NMOS cascode, output load too large
VDD vdd 0 3.3
IB1 vdd b1 20u
M5 b1 b1 0 0 NM W=2u L=1u
IREF vdd x 20u
M3 x b1 r 0 NM W=10u L=1u
M1 r x 0 0 NM W=10u L=1u
M4 out b1 o 0 NM W=10u L=1u
M2 o x 0 0 NM W=10u L=1u
RL vdd out 200k
.model NM nmos (KP=100u VTO=0.5)
.end
`,
      // Recognised as a wide-swing cascode mirror (structures/kinds/wide-swing-cascode.ts): the output is judged as a mirror output.
      [{ code: 'mirror-output-out-of-region', line: 8, says: [/M4 \(output of the wide-swing cascode mirror on M1\) is in triode/, /RL ≤ /] }],
    );
  });

  it('the same cascode with a load it can drive raises nothing', () => {
    check(
      `Wide-swing NMOS cascode with a 20 kΩ load
VDD vdd 0 3.3
IB1 vdd b1 20u
M5 b1 b1 0 0 NM W=2u L=1u
IREF vdd x 20u
M3 x b1 r 0 NM W=10u L=1u
M1 r x 0 0 NM W=10u L=1u
M4 out b1 o 0 NM W=10u L=1u
M2 o x 0 0 NM W=10u L=1u
RL vdd out 20k
.model NM nmos (KP=100u VTO=0.5)
.end
`,
      [],
    );
  });

  it('a BJT sink with its base at a bias voltage saturates under a large collector resistor', () => {
    check(
      `NPN sink biased by a source, collector resistor too large
VCC vcc 0 5
VB b 0 1.2
Q1 out b e QN
RE e 0 500
RC vcc out 10k
.model QN npn (BF=100)
.end
`,
      [{ code: 'current-source-out-of-region', line: 4, says: [/held at the bias voltage b = 1\.2 V/, /saturated/, /VBC = \+/] }],
    );
  });

  it('a saturated switch (base driven through a resistor from a supply) is not a current source', () => {
    check(
      `NPN switch, fully on
VCC vcc 0 5
VIN in 0 5
RB in b 10k
Q1 lamp b 0 QN
RLAMP vcc lamp 1k
.model QN npn (BF=100)
.end
`,
      [],
    );
  });
});

describe('branch-blocked', () => {
  it('a diode in series with the reference resistor, written backwards', () => {
    check(
      `Series diode inserted backwards
VCC vcc 0 12
R1 vcc a 10k
D1 0 a DN
.model DN d (IS=1e-14)
.end
`,
      [{ code: 'branch-blocked', line: 4, says: [/D1 does not conduct \(it is reverse-biased, VD = −12 V\)/, /0 \(≈ 0 V\) – D1 – R1 – vcc \(12 V\)/, /anode and cathode look swapped/] }],
    );
  });

  it('an NMOS sink whose gate line carries nothing leaves its load branch dead', () => {
    check(
      `NMOS sink whose gate bias resistor to the supply was left out
VDD vdd 0 5
M1 d g 0 0 NM W=10u L=1u
RG g 0 100k
RL vdd d 10k
.model NM nmos (KP=100u VTO=0.7)
.end
`,
      [{ code: 'branch-blocked', line: 3, says: [/M1 does not conduct \(VGS = ≈ 0 V, below its threshold of 0\.7 V\)/, /vdd \(5 V\) – RL – M1 – 0 \(≈ 0 V\)/, /Check what drives its gate g/] }],
    );
  });

  it('a switch held off by a logic-level source is off on purpose', () => {
    check(
      `NMOS switch held off
VDD vdd 0 5
VEN en 0 0
M1 d en 0 0 NM W=10u L=1u
RL vdd d 10k
.model NM nmos (KP=100u VTO=0.7)
.end
`,
      [],
    );
  });

  it('a diode clamp that is reverse-biased in normal use is left alone', () => {
    check(
      `Resistor divider with a clamp diode to the supply
VCC vcc 0 5
R1 vcc mid 10k
R2 mid 0 10k
DCL mid vcc DN
.model DN d
.end
`,
      [],
    );
  });
});

describe('junction-beyond-breakdown', () => {
  it('a diode reverse-biased to the BV of its model sits in breakdown, which is solved: no finding', () => {
    const a = check(
      `Diode reverse-biased past its rating
VCC vcc 0 30
R1 vcc k 10k
D1 0 k DZ
R2 k 0 10k
.model DZ d (IS=1e-14 BV=10)
.end
`,
      [],
    );
    // Source: docs/DEVICE-MODELS.md breakdown term — the zener holds about BV and carries the rest of the divider's current.
    const d1 = a.operatingPoint!.devices.D1;
    expect(d1.type === 'diode' && d1.region).toBe('breakdown');
    expect(a.operatingPoint!.nodes.k).toBeCloseTo(10, 0);
  });

  it('an emitter–base junction held 5 V or less in reverse is within its rating', () => {
    check(
      `Emitter follower switched off, emitter held 4 V above its base
VCC vcc 0 10
VB b 0 0
VE e 0 4
RE e x 1k
Q1 vcc b x QN
RX x 0 1meg
.model QN npn
.end
`,
      [],
    );
  });
});

describe('power-over-rating', () => {
  it('a resistor over the 0.25 W default and a transistor over its model rating, each located with the numbers', () => {
    const a = check(
      `Power check
VCC vcc 0 12
R1 vcc 0 330
RB vcc b 4.7k
Q1 vcc b e QP1
RE e 0 100 RATEDPOWER=1
.model QP1 npn (BF=100 RATEDPOWER=0.2)
.end
`,
      [
        { code: 'power-over-rating', line: 3, says: [/R1 dissipates 436 mW, 1\.75× its limit of 250 mW \(the default for an ordinary resistor/] },
        { code: 'power-over-rating', line: 5, says: [/Q1 dissipates .* its limit of 200 mW \(the RATEDPOWER of its model\)/] },
      ],
    );
    // Source: Joule's law P = V²/R for R1 across the 12 V rail.
    const f = a.findings.find((x) => x.code === 'power-over-rating' && x.data?.['device'] === 'R1')!;
    expect(f.data!['powerW']).toBeCloseTo(144 / 330, 9);
    // The emitter resistor's own RATEDPOWER=1 lifts its limit above its dissipation: no finding on it.
    const re = a.operatingPoint!.devices.RE;
    expect(dissipation(re)).toBeGreaterThan(0.25);
    expect(powerLimit(a.circuit!.elements.find((e) => e.name === 'RE')!, resolveOptions())).toEqual({ watts: 1, from: 'instance' });
    // Source: conservation of energy — the supply delivers what the elements absorb.
    const total = Object.values(a.operatingPoint!.devices).reduce((sum, r) => sum + (dissipation(r) ?? 0), 0);
    expect(Math.abs(total)).toBeLessThan(1e-9);
  });
});

describe('JFET gate bias', () => {
  it('warns when a gate junction conducts forward, on the JFET line', () => {
    // An N-channel JFET with its gate pulled to the supply: the gate-source junction conducts through RS.
    check(`JFET gate pulled up\nVDD vdd 0 12\nRD vdd d 2.2k\nJ1 d vdd s JN\nRS s 0 1k\n.model JN NJF (VTO=-2 BETA=1m)\n.end\n`, [
      { code: 'jfet-gate-forward', line: 4, says: [/gate-source junction is forward-biased/, /N-channel/] },
    ]);
  });
});
