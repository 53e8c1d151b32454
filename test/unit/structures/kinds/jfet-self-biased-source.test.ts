// The JFET self-biased current source's tables: a depletion JFET whose source resistor returns to its own gate node, N- and P-channel.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../../shared-analysis/src/circuit';
import { analyse } from '../../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../../shared-analysis/src/types';
import { CircuitBuilder } from '../build';
import { kindTests, type MatchCase } from './tester';

type Wiring =
  | 'gate-on-rail'
  | 'gate-resistor'
  | 'two-terminal'
  | 'divider-bias'
  | 'fixed-bias'
  | 'second-source-resistor'
  | 'gate-on-source'
  | 'floating-return'
  | 'depletion-mos';

/**
 * One source on a 15 V supply (invented values): an N-channel JFET (VTO = −2 V, BETA = 1 mA/V², so
 * IDSS = 4 mA) with RS = 500 Ω and a 3.3 kΩ drain load, or the P-channel mirror image hanging from
 * the supply. `lambda` and `area` change the device; the wiring picks the case.
 */
function source(channel: 'njf' | 'pjf', wiring: Wiring, o: { lambda?: number; area?: number } = {}): Circuit {
  const up = channel === 'njf';
  const rail = up ? '0' : 'vcc';
  const far = up ? 'vcc' : '0';
  const b = new CircuitBuilder().v('VCC', 'vcc', '0', 15);
  b.model('jx', channel, { VTO: -2, BETA: 1e-3, ...(o.lambda ? { LAMBDA: o.lambda } : {}) });
  const dev = { area: o.area ?? 1 };
  switch (wiring) {
    case 'gate-on-rail':
      b.jfet('J1', 'd', rail, 's', 'jx', dev).r('RS', 's', rail, 500).r('RL', far, 'd', 3.3e3);
      break;
    case 'gate-resistor':
      // The textbook self-bias: the gate returned to the rail through a large resistor that carries only leakage.
      b.jfet('J1', 'd', 'g', 's', 'jx', dev).r('RG', 'g', rail, 1e6).r('RS', 's', rail, 500).r('RL', far, 'd', 3.3e3).c('CIN', 'in', 'g', 1e-7);
      break;
    case 'two-terminal':
      // A two-terminal current limiter in series with its load: the gate node is not a rail.
      b.jfet('J1', far, 'k', 's', 'jx', dev).r('RS', 's', 'k', 500).r('RL', 'k', rail, 3.3e3);
      break;
    case 'divider-bias':
      // Voltage-divider bias: the gate sits on a divider tap, not on the source resistor's far end.
      b.jfet('J1', 'd', 'g', 's', 'jx', dev).r('RG1', far, 'g', 1e6).r('RG2', 'g', rail, 200e3).r('RS', 's', rail, 2.2e3).r('RL', far, 'd', 3.3e3);
      break;
    case 'fixed-bias':
      // Fixed bias: the gate held by its own voltage source, the source resistor to the rail.
      b.v('VG', 'g', rail, up ? 1 : -1).jfet('J1', 'd', 'g', 's', 'jx', dev).r('RS', 's', rail, 1e3).r('RL', far, 'd', 3.3e3);
      break;
    case 'second-source-resistor':
      b.jfet('J1', 'd', rail, 's', 'jx', dev).r('RS', 's', rail, 500).r('RX', 's', far, 10e3).r('RL', far, 'd', 3.3e3);
      break;
    case 'gate-on-source':
      // The gate tied straight to the source: an IDSS source with nothing to self-bias it.
      b.jfet('J1', 'd', rail, rail, 'jx', dev).r('RL', far, 'd', 3.3e3);
      break;
    case 'floating-return':
      // RS's far end carries only RS and the gate: the current has no way back.
      b.jfet('J1', far, 'g', 's', 'jx', dev).r('RS', 's', 'g', 500).r('RL', 'd', rail, 3.3e3).r('RX', far, 'd', 1e3);
      break;
    case 'depletion-mos':
      // The same wiring with a depletion MOSFET: not a JFET.
      b.model('dm', up ? 'nmos' : 'pmos', { VTO: up ? -2 : 2, KP: 2e-4 })
        .mos('J1', 'd', rail, 's', rail, 'dm')
        .r('RS', 's', rail, 500)
        .r('RL', far, 'd', 3.3e3);
      break;
  }
  return b.build();
}

const CHANNELS = ['njf', 'pjf'] as const;
const words = { njf: 'N-channel', pjf: 'P-channel' };

const matches: MatchCase[] = CHANNELS.flatMap((ch) => [
  { wiring: 'gate-on-rail' as const, what: 'gate on the rail, RS to the rail' },
  { wiring: 'gate-resistor' as const, what: 'gate returned through a 1 MΩ gate resistor (textbook self-bias)' },
  { wiring: 'two-terminal' as const, what: 'two-terminal current limiter in series with its load (gate node not a rail)' },
].map(({ wiring, what }) => ({
  name: `${words[ch]}: ${what}`,
  circuit: () => source(ch, wiring),
  technology: ch,
  reference: 'J1',
  devices: ['J1'],
  outputs: [{ device: 'J1', ratio: 1 }],
})));
for (const ch of CHANNELS) {
  matches.push({
    name: `${words[ch]}: area 2 and channel-length modulation (λ = 0.02/V)`,
    circuit: () => source(ch, 'gate-on-rail', { lambda: 0.02, area: 2 }),
    technology: ch,
    reference: 'J1',
    devices: ['J1'],
    outputs: [{ device: 'J1', ratio: 1 }],
  });
}

kindTests({
  kind: 'jfet-self-biased-source',
  matches,
  rejects: [
    { name: 'voltage-divider bias (the gate on a divider tap, not on RS’s far end)', circuit: () => source('njf', 'divider-bias') },
    { name: 'fixed bias (the gate held by its own source)', circuit: () => source('njf', 'fixed-bias') },
    { name: 'a second resistor on the source node', circuit: () => source('pjf', 'second-source-resistor') },
    { name: 'the gate tied straight to the source (no source resistor)', circuit: () => source('njf', 'gate-on-source') },
    { name: "RS's far end leads nowhere but the gate", circuit: () => source('njf', 'floating-return') },
    { name: 'the same wiring with a depletion NMOS', circuit: () => source('njf', 'depletion-mos') },
    { name: 'the same wiring with a depletion PMOS', circuit: () => source('pjf', 'depletion-mos') },
  ],
  yields: [],
});

describe('jfet-self-biased-source: its own check and a healthy source', () => {
  /** Analyses netlist text the way the hosts do and returns its findings. */
  function findings(text: string) {
    return analyse({ uri: 't.cir', text }, new MemoryWorkspace({ 't.cir': text }), {}).findings;
  }
  const P_SOURCE = (vto: string) => `an invented P-channel current source
VCC vcc 0 15
J1 d vcc s jp
RS vcc s 500
RL d 0 3.3k
.model jp pjf (vto=${vto} beta=1m)
.end
`;

  it('a healthy P-channel source gets no warning at nominal or at the corners', () => {
    // IDSS = 4 mA, ID = 1.53 mA by the self-bias quadratic; 1.53 mA × 3.3 kΩ = 5 V keeps the drain 10 V from the supply, far past |VP| = 2 V.
    expect(findings(P_SOURCE('-2')).filter((f) => f.severity !== 'info').map((f) => f.code)).toEqual([]);
  });

  it("a P-channel model written with the data sheet's positive VGS(off) is flagged on the JFET: the self-bias can never open it", () => {
    // docs/DEVICE-MODELS.md: a depletion PJF is written with a negative VTO; with VTO = +2 V, VGS = −ID·RS ≤ 0 < VTO keeps the channel off.
    const text = P_SOURCE('2');
    const f = findings(text).filter((x) => x.code === 'jfet-source-pinched-off');
    expect(f).toHaveLength(1);
    expect(text.slice(f[0].span.start, f[0].span.end)).toMatch(/^J1 d vcc s jp/);
    expect(f[0].message).toMatch(/VTO = 2 V/);
    expect(f[0].message).toMatch(/negative VTO/);
  });
});
