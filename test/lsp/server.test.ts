// The built language server over stdio, driven by a real JSON-RPC client: diagnostics, hover, inlay hints, quick fixes, includes, custom requests and bad requests.

import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { TextDocument } from 'vscode-languageserver-textdocument';
import {
  CodeActionRequest,
  DidChangeWatchedFilesNotification,
  DidCloseTextDocumentNotification,
  FileChangeType,
  HoverRequest,
  InlayHintRequest,
  type CodeAction,
  type Hover,
  type InlayHint,
  type MarkupContent,
  type Position,
} from 'vscode-languageserver-protocol/node';
import { startServer, type ServerSession } from './lsp-client';

const MISSING_MODEL = `Mirror whose model card is missing
VCC vcc 0 DC 10
RREF vcc ref 9.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 1k
.end
`;

/** Line/character of `needle` (plus `inset` characters) in an ASCII text. */
function posOf(text: string, needle: string, inset = 0): Position {
  const i = text.indexOf(needle);
  if (i < 0) throw new Error(`"${needle}" not found`);
  const before = text.slice(0, i + inset);
  const line = before.split('\n').length - 1;
  return { line, character: before.length - before.lastIndexOf('\n') - 1 };
}

/** Reads `label number prefix unit` back from display text, in SI units. */
function quantity(text: string, label: string, unit: string): number {
  const m = new RegExp(`${label}\\s+([−-]?[0-9.]+)\\s*([kmµnp]?)${unit}`).exec(text);
  if (!m) throw new Error(`no ${label} in ${text}`);
  const scale: Record<string, number> = { k: 1e3, '': 1, m: 1e-3, µ: 1e-6, n: 1e-9, p: 1e-12 };
  return Number(m[1].replace('−', '-')) * scale[m[2]];
}

/** A diagnostic's message as plain text (LSP 3.18 also allows markup). */
function messageOf(d: { message: string | MarkupContent }): string {
  return typeof d.message === 'string' ? d.message : d.message.value;
}

let server: ServerSession;
let dir: string;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'qpoint-lsp-'));
  server = await startServer({ settings: { analysisDelayMs: 10, corners: { enabled: false } } });
});

afterAll(async () => {
  const code = await server?.stop();
  rmSync(dir, { recursive: true, force: true });
  expect(code).toBe(0);
});

describe('the language server over stdio', () => {
  const uri = () => pathToFileURL(join(dir, 'mirror.cir')).href;
  let text = MISSING_MODEL;
  let version = 1;

  it('publishes diagnostics for an opened netlist', async () => {
    server.open(uri(), text, version);
    const diags = await server.waitFor('model-not-found diagnostics', () => {
      const d = server.diagnosticsOf(uri());
      return d.some((x) => x.code === 'model-not-found') ? d : undefined;
    });
    const d = diags.find((x) => x.code === 'model-not-found')!;
    expect(d.source).toBe('qpoint');
    expect(d.severity).toBe(1);
    // The diagnostic sits on the model name of the Q1 card (line 3, zero-based).
    expect(d.range.start.line).toBe(3);
    expect(text.split('\n')[3].slice(d.range.start.character, d.range.end.character)).toBe('QN');
  });

  it('offers the finding fix as a quick fix; applying it clears the diagnostic', async () => {
    const d = server.diagnosticsOf(uri()).find((x) => x.code === 'model-not-found')!;
    const actions = (await server.connection.sendRequest(CodeActionRequest.type, {
      textDocument: { uri: uri() },
      range: d.range,
      context: { diagnostics: [d] },
    })) as CodeAction[];
    const fix = actions.find((a) => a.kind === 'quickfix' && /NPN/.test(a.title));
    expect(fix, JSON.stringify(actions.map((a) => a.title))).toBeDefined();
    expect(fix!.diagnostics?.[0].code).toBe('model-not-found');
    const edits = fix!.edit!.changes![uri()];
    expect(edits.length).toBeGreaterThan(0);
    const doc = TextDocument.create(uri(), 'netlist', version, text);
    text = TextDocument.applyEdits(doc, edits);
    expect(text).toMatch(/\.model QN NPN/i);
    version++;
    // Send the edit incrementally, as an editor does.
    server.change(uri(), version, edits.map((e) => ({ range: e.range, text: e.newText })).reverse());
    await server.waitFor('diagnostics of the fixed netlist', () => {
      const p = server.diagnostics.get(uri());
      return p && p.version === version && !p.diagnostics.some((x) => x.code === 'model-not-found');
    });
  });

  it('hovers a transistor and reads its collector current from the cached analysis', async () => {
    const hover = (await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: uri() }, position: posOf(text, 'Q2 out', 1) })) as Hover;
    const md = (hover.contents as MarkupContent).value;
    expect(md).toContain('forward-active');
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IOUT = IREF/(1 + 2/β), IREF = (VCC − VBE)/RREF;
    // the inserted model carries the default BF = 100 (docs/DEVICE-MODELS.md defaults).
    const ic = quantity(md, 'IC', 'A');
    const vbe = quantity(md, 'VBE', 'V');
    expect(Math.abs(ic / ((10 - vbe) / 9.3e3 / 1.02) - 1)).toBeLessThan(0.01);
    expect(hover.range!.start).toEqual(posOf(text, 'Q2 out'));
  });

  it('returns inlay hints for device lines and asked the client to refresh them', async () => {
    const hints = (await server.connection.sendRequest(InlayHintRequest.type, {
      textDocument: { uri: uri() },
      range: { start: { line: 0, character: 0 }, end: { line: 100, character: 0 } },
    })) as InlayHint[];
    const q2 = hints.find((h) => h.position.line === posOf(text, 'Q2 out').line);
    expect(q2?.label).toMatch(/^IC [0-9.]+ µA · VCE [0-9.]+ V · [0-9.]+ [µm]W$/);
    expect(server.refreshes).toBeGreaterThan(0);
  });

  it('answers the custom requests: outputs, output characteristic, resistor sizing', async () => {
    const outputs = (await server.connection.sendRequest('qpoint/listOutputs', { uri: uri() })) as { outputs: { device: string }[] };
    expect(outputs.outputs.map((o) => o.device)).toEqual(['Q2']);
    const curve = (await server.connection.sendRequest('qpoint/outputCharacteristic', { uri: uri(), device: 'Q2', points: 21 })) as { points: { v: number; i: number }[]; edgeV: number };
    expect(curve.points.length).toBeGreaterThan(15);
    expect(curve.edgeV).toBeGreaterThan(0.4);
    const sized = (await server.connection.sendRequest('qpoint/sizeResistor', { uri: uri(), resistor: 'RREF', target: '500u' })) as {
      ideal: number;
      candidates: { valueText: string; current: number; edit: { documentChanges?: { edits: { newText: string }[] }[] } }[];
    };
    // Source: IREF = (VCC − VBE)/R with IOUT = IREF/(1 + 2/β) (Gray et al., ch. 4): for 500 µA out, R ≈ (10 − 0.7)/(0.51 mA) ≈ 18 kΩ.
    expect(sized.ideal).toBeGreaterThan(16e3);
    expect(sized.ideal).toBeLessThan(20e3);
    expect(sized.candidates.length).toBeGreaterThan(0);
    expect(sized.candidates[0].edit.documentChanges![0].edits[0].newText).toBe(sized.candidates[0].valueText);
    await expect(server.connection.sendRequest('qpoint/sizeResistor', { uri: uri(), resistor: 'RREF', target: 'lots' })).rejects.toThrow(/not a number/);
    await expect(server.connection.sendRequest('qpoint/sizeResistor', { uri: uri(), resistor: 'Q1', target: '1m' })).rejects.toThrow(/not a resistor/);
    await expect(server.connection.sendRequest('qpoint/outputCharacteristic', { uri: uri(), device: 'Q1' })).rejects.toThrow(/not the output/);
  });

  it('runs Monte Carlo in chunks that add up to the same runs, and says the spread in the hover', async () => {
    // Chunks of one seed equal one run of all of them: runs are seeded by their index (docs/VARIATION.md).
    const a = (await server.connection.sendRequest('qpoint/monteCarlo', { uri: uri(), seed: 3, first: 0, count: 20 })) as { runs: number };
    expect(a.runs).toBe(20);
    const b = (await server.connection.sendRequest('qpoint/monteCarlo', { uri: uri(), seed: 3, first: 20, count: 20, finish: true })) as { runs: number; converged: number; report: string[] };
    expect(b.runs).toBe(40);
    const whole = (await server.connection.sendRequest('qpoint/monteCarlo', { uri: uri(), seed: 3, first: 0, count: 40, finish: true })) as { report: string[] };
    expect(whole.report).toEqual(b.report);
    expect(b.report.join('\n')).toMatch(/Monte Carlo, 40 runs: mean /);
    await expect(server.connection.sendRequest('qpoint/monteCarlo', { uri: uri(), seed: -1, first: 0, count: 1 })).rejects.toThrow(/needs a document uri/);
    const hover = (await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: uri() }, position: posOf(text, 'Q2 out', 1) })) as Hover;
    expect((hover.contents as MarkupContent).value).toMatch(/\*\*Spread and drift:\*\*.*its current: σ [\d.]+ % \(±3σ [\d.]+ %\), worst case ±[\d.]+ %; drift [+−][\d.]+ ppm\/°C/);
  });

  it('offers no sizing refactor to a client that can neither run the client command nor ask and apply edits', async () => {
    // This test client declares neither window.showMessage nor workspace.applyEdit (test/lsp/sizing-command.test.ts has the others).
    const actions = (await server.connection.sendRequest(CodeActionRequest.type, {
      textDocument: { uri: uri() },
      range: { start: posOf(text, 'RREF'), end: posOf(text, 'RREF', 2) },
      context: { diagnostics: [] },
    })) as CodeAction[];
    expect(actions.filter((a) => a.kind === 'refactor')).toEqual([]);
  });

  it('re-publishes an including netlist when the included file changes on disk or in the editor', async () => {
    const inc = join(dir, 'models.inc');
    const incUri = pathToFileURL(inc).href;
    writeFileSync(inc, '.model QX NPN (BF=50)\n');
    const top = pathToFileURL(join(dir, 'uses-include.cir')).href;
    const topText = 'Netlist using an include\n.include "models.inc"\nVCC vcc 0 DC 5\nR1 vcc b 100k\nQ1 c b 0 QX\nQ2 c2 b 0 QY\nR2 vcc c 1k\nR3 vcc c2 1k\n.end\n';
    server.open(top, topText);
    await server.waitFor('the missing QY', () => server.diagnosticsOf(top).some((d) => d.code === 'model-not-found' && messageOf(d).includes('QY')));

    writeFileSync(inc, '.model QX NPN (BF=50)\n.model QY NPN (BF=60)\n');
    await server.connection.sendNotification(DidChangeWatchedFilesNotification.type, { changes: [{ uri: incUri, type: FileChangeType.Changed }] });
    await server.waitFor('QY found after the disk change', () => {
      const p = server.diagnostics.get(top);
      return p && !p.diagnostics.some((d) => d.code === 'model-not-found');
    });

    // The editor's unsaved text of the included file wins over the disk.
    const incText = '.model QX NPN (BF=50)\n.model QY NPN (BF=60)\n';
    server.open(incUri, incText);
    server.change(incUri, 2, [{ range: { start: { line: 1, character: 0 }, end: { line: 2, character: 0 } }, text: '' }]);
    await server.waitFor('QY missing again after the editor change', () => server.diagnosticsOf(top).some((d) => d.code === 'model-not-found' && messageOf(d).includes('QY')));
    // Hover inside the included file answers from the includer's analysis.
    const hover = (await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: incUri }, position: { line: 0, character: 8 } })) as Hover | null;
    expect((hover?.contents as MarkupContent | undefined)?.value).toContain('Model **QX**');

    // Closing the included file hands it back to the disk (which still defines QY).
    await server.connection.sendNotification(DidCloseTextDocumentNotification.type, { textDocument: { uri: incUri } });
    await server.waitFor('QY found again from the disk', () => {
      const p = server.diagnostics.get(top);
      return p && !p.diagnostics.some((d) => d.code === 'model-not-found');
    });
    // Closing the netlist clears its diagnostics.
    const before = server.publishCount.get(top) ?? 0;
    await server.connection.sendNotification(DidCloseTextDocumentNotification.type, { textDocument: { uri: top } });
    await server.waitFor('cleared diagnostics', () => (server.publishCount.get(top) ?? 0) > before && server.diagnosticsOf(top).length === 0);
  });

  it('survives bad requests and keeps answering', async () => {
    // Positions past the end are clamped, not errors.
    const far = await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: uri() }, position: { line: 9999, character: 9999 } });
    expect(far === null || typeof far === 'object').toBe(true);
    // Unknown documents get empty answers.
    expect(await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: 'file:///nowhere/none.cir' }, position: { line: 0, character: 0 } })).toBeNull();
    expect(await server.connection.sendRequest(InlayHintRequest.type, { textDocument: { uri: 'file:///nowhere/none.cir' }, range: { start: { line: 0, character: 0 }, end: { line: 1, character: 0 } } })).toEqual([]);
    // Malformed params get an LSP error.
    await expect(server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: uri() } } as never)).rejects.toThrow(/position/);
    await expect(server.connection.sendRequest('qpoint/outputCharacteristic', { nothing: true })).rejects.toThrow(/needs a document uri/);
    await expect(server.connection.sendRequest('qpoint/sizeResistor', null)).rejects.toThrow(/needs a document uri/);
    // An out-of-order edit (older version) is refused without breaking the document.
    // Had it been applied, `RVCC vcc 0 DC 10` would be a resistor with the value `DC`: an error diagnostic.
    server.change(uri(), 1, [{ range: { start: { line: 1, character: 0 }, end: { line: 1, character: 0 } }, text: 'R' }]);
    // A change without a range past the end of the text is clamped.
    version++;
    server.change(uri(), version, [{ range: { start: { line: 500, character: 3 }, end: { line: 600, character: 0 } }, text: '* appended comment\n' }]);
    text += '* appended comment\n';
    await server.waitFor('the clamped edit analysed', () => server.diagnostics.get(uri())?.version === version);
    expect(server.diagnosticsOf(uri()).filter((d) => d.severity === 1)).toEqual([]);
    const hover = (await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: uri() }, position: posOf(text, 'Q2 out', 1) })) as Hover;
    expect((hover.contents as MarkupContent).value).toContain('forward-active');
    expect(server.child.exitCode).toBeNull();
  });
});

describe('position encodings', () => {
  it('counts characters in UTF-8 when the client prefers it', async () => {
    const s = await startServer({ settings: { analysisDelayMs: 0, corners: { enabled: false } }, positionEncodings: ['utf-8', 'utf-16'] });
    try {
      const u = 'untitled:encoding-check.cir';
      const text = 'Divider with a non-ASCII node name\nV1 µin 0 DC 10\nR1 µin mid 1k\nR2 mid 0 1k\n.end\n';
      s.open(u, text);
      await s.waitFor('diagnostics', () => s.diagnostics.has(u));
      // "R1 µin " is 7 UTF-16 code units but 8 UTF-8 bytes (µ is two bytes): `mid` starts at byte 8.
      const hover = (await s.connection.sendRequest(HoverRequest.type, { textDocument: { uri: u }, position: { line: 2, character: 9 } })) as Hover;
      expect((hover.contents as MarkupContent).value).toContain('Node **mid**');
      expect(hover.range).toEqual({ start: { line: 2, character: 8 }, end: { line: 2, character: 11 } });
    } finally {
      expect(await s.stop()).toBe(0);
    }
  });
});
