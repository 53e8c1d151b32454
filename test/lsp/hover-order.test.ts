// The device hover over LSP, ordered for a decision: the answer on the first line, then estimate against solved,
// spread and drift, the derivation, and the sources last — with each quantity shown once.

import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { HoverRequest, type Hover, type MarkupContent, type Position } from 'vscode-languageserver-protocol/node';
import { startServer, type ServerSession } from './lsp-client';

// An NPN mirror of our own with a target on its output, and a second mirror whose output its load pushes into saturation.
const NETLIST = `Two-output NPN mirror for the hover order
VCC vcc 0 DC 10
RREF vcc ref 9.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN          ; expect 1mA ±2%
RL vcc out 1k
RREF2 vcc ref2 9.3k
Q4 ref2 ref2 0 QN
Q3 sat ref2 0 QN
RS vcc sat 20k
.model QN NPN (BF=100 IS=1e-16 VAF=80)
.end
`;

function posOf(text: string, needle: string, inset = 1): Position {
  const i = text.indexOf(needle);
  const before = text.slice(0, i + inset);
  return { line: before.split('\n').length - 1, character: before.length - before.lastIndexOf('\n') - 1 };
}

/** `label number prefix unit` read back in SI units. */
function quantity(text: string, label: string, unit: string): number {
  const m = new RegExp(`${label}\\s+([−-]?[0-9.]+)\\s*([kmµnp]?)${unit}`).exec(text);
  if (!m) throw new Error(`no ${label} in ${text}`);
  const scale: Record<string, number> = { k: 1e3, '': 1, m: 1e-3, µ: 1e-6, n: 1e-9, p: 1e-12 };
  return Number(m[1]!.replace('−', '-')) * scale[m[2]!]!;
}

let server: ServerSession;
let dir: string;
const uri = () => pathToFileURL(join(dir, 'order.cir')).href;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'qpoint-hover-'));
  server = await startServer({ settings: { analysisDelayMs: 10 } });
  server.open(uri(), NETLIST, 1);
  await server.waitFor('diagnostics', () => server.diagnostics.get(uri()));
});

afterAll(async () => {
  const code = await server?.stop();
  rmSync(dir, { recursive: true, force: true });
  expect(code).toBe(0);
});

async function hover(needle: string): Promise<string> {
  const h = (await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: uri() }, position: posOf(NETLIST, needle) })) as Hover;
  return (h.contents as MarkupContent).value;
}

describe('the device hover over LSP', () => {
  it('answers on its first line: current, region, headroom and the state of the target', async () => {
    const md = await hover('Q2 out');
    const first = md.split('\n')[0]!;
    expect(first).toMatch(/^\*\*Q2\*\* · IC [0-9.]+ [µm]A · forward-active · [0-9.]+ V clear of saturation · \*\*[0-9.]+ % (above|below) target 1 mA ±2 %\*\*$/);
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IOUT = IREF/(1 + Σ/β)·(1 + (VCE − VBE)/VA), IREF = (VCC − VBE)/RREF,
    // with Σ = 2 for a reference and one output; VCE = 10 V − IC·1 kΩ (Ohm's law). Within 3 % (β is BF at low injection).
    const ic = quantity(first, 'IC', 'A');
    const vbe = quantity(md, 'VBE', 'V');
    const vce = 10 - ic * 1e3;
    const byHand = ((10 - vbe) / 9.3e3 / (1 + 2 / 100)) * (1 + (vce - vbe) / 80);
    expect(Math.abs(ic / byHand - 1)).toBeLessThan(0.03);
    // Headroom of an NPN output = VCB = VCE − VBE (the VBC = 0 edge).
    expect(Math.abs(quantity(first, '·', 'V') - (vce - vbe))).toBeLessThan(0.02);
  });

  it('keeps the order: estimate against solved, spread and drift, the derivation, sources last', async () => {
    const md = await hover('Q2 out');
    const at = (s: string) => {
      const i = md.indexOf(s);
      expect(i, `"${s}" in the hover`).toBeGreaterThan(0);
      return i;
    };
    const order = [at('IOUT estimate'), at('**Spread and drift:**'), at('**How it is worked out**'), at('Hand estimate:'), at('Sources:')];
    expect([...order].sort((a, b) => a - b)).toEqual(order);
    expect(md.trimEnd().split('\n').at(-1)).toMatch(/^Sources: \[1\] /);
    expect(md).toMatch(/solved [0-9.]+ [µm]A: [0-9.]+ % (above|below) the estimate|solved [0-9.]+ [µm]A: matches the estimate/);
  });

  it('shows each quantity once: one compliance edge, one output resistance, one collector current', async () => {
    const md = await hover('Q2 out');
    const count = (re: RegExp) => (md.match(re) ?? []).length;
    expect(count(/Output resistance|\bro\b/g)).toBe(1);
    expect(count(/Stays active|[Cc]ompliance edge/g)).toBe(1);
    expect(count(/\bIC \d/g)).toBe(1);
    expect(count(/forward-active/g)).toBe(1);
    expect(md).not.toMatch(/short of|beyond the edge|\de[+-]?\d+ %/);
  });

  it('says a saturated output is into saturation, in words and without a double negative', async () => {
    const md = await hover('Q3 sat');
    const first = md.split('\n')[0]!;
    // 20 kΩ from 10 V cannot carry the mirrored ~1 mA (Ohm's law: at most 0.5 mA), so Q3 saturates.
    expect(first).toMatch(/^\*\*Q3\*\* · IC [0-9.]+ µA · \*\*saturation\*\* · [0-9.]+ m?V into saturation$/);
    expect(first).not.toMatch(/−/);
  });
});
