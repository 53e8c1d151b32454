// The engine's columns made outside V8's external-memory count (shared-analysis/src/columns.ts): what backs them,
// that an analysis on them is the same to the last bit, and the V8 behaviour the choice rests on.

import { spawnSync } from 'node:child_process';
import { afterEach, describe, expect, it } from 'vitest';
import { COUNTED_BELOW_BYTES, float64Column, float64ColumnOf, int32Column, int8Column, setColumnsUncounted, uint8Column } from '../../../shared-analysis/src/columns';
import { addCorners, analyseSession } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

afterEach(() => setColumnsUncounted(false));

describe('columns', () => {
  it('are ordinary by default, whatever their size', () => {
    for (const c of [float64Column(1 << 16), int32Column(1 << 16), uint8Column(1 << 17), int8Column(3)]) {
      expect(c.buffer).toBeInstanceOf(ArrayBuffer);
      expect(c.every((v) => v === 0)).toBe(true);
    }
  });

  it('are made on shared memory from COUNTED_BELOW_BYTES on when the switch is on, and hold zeros', () => {
    setColumnsUncounted(true);
    const n = COUNTED_BELOW_BYTES / 8;
    expect(float64Column(n).buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(float64Column(n - 1).buffer).toBeInstanceOf(ArrayBuffer);
    expect(int32Column(2 * n).buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(uint8Column(8 * n).buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(int8Column(8 * n - 1).buffer).toBeInstanceOf(ArrayBuffer);
    const c = float64Column(n);
    expect(c.length).toBe(n);
    expect(c.every((v) => v === 0)).toBe(true);
    // `slice` of a shared column is an ordinary copy (ECMAScript's species constructor with a length), `subarray` a view.
    expect(c.slice(0, 4).buffer).toBeInstanceOf(ArrayBuffer);
    expect(c.subarray(0, 4).buffer).toBe(c.buffer);
  });

  it('copy their source exactly, typed or not', () => {
    setColumnsUncounted(true, 0);
    const values = [0, -0, 1.5, Number.MIN_VALUE, -1e308, 2 ** 53 + 2];
    const a = float64ColumnOf(values);
    const b = float64ColumnOf(Float64Array.from(values));
    expect(a.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(Object.is(a[1], -0) && Object.is(b[1], -0)).toBe(true);
    expect([...a]).toEqual(values);
    expect([...b]).toEqual(values);
  });
});

/** A bias array: reference resistor, diode-connected NPN, output NPN and load per cell, and a PMOS mirror pair. */
function netlist(cells: number): string {
  const L = ['columns test array', 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)', '.model MP PMOS (VTO=-0.7 KP=50u LAMBDA=0.02)'];
  for (let i = 0; i < cells; i++) {
    L.push(`RR${i} vcc r${i} ${10 + (i % 7)}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} vcc o${i} ${1 + (i % 3)}k`);
  }
  L.push('M1 g g vcc vcc MP W=10u L=2u', 'M2 d g vcc vcc MP W=20u L=2u', 'RG g 0 40k', 'RD d 0 5k', '.end', '');
  return L.join('\n');
}

/** The analysis after its corner phase, as JSON without the stage timings (the only figures that differ by run). */
function analysedJson(text: string): string {
  const uri = 'file:///columns.cir';
  const s = analyseSession({ uri, text }, new MemoryWorkspace({ [uri]: text }), {});
  const findings = addCorners(s.analysis, { solver: s.solver!, nominal: s.nominal! });
  return JSON.stringify({ analysis: s.analysis, findings }, (k, v) => (k === 'timings' || k === 'ms' ? undefined : v));
}

describe('an analysis on columns outside the count', () => {
  it('is the same text as on ordinary columns (every column shared)', () => {
    const text = netlist(60);
    const ordinary = analysedJson(text);
    setColumnsUncounted(true, 0);
    // Count the shared buffers made, so the comparison is known to have run on them (solver, devices, corners).
    let made = 0;
    const Real = globalThis.SharedArrayBuffer;
    globalThis.SharedArrayBuffer = class extends Real {
      constructor(bytes: number) {
        super(bytes);
        made++;
      }
    } as SharedArrayBufferConstructor;
    let shared: string;
    try {
      shared = analysedJson(text);
    } finally {
      globalThis.SharedArrayBuffer = Real;
    }
    expect(made).toBeGreaterThan(30);
    // Not a vacuous comparison: the analysis has its structures, corners and spread.
    expect(ordinary.includes('"kind":"simple-mirror"'), 'structures recognised').toBe(true);
    expect(ordinary.includes('"corners":[{"label":'), 'corner figures present').toBe(true);
    expect(ordinary.includes('"contributors":['), 'spread present').toBe(true);
    let at = 0;
    while (at < ordinary.length && shared[at] === ordinary[at]) at++;
    expect(at === ordinary.length && shared.length === ordinary.length, `first difference at ${at}: …${shared.slice(at - 80, at + 80)}…`).toBe(true);
  });
});

describe("V8's external-memory count (the premise of the switch)", () => {
  // 320 MB held in 40 buffers of 8 MB: as ArrayBuffers they start full collections for "external memory pressure"
  // (Node 20's V8: one per 64 MB since the last); as SharedArrayBuffers none. Observed with Node 20, 22 and 24.
  const script = `const held = []; for (let i = 0; i < 40; i++) held.push(new Float64Array(new (process.argv[1] === 'shared' ? SharedArrayBuffer : ArrayBuffer)(8 << 20)));`;
  const starts = (kind: string): number => {
    const r = spawnSync(process.execPath, ['--trace-incremental-marking', '--trace-gc', '-e', script, kind], { encoding: 'utf8' });
    expect(r.status).toBe(0);
    return (r.stdout.match(/external memory/gi) ?? []).length;
  };
  it('counts ArrayBuffers and leaves SharedArrayBuffers out', () => {
    expect(starts('own')).toBeGreaterThan(0);
    expect(starts('shared')).toBe(0);
  });
});
