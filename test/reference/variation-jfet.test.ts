// The spread of a JFET self-biased current source against the closed form of the self-bias quadratic, and the JFET's spread sources (part-to-part pinch-off, mismatch of matched devices).

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../shared-analysis/src/circuit';
import { analyse } from '../../shared-analysis/src/service';
import type { Structure } from '../../shared-analysis/src/structures/types';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { MISMATCH_DEFAULTS, toleranceSources } from '../../shared-analysis/src/variation/sources';

/**
 * Drain current of a self-biased n-channel JFET (gate at 0 V, RS from source to 0 V), from the
 * square law ID = BETA·(VGS − VTO)² and VGS = −ID·RS (W. Shockley, Proc. IRE 40, 1952; the
 * self-bias quadratic as in Boylestad and Nashelsky, Electronic Devices and Circuit Theory, ch. 7,
 * from memory): with u = VGS − VTO, BETA·RS·u² + u + VTO = 0, so u = (−1 + √(1 − 4·BETA·RS·VTO))/(2·BETA·RS).
 */
function selfBiasCurrent(beta: number, vto: number, rs: number): number {
  const u = (-1 + Math.sqrt(1 - 4 * beta * rs * vto)) / (2 * beta * rs);
  return beta * u * u;
}

const netlist = (model: string) => `JFET self-biased current source
VDD vdd 0 15 ; tol 0.1%
RD vdd d 1k ; tol 0.1%
J1 d 0 s nj
RS s 0 1k ; tol 1%
.model nj njf (VTO=-2 BETA=1m IS=1e-14 ${model})
.end
`;

function spreadOfJ1(model: string) {
  const a = analyse({ uri: 'mem://jfet.cir', text: netlist(model) }, new MemoryWorkspace({}), { corners: { enabled: false } });
  expect(a.structures.map((s) => s.kind)).toEqual(['jfet-self-biased-source']);
  return { v: a.variation!.outputs.find((o) => o.element === 'J1' && o.key.includes(' out '))!, sources: a.variation!.sources };
}

describe('a JFET self-biased source', () => {
  it('spreads mostly with its pinch-off voltage, each contributor as the closed form gives it', () => {
    const { v, sources } = spreadOfJ1('');
    const beta = 1e-3;
    const vto = -2;
    const rs = 1e3;
    // The nominal current: BETA·RS = 1 gives u = 1 V, ID = 1 mA.
    expect(v.nominal).toBeCloseTo(selfBiasCurrent(beta, vto, rs), 9);
    // Each contributor: |dID/dp| of the closed form (central differences) times the source's σ.
    const slope = (f: (h: number) => number, h: number) => (f(h) - f(-h)) / (2 * h);
    const sigmaVto = MISMATCH_DEFAULTS.SPREADVTO * Math.abs(vto);
    const byVto = Math.abs(slope((h) => selfBiasCurrent(beta, vto + h, rs), 1e-5)) * sigmaVto;
    const byRs = Math.abs(slope((h) => selfBiasCurrent(beta, vto, rs + h), 1e-3)) * ((0.01 * rs) / 3);
    const named = (name: string) => v.contributors.find((c) => c.name === name)!;
    expect(named('J1 VTO spread').sigma).toBeCloseTo(byVto, 9);
    expect(Math.abs(named('J1 VTO spread').sigma / byVto - 1)).toBeLessThan(1e-4);
    expect(Math.abs(named('RS').sigma / byRs - 1)).toBeLessThan(1e-4);
    // Dominated by the pinch-off spread, as practice expects of an untrimmed discrete JFET source.
    expect(v.contributors[0].name).toBe('J1 VTO spread');
    expect(v.contributors[0].share).toBeGreaterThan(0.99);
    expect(sources.find((s) => s.name === 'J1 VTO spread')).toMatchObject({ kind: 'part spread', from: 'default', figure: sigmaVto });
  });

  it('takes the part-to-part spread from SPREADVTO on its model card', () => {
    const { v, sources } = spreadOfJ1('SPREADVTO=0.01');
    expect(sources.find((s) => s.name === 'J1 VTO spread')).toMatchObject({ from: 'model', figure: 0.02 });
    // σ scales with the figure: 0.01·2 V instead of 0.25·2 V.
    const { v: wide } = spreadOfJ1('');
    const part = (x: typeof v) => x.contributors.find((c) => c.name === 'J1 VTO spread')!.sigma;
    expect(part(v) / part(wide)).toBeCloseTo(0.01 / 0.25, 9);
  });
});

describe('the yield of a JFET source with a target', () => {
  it('names the pinch-off spread and says what narrows it, with no edit (a larger device does not)', () => {
    const text = netlist('').replace('J1 d 0 s nj', 'J1 d 0 s nj ; expect 1mA ±10%');
    const a = analyse({ uri: 'mem://jfet.cir', text }, new MemoryWorkspace({}), { corners: { enabled: false } });
    const f = a.findings.find((x) => x.code === 'target-yield-low')!;
    expect(f.message).toMatch(/largest contributor is J1 VTO spread/);
    expect(f.message).toMatch(/select the parts by their pinch-off voltage or IDSS, or trim the resistor/);
    expect(f.fixes ?? []).toEqual([]);
  });
});

describe('JFETs meant to match', () => {
  it('carry a VTO and a BETA mismatch per device of MATCH/√(2·area·M) besides their own spread (Pelgrom area law, as for the other kinds)', () => {
    const model = { name: 'nj', kind: 'njf' as const, params: { VTO: -2, BETA: 1e-3, MATCHVTO: 4e-3 }, given: ['VTO', 'BETA', 'MATCHVTO'], origin: { uri: 'mem://x', span: { start: 0, end: 0 }, instances: [] } };
    const jfet = (name: string, m: number) => ({ kind: 'J' as const, name, nodes: [1, 0, 2], model, area: 2, m, origin: model.origin });
    const circuit = { title: 't', nodes: ['0', 'a', 'b'], elements: [jfet('J1', 1), jfet('J2', 4)], models: { nj: model }, temperatureC: 27, tnomC: 27, params: {} } as unknown as Circuit;
    const pair = { id: 'pair', devices: ['J1', 'J2'] } as unknown as Structure;
    const sources = toleranceSources(circuit, [pair], new Map(), { resistorTolerance: 0.05, resistorFrom: 'series', supplyTolerance: 0.05 }, 27);
    const of = (label: string) => sources.find((s) => s.label === label && s.aspect !== undefined);
    expect(of('J1 VTO')!.sigma).toBeCloseTo(4e-3 / Math.sqrt(2 * 2 * 1), 15);
    expect(of('J2 VTO')!.sigma).toBeCloseTo(4e-3 / Math.sqrt(2 * 2 * 4), 15);
    expect(of('J1 BETA')!.sigma).toBeCloseTo((MISMATCH_DEFAULTS.MATCHBETA / Math.sqrt(4)) * 1e-3, 15);
    expect(of('J1 VTO')!.group).toBe(of('J2 VTO')!.group);
    expect(sources.filter((s) => s.label.endsWith('VTO spread')).map((s) => s.element)).toEqual(['J1', 'J2']);
  });
});
