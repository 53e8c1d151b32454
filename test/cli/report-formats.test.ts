// The built `qpoint` CLI's review formats: `report --format html|markdown -o FILE` and `sweep --output DEVICE` (CSV, SVG).
import { describe, expect, it } from 'vitest';
import { mkdirSync, writeFileSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { runCli as run, scratchFolder } from './harness';

const scratch = scratchFolder('qpoint-report-');
const file = scratch.file;

// Our own scenario: an NPN mirror with a Widlar output and a PMOS cell, with a name that tries to break out of HTML and Markdown.
const NETLIST = `Mirror bench <b>|pipe|</b>
VCC vcc 0 DC 10
VDD vdd 0 DC 3.3
RREF vcc ref 9.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN
QW trim ref ew QN
RE ew 0 4.7k
RL vcc out 1k
RT vcc trim 47k
MREF g g vdd vdd PM W=20u L=2u
MOUT pout g vdd vdd PM W=40u L=2u
RSET g 0 47k
RP pout 0 10k
.model QN NPN (BF=100 IS=1e-16 VAF=80)
.model PM PMOS (VTO=-0.6 KP=50u LAMBDA=0.05)
.end
`;

describe('qpoint report --format html', () => {
  it('writes one self-contained page with the structures table, the findings and a chart per mirror output', () => {
    const out = join(scratch.dir, 'report.html');
    const r = run(['report', '--format', 'html', '-o', out, file('bench.cir', NETLIST)]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toBe('');
    const html = readFileSync(out, 'utf8');
    expect(html).toMatch(/^<!DOCTYPE html>/);
    // Self-contained: no script, and nothing loaded from elsewhere (HTML Living Standard: src/href fetch resources).
    expect(html).not.toMatch(/<script|\ssrc=|<link\s|@import|url\(http/i);
    expect(html).toContain('default-src \'none\'');
    // Three outputs (Q2, QW, MOUT): three characteristics, each titled in words, each with its drift against temperature.
    expect((html.match(/<svg /g) ?? []).length).toBe(6);
    expect((html.match(/class="qp-chart qp-drift"/g) ?? []).length).toBe(3);
    // No Monte Carlo asked for: no histogram.
    expect(html).not.toContain('qp-histogram');
    expect(html).toContain('Widlar output QW of the simple current mirror on Q1 (NPN)');
    expect(html).toContain('Mirror output MOUT of the simple current mirror on MREF (PMOS)');
    expect(html).toMatch(/<th scope="col">Spread and drift<\/th>/);
    expect(html).toMatch(/clear of saturation|into saturation/);
    // The title is escaped, not markup.
    expect(html).toContain('Mirror bench &lt;b&gt;|pipe|&lt;/b&gt;');
    expect(html).not.toContain('<b>|pipe|</b>');
    // The PMOS chart's out-of-region band lies right of its edge, the NPN charts' left of theirs.
    expect((html.match(/qp-region-outside qp-right/g) ?? []).length).toBe(1);
    expect((html.match(/qp-region-outside qp-left/g) ?? []).length).toBe(2);
  });
});

// Our own scenario: one NPN reference feeding thirty equal outputs, output Qk loaded by (k − 1) × 300 Ω.
// Equal currents (≈ (12 V − 0.7 V) / 11.3 kΩ ≈ 1 mA each; VBE ≈ 0.7 V, common practice) through
// larger loads leave lower collector voltages (Ohm's law on the load line, V = VCC − I·R), so the
// least headroom is at the largest load: Q31, then Q30, Q29, ...
const WIDE_MIRROR = [
  'Bias fan-out for a thirty-channel sensor front end',
  'VCC vcc 0 12',
  'RREF vcc ref 11.3k',
  'Q1 ref ref 0 QW',
  ...Array.from({ length: 30 }, (_, i) => i + 2).flatMap((k) => [`Q${k} out${k} ref 0 QW`, `RL${k} vcc out${k} ${(k - 1) * 300}`]),
  '.model QW NPN (BF=200 IS=1e-16 VAF=100)',
  '.end',
  '',
].join('\n');

/** The output devices of the charts drawn, in the page's order (each chart's caption names its device). */
function chartDevices(html: string): string[] {
  return [...html.matchAll(/<figcaption>[^<]*? (Q\d+) of the /g)].map((m) => m[1]!);
}

describe('qpoint report --format html on a netlist with more outputs than charts', () => {
  it('draws the outputs with the least headroom first and names the ones left out and the flag that draws them', () => {
    const f = file('wide.cir', WIDE_MIRROR);
    const r = run(['report', '--format', 'html', '--charts-per-file', '3', f]);
    expect(r.code, r.stderr).toBe(0);
    expect(chartDevices(r.stdout)).toEqual(['Q31', 'Q30', 'Q29']);
    expect(r.stdout).toContain('<strong>27 more outputs are not drawn</strong>');
    expect(r.stdout).toContain('<code>qpoint report --format html --charts-per-file all</code>');
    const left = /<summary>Outputs not drawn \(27\)<\/summary><p>(.*?)<\/p>/.exec(r.stdout)?.[1] ?? '';
    expect([...left.matchAll(/<code>(Q\d+)<\/code>/g)].map((m) => m[1])).toEqual(Array.from({ length: 27 }, (_, i) => `Q${28 - i}`));
    // Every output is still in the structures table.
    for (let k = 2; k <= 31; k++) expect(r.stdout).toContain(`<td>Q${k}</td>`);
  }, 120_000);

  it('draws 24 by default and every one with --charts-per-file all', () => {
    const f = file('wide2.cir', WIDE_MIRROR);
    const capped = run(['report', '--format', 'html', f]);
    expect(chartDevices(capped.stdout)).toEqual(Array.from({ length: 24 }, (_, i) => `Q${31 - i}`));
    expect(capped.stdout).toContain('<strong>6 more outputs are not drawn</strong>');
    const all = run(['report', '--format', 'html', '--charts-per-file', 'all', f]);
    expect(all.code, all.stderr).toBe(0);
    expect(chartDevices(all.stdout)).toHaveLength(30);
    expect(all.stdout).not.toContain('not drawn');
    expect(run(['report', '--format', 'html', '--charts-per-file', 'some', f]).code).toBe(2);
    expect(run(['check', '--charts-per-file', '3', f]).code).toBe(2);
  }, 180_000);
});

describe('qpoint report --format html --monte-carlo N', () => {
  it('draws each output\'s histogram of the runs beside its figures, the same figures as the JSON', () => {
    const out = join(scratch.dir, 'report-mc.html');
    const bench = file('bench-mc.cir', NETLIST);
    const r = run(['report', '--format', 'html', '--monte-carlo', '200', '--seed', '5', '-o', out, bench]);
    expect(r.code, r.stderr).toBe(0);
    const html = readFileSync(out, 'utf8');
    expect((html.match(/class="qp-chart qp-histogram"/g) ?? []).length).toBe(3);
    const j = run(['report', '--format', 'json', '--monte-carlo', '200', '--seed', '5', bench]);
    expect(j.code, j.stderr).toBe(0);
    type Mc = { key: string; monteCarlo?: { converged: number; runs: number } };
    const structures = (JSON.parse(j.stdout) as { files: { structures: { variation?: { iout: Record<string, Mc> } }[] }[] }).files[0].structures;
    for (const device of ['Q2', 'QW', 'MOUT']) {
      const o = structures.map((s) => s.variation?.iout[device]).find((x) => x !== undefined)!;
      expect(html).toContain(`${o.monteCarlo!.converged} of ${o.monteCarlo!.runs} Monte Carlo runs`);
    }
  });
});

describe('qpoint check --format json: the spread analysis', () => {
  it('writes each output\'s figures once: under its structure, or at the file level when it belongs to none', () => {
    // An expect target on RP (a load resistor, part of no structure) adds an output of its own.
    const bench = file('bench-once.cir', NETLIST.replace('RP pout 0 10k', 'RP pout 0 10k ; expect 60uA ±20%'));
    const r = run(['check', '--format', 'json', bench]);
    type Out = { key?: string; structure?: string; nominal: number };
    type Spread = { iref?: Out; iout: Record<string, Out>; voltages?: Record<string, Out> };
    const f = (JSON.parse(r.stdout) as {
      files: { structures: { id: string; variation?: Spread }[]; variation: { outputsOutsideStructures: Out[]; sources: unknown[]; stats: { adjointSolves: number } } }[];
    }).files[0];
    // Under a structure an output's key is its place (the structure's id, iref or the member's name): not written again.
    const keys: string[] = [];
    for (const s of f.structures) {
      if (!s.variation) continue;
      const placed: [string, Out | undefined][] = [
        [`${s.id} iref`, s.variation.iref],
        ...Object.entries(s.variation.iout).map(([device, o]): [string, Out] => [`${s.id} out ${device}`, o]),
        ...Object.entries(s.variation.voltages ?? {}).map(([name, o]): [string, Out] => [`${s.id} voltage ${name}`, o]),
      ];
      for (const [key, o] of placed) {
        if (!o) continue;
        expect(o.structure).toBeUndefined();
        expect(o.key).toBeUndefined();
        expect(o.nominal).toBeGreaterThan(0);
        keys.push(key);
      }
    }
    const outside = f.variation.outputsOutsideStructures;
    expect(outside.map((o) => o.key)).toEqual(['element RP']);
    expect(outside[0].structure).toBeUndefined();
    keys.push(...outside.map((o) => o.key ?? ''));
    // Q2, QW and MOUT outputs and their IREFs are under their structures; nothing is written twice.
    for (const device of ['Q2', 'QW', 'MOUT']) expect(keys.some((k) => k.endsWith(` out ${device}`))).toBe(true);
    expect(new Set(keys).size).toBe(keys.length);
    expect(f.variation.stats.adjointSolves).toBeGreaterThan(0);
    expect(f.variation).not.toHaveProperty('outputs');
  });
});

describe('qpoint report --format markdown', () => {
  it('writes a CI job summary: counts, the structures table and the findings, with pipes escaped', () => {
    const r = run(['report', '--format', 'markdown', file('bench-md.cir', NETLIST)]);
    expect(r.code, r.stderr).toBe(0);
    const md = r.stdout;
    expect(md).toMatch(/^## qpoint bias report/);
    expect(md).toMatch(/^\| Structure \| Device \| Role \| Estimate \| Solved \| Solved against estimate \| Headroom \| Region \| Spread and drift \|$/m);
    // GitHub Flavored Markdown tables: a cell's pipe must be escaped as \| (GFM spec, "Tables" extension).
    expect(md).toContain('Mirror bench &lt;b&gt;\\|pipe\\|&lt;/b&gt;');
    // Every table row has as many cells as its header.
    for (const line of md.split('\n').filter((l) => l.startsWith('| Simple'))) expect(line.replace(/\\\|/g, '').split('|').length).toBe(11);
    expect(md).toMatch(/> Caution:/);
  });
});

describe('qpoint sweep', () => {
  it('prints the output characteristic as RFC 4180 CSV across the structure\'s own rails', () => {
    const r = run(['sweep', '--output', 'MOUT', '--points', '34', file('bench-sweep.cir', NETLIST)]);
    expect(r.code, r.stderr).toBe(0);
    const lines = r.stdout.split('\r\n').filter(Boolean);
    expect(lines[0]).toBe('output_node_V,output_current_A');
    expect(lines.length).toBeGreaterThan(30);
    const pts = lines.slice(1).map((l) => l.split(',').map(Number));
    // The PMOS cell hangs from vdd (3.3 V) and ground, not the board's 10 V rail.
    expect(pts[0]![0]).toBeCloseTo(0, 9);
    expect(pts.at(-1)![0]).toBeCloseTo(3.3, 9);
    // Ohm's law cross-check at the bottom of the sweep: the PMOS output sources current (positive in its own direction)
    // of the order of 2·(3.3 V − 1.05 V)/47 kΩ ≈ 96 µA (Razavi, ch. 5, W/L ratio 2), within 25 %.
    expect(pts[0]![1]).toBeGreaterThan(0.75 * 96e-6);
    expect(pts[0]![1]).toBeLessThan(1.25 * 96e-6);
  });

  it('writes a standalone SVG that carries its own styles', () => {
    const out = join(scratch.dir, 'q2.svg');
    const r = run(['sweep', '--output', 'Q2', '--format', 'svg', '-o', out, file('bench-svg.cir', NETLIST)]);
    expect(r.code, r.stderr).toBe(0);
    const svg = readFileSync(out, 'utf8');
    expect(svg).toMatch(/^<\?xml version="1.0" encoding="UTF-8"\?>\n<svg xmlns="http:\/\/www.w3.org\/2000\/svg"/);
    expect(svg).toContain('<style>');
    expect(svg).toContain('qp-region-outside qp-left');
  });

  it('says which outputs exist when the device is not one, and refuses a sweep without --output', () => {
    const r = run(['sweep', '--output', 'Q1', file('bench-bad.cir', NETLIST)]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/Q1 is not the output of a recognised mirror; the outputs are/);
    const n = run(['sweep', file('bench-bad2.cir', NETLIST)]);
    expect(n.code).toBe(2);
    expect(n.stderr).toMatch(/needs --output DEVICE/);
    const f = run(['report', '--format', 'csv', file('bench-bad3.cir', NETLIST)]);
    expect(f.code).toBe(2);
    expect(f.stderr).toMatch(/'report --format' takes text, json, html, markdown/);
  });
});

describe('batch runs', () => {
  it('expands a pattern the shell passed on, checks every file it names, and draws no progress line off a terminal', () => {
    const sub = join(scratch.dir, 'boards');
    mkdirSync(join(sub, 'deep'), { recursive: true });
    writeFileSync(join(sub, 'one.cir'), NETLIST);
    writeFileSync(join(sub, 'deep', 'two.cir'), NETLIST);
    writeFileSync(join(sub, 'deep', 'notes.txt'), 'not a netlist');
    const r = run(['check', '--no-corners', '--format', 'json', join(sub, '**', '*.cir')]);
    const files = JSON.parse(r.stdout).files.map((f: { path: string }) => f.path.replace(/\\/g, '/'));
    expect(files).toEqual([`${sub}/deep/two.cir`, `${sub}/one.cir`].map((f) => f.replace(/\\/g, '/')));
    // Standard error is a pipe here, not a terminal: no progress line.
    expect(r.stderr).toBe('');
  });
});
