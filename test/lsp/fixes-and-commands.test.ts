// The built language server over stdio: resistor-sizing quick fixes computed on demand in the worker, and the server's re-analyse command.

import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TextDocument } from 'vscode-languageserver-textdocument';
import { CodeActionRequest, ExecuteCommandRequest, HoverRequest, type CodeAction, type Diagnostic, type Hover, type MarkupContent, type TextEdit } from 'vscode-languageserver-protocol/node';
import { startServer, type ServerSession } from './lsp-client';

let server: ServerSession;
let dir: string;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'qpoint-lsp-fix-'));
  server = await startServer({ settings: { analysisDelayMs: 10, corners: { enabled: false } } });
});

afterAll(async () => {
  const code = await server?.stop();
  rmSync(dir, { recursive: true, force: true });
  expect(code).toBe(0);
});

/** Asks for the code actions of one diagnostic, as an editor does when the cursor is on it. */
async function quickFixes(uri: string, d: Diagnostic): Promise<CodeAction[]> {
  const actions = (await server.connection.sendRequest(CodeActionRequest.type, { textDocument: { uri }, range: d.range, context: { diagnostics: [d] } })) as CodeAction[];
  return actions.filter((a) => a.kind === 'quickfix');
}

describe('resistor-sizing quick fixes on demand', () => {
  it('sizes the reference resistor of a missed target when asked; applying the preferred fix clears the finding', async () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IOUT = IREF/(1 + 2/β), IREF = (VCC − VBE)/R:
    // with 4.3 kΩ from 5 V, IOUT ≈ (5 − 0.72)/4.3k/1.02 ≈ 0.976 mA, 2.4 % short of 1 mA ±2 %.
    const uri = pathToFileURL(join(dir, 'target.cir')).href;
    let text = '5 V mirror with a target\nVCC vcc 0 DC 5\nR1 vcc b 4.3k\nQ1 b b 0 qn\nQ2 out b 0 qn ; expect 1mA ±2%\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n';
    server.open(uri, text, 1);
    const d = await server.waitFor('target-missed', () => server.diagnosticsOf(uri).find((x) => x.code === 'target-missed'));
    const fixes = await quickFixes(uri, d);
    const best = fixes.find((a) => a.isPreferred);
    expect(best, JSON.stringify(fixes.map((a) => a.title))).toBeDefined();
    expect(best!.title).toMatch(/^Set R1 to /);
    const edits: TextEdit[] = best!.edit!.changes?.[uri] ?? best!.edit!.documentChanges?.flatMap((c) => ('edits' in c ? (c.edits as TextEdit[]) : [])) ?? [];
    expect(edits.length).toBe(1);
    text = TextDocument.applyEdits(TextDocument.create(uri, 'netlist', 1, text), edits);
    server.change(uri, 2, edits.map((e) => ({ range: e.range, text: e.newText })));
    await server.waitFor('diagnostics of the sized netlist', () => {
      const p = server.diagnostics.get(uri);
      return p && p.version === 2 && !p.diagnostics.some((x) => x.code === 'target-missed');
    });
    // The old diagnostic belongs to version 1, which is gone: no fixes are offered for it (they would edit the wrong text).
    expect(await quickFixes(uri, d)).toEqual([]);
  });

  it('sizes a parameter-valued resistor through its .param definition', async () => {
    const uri = pathToFileURL(join(dir, 'param.cir')).href;
    const text = '5 V mirror with a parameter\n.param rset=4.3k\nVCC vcc 0 DC 5\nR1 vcc b {rset}\nQ1 b b 0 qn\nQ2 out b 0 qn ; expect 1mA ±2%\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n';
    server.open(uri, text, 1);
    const d = await server.waitFor('target-missed', () => server.diagnosticsOf(uri).find((x) => x.code === 'target-missed'));
    const best = (await quickFixes(uri, d)).find((a) => a.isPreferred);
    expect(best?.title).toMatch(/^Set R1 to \S+ \(in \.param rset, which only R1 uses\)/);
    const edits = best!.edit!.changes?.[uri] ?? [];
    // The edit lands on the definition's value (line 2), not on the card's {rset}.
    expect(edits.map((e) => e.range.start.line)).toEqual([1]);
  });
});

describe('the saturated-output fix', () => {
  it('offers the load and reference resistors for a saturated mirror output; applying the preferred one clears the finding', async () => {
    const uri = pathToFileURL(join(dir, 'lamp.cir')).href;
    let text =
      'Saturated lamp output\nVCC vcc 0 12\nRREF vcc ref 22k\nQ1 ref ref 0 QS\nQ4 lamp ref 0 QS\nRLAMP vcc lamp 33k\n.model QS npn (IS=2e-15 BF=180 VAF=90)\n.end\n';
    server.open(uri, text, 1);
    const d = await server.waitFor('mirror-output-out-of-region', () => server.diagnosticsOf(uri).find((x) => x.code === 'mirror-output-out-of-region'));
    const fixes = await quickFixes(uri, d);
    expect(fixes.map((a) => a.title.split(' ').slice(0, 2).join(' '))).toEqual(['Set RLAMP', 'Set RREF']);
    const best = fixes.find((a) => a.isPreferred)!;
    expect(best.title).toMatch(/^Set RLAMP to \S+ \(E24\): Q4 → [\d.]+ µA, headroom [\d.]+ V$/);
    const edits: TextEdit[] = best.edit!.changes?.[uri] ?? [];
    text = TextDocument.applyEdits(TextDocument.create(uri, 'netlist', 1, text), edits);
    server.change(uri, 2, edits.map((e) => ({ range: e.range, text: e.newText })));
    await server.waitFor('diagnostics of the fixed netlist', () => {
      const p = server.diagnostics.get(uri);
      return p && p.version === 2 && !p.diagnostics.some((x) => x.code === 'mirror-output-out-of-region' || x.code === 'mirror-headroom-low');
    });
  });
});

describe('the re-analyse command', () => {
  it('is listed for the client, without the client-side sizing command', () => {
    const commands = server.initializeResult?.capabilities.executeCommandProvider?.commands ?? [];
    expect(commands).toContain('qpoint.server.reanalyse');
    expect(commands).not.toContain('qpoint.sizeResistorForCurrent');
  });

  it('re-reads an included file changed on disk without a watcher notice and re-publishes the netlist', async () => {
    const inc = join(dir, 'quiet.inc');
    writeFileSync(inc, '.model QX NPN (BF=50)\n');
    const top = pathToFileURL(join(dir, 'quiet-top.cir')).href;
    server.open(top, 'Netlist with a quietly changed include\n.include "quiet.inc"\nVCC vcc 0 DC 5\nR1 vcc b 100k\nQ1 c b 0 QY\nR2 vcc c 1k\n.end\n');
    await server.waitFor('the missing QY', () => server.diagnosticsOf(top).some((d) => d.code === 'model-not-found'));
    writeFileSync(inc, '.model QX NPN (BF=50)\n.model QY NPN (BF=60)\n');
    const answer = (await server.connection.sendRequest(ExecuteCommandRequest.type, { command: 'qpoint.server.reanalyse', arguments: [] })) as { netlists: number };
    expect(answer.netlists).toBeGreaterThanOrEqual(1);
    await server.waitFor('QY found after the command', () => {
      const p = server.diagnostics.get(top);
      return p && !p.diagnostics.some((d) => d.code === 'model-not-found');
    });
  });

  it('refuses an unknown command with a clear error and keeps running', async () => {
    await expect(server.connection.sendRequest(ExecuteCommandRequest.type, { command: 'qpoint.sizeResistorForCurrent', arguments: [] })).rejects.toThrow(/has no command/);
    await expect(server.connection.sendRequest(ExecuteCommandRequest.type, {} as never)).rejects.toThrow(/has no command/);
    expect(server.child.exitCode).toBeNull();
  });
});

describe('corners as a second phase', () => {
  it('publishes the nominal findings, then adds the corner results to hovers and diagnostics', async () => {
    const s = await startServer({ settings: { analysisDelayMs: 0 } });
    try {
      const uri = pathToFileURL(join(dir, 'corners.cir')).href;
      // A simple mirror (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4): IC2 ≈ (5 − 0.7)/4.3k ≈ 1 mA, so VCE2 ≈ 0.8 V — active at nominal,
      // near the edge, so the corner spread of its output current is worth showing. The spread only comes from the second phase.
      const text = 'Mirror near saturation\nVCC vcc 0 DC 5\nR1 vcc b 4.3k\nQ1 b b 0 qn\nQ2 out b 0 qn\nRL vcc out 4.3k\n.model qn npn (IS=1e-16 BF=100)\n.end\n';
      s.open(uri, text, 1);
      await s.waitFor('first diagnostics', () => s.diagnostics.get(uri));
      const hoverText = async () => {
        const h = (await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: { line: 4, character: 1 } })) as Hover | null;
        return (h?.contents as MarkupContent | undefined)?.value ?? '';
      };
      let md = '';
      const until = Date.now() + 20000;
      while (!/across \d+ corners/.test(md) && Date.now() < until) {
        md = await hoverText();
        await new Promise((r) => setTimeout(r, 20));
      }
      expect(md).toMatch(/across \d+ corners/);
      expect(s.child.exitCode).toBeNull();
    } finally {
      expect(await s.stop()).toBe(0);
    }
  });

  it('adds the corner solves’ chosen states to a self-biased loop’s start-up line once the corners are in', async () => {
    const s = await startServer({ settings: { analysisDelayMs: 0 } });
    try {
      const uri = pathToFileURL(join(dir, 'ptat.cir')).href;
      // An invented ΔVBE cell without a start-up path: it can rest at zero current at nominal and at every corner.
      const text = 'ΔVBE cell\nVCC vcc 0 5\nQ1 n1 n1 0 qn\nQ2 p n1 x qn 8\nR x 0 1k\nQP1 p p vcc qp\nQP2 n1 p vcc qp\n.model qn npn (BF=100)\n.model qp pnp (BF=50)\n.end\n';
      s.open(uri, text, 1);
      await s.waitFor('first diagnostics', () => s.diagnostics.get(uri));
      const hoverText = async () => {
        const h = (await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: { line: 2, character: 1 } })) as Hover | null;
        return (h?.contents as MarkupContent | undefined)?.value ?? '';
      };
      let md = '';
      const until = Date.now() + 20000;
      while (!/where the corner solves settled at IREF/.test(md) && Date.now() < until) {
        md = await hoverText();
        await new Promise((r) => setTimeout(r, 20));
      }
      expect(md).toMatch(/Start-up: the loop can rest at zero current at power-up \(also at (\d+) of the \1 corners, where the corner solves settled at IREF [\d.]+ µA to [\d.]+ µA\)/);
    } finally {
      expect(await s.stop()).toBe(0);
    }
  });
});
