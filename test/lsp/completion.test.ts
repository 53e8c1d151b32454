// The built language server over stdio: completion templates (element cards, .model cards), the model field offered
// before instance parameters, and node names while the text runs ahead of the last analysis.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CompletionRequest, InsertTextFormat, type CompletionItem, type TextEdit } from 'vscode-languageserver-protocol/node';
import { TextDocument } from 'vscode-languageserver-textdocument';
import { MODEL_PARAMETERS } from '../../shared-analysis/src/devices/parameters';
import { parse } from '../../shared-analysis/src/syntax/parser';
import { startServer, type ServerSession } from './lsp-client';

const TEXT = 'Completion over LSP\nVCC vcc 0 DC 5\nR1 vcc b 4.3k\nQ1 b b 0 qn\nQ2 out b 0 qn\n.model qn npn (IS=1e-16 BF=100)\n.model nch nmos (KP=50u)\n.model jn njf (VTO=-2 BETA=1e-4)\n.subckt cell in out\nRC in out 1k\n.ends cell\n.end\n';

let snippets: ServerSession;
let plain: ServerSession;
let n = 0;

beforeAll(async () => {
  const settings = { analysisDelayMs: 0, corners: { enabled: false } };
  [snippets, plain] = await Promise.all([
    startServer({ settings, capabilities: { textDocument: { completion: { completionItem: { snippetSupport: true } } } } }),
    startServer({ settings }),
  ]);
});

afterAll(async () => {
  for (const s of [snippets, plain]) if (s) expect(await s.stop()).toBe(0);
});

/**
 * The one helper: opens TEXT, waits for its analysis, then replaces the text with `edited` (a cursor `|` marks where
 * completion is asked) without waiting for the new analysis, as happens while typing; returns the items in sort order.
 */
async function check(s: ServerSession, edited: string): Promise<{ items: CompletionItem[]; text: string; line: number; character: number }> {
  const uri = `file:///completion-${++n}.cir`;
  s.open(uri, TEXT);
  await s.waitFor('first analysis', () => s.diagnostics.get(uri));
  const at = edited.indexOf('|');
  const text = edited.replace('|', '');
  s.change(uri, 2, [{ text }]);
  const before = text.slice(0, at).split('\n');
  const position = { line: before.length - 1, character: before.at(-1)!.length };
  const answer = (await s.connection.sendRequest(CompletionRequest.type, { textDocument: { uri }, position })) as CompletionItem[];
  const items = [...answer].sort((a, b) => (a.sortText ?? a.label).localeCompare(b.sortText ?? b.label));
  return { items, text, ...position };
}

/** The text after inserting an item as a client would (placeholders replaced by their defaults). */
function inserted(text: string, item: CompletionItem): string {
  const edit = item.textEdit as TextEdit;
  const newText = edit.newText.replace(/\$\{\d+:([^}]*)\}/g, '$1').replace(/\$\d+/g, '');
  return TextDocument.applyEdits(TextDocument.create('x', 'netlist', 1, text), [{ range: edit.range, newText }]);
}

describe('completion templates', () => {
  it('offers a bipolar-transistor card with placeholders for nodes and model when Q starts a line', async () => {
    const { items, text } = await check(snippets, TEXT.replace('.model qn', 'Q|\n.model qn'));
    const q = items[0]!;
    expect(q.label).toBe('Q');
    expect(q.insertTextFormat).toBe(InsertTextFormat.Snippet);
    // The next free name (Q1, Q2 are taken), the terminals in the family's order (collector, base, emitter), and the
    // document's bipolar model as the model's default.
    expect((q.textEdit as TextEdit).newText).toBe('Q3 ${1:collector} ${2:base} ${3:emitter} ${4:qn}');
    // What the template inserts parses back as a Q card with three nodes and that model.
    const line = inserted(text, q).split('\n')[5]!;
    const card = parse('x', `t\n${line}\n`, { hasTitle: true }).cards.find((c) => c.kind === 'element');
    expect(card && card.kind === 'element' && [card.nodes.length, card.model?.text]).toEqual([3, 'qn']);
  });

  it('offers value and model placeholders for the other letters, and a card per subcircuit with its ports', async () => {
    const { items } = await check(snippets, TEXT.replace('.end\n', '|\n.end\n'));
    const byLabel = new Map(items.map((i) => [i.label, (i.textEdit as TextEdit).newText]));
    expect(byLabel.get('R')).toBe('R2 ${1:node1} ${2:node2} ${3:1k}');
    expect(byLabel.get('M')).toBe('M1 ${1:drain} ${2:gate} ${3:source} ${4:bulk} ${5:nch} W=${6:10u} L=${7:1u}');
    expect(byLabel.get('J')).toBe('J1 ${1:drain} ${2:gate} ${3:source} ${4:jn}');
    expect(byLabel.get('X cell')).toBe('X1 ${1:in} ${2:out} cell');
  });

  it('gives a client without snippets the same templates as plain text', async () => {
    const { items } = await check(plain, TEXT.replace('.model qn', 'Q|\n.model qn'));
    expect(items[0]!.insertTextFormat).not.toBe(InsertTextFormat.Snippet);
    expect((items[0]!.textEdit as TextEdit).newText).toBe('Q3 collector base emitter qn');
  });

  it('completes .mo to a .model card per device type with the parameters of record and their defaults', async () => {
    const { items, text } = await check(snippets, TEXT.replace('.end\n', '.mo|\n.end\n'));
    const npn = items.find((i) => i.label === '.model NPN')!;
    expect(items.indexOf(npn)).toBe(0);
    const body = (npn.textEdit as TextEdit).newText;
    expect(body).toMatch(/^\.model QN1 NPN \(IS=\$\{1:1e-16\} BF=\$\{2:100\} /);
    // Gummel–Poon defaults as the family documents them (from memory: IS 1e-16 A, BF 100, BR 1, NF 1, NR 1) — each
    // parameter of record appears once, with the engine's default.
    for (const p of MODEL_PARAMETERS.npn.filter((x) => x.core && Number.isFinite(x.default))) expect(body).toContain(`${p.name}=\${`);
    expect(body).toContain('; VAF not given: no Early effect');
    const card = parse('x', `t\n${inserted(text, npn).split('\n')[11]}\n`, { hasTitle: true });
    expect(card.errors).toEqual([]);
    expect(card.cards.find((c) => c.kind === 'model')).toMatchObject({ kind: 'model', name: { text: 'QN1' } });
    expect(items.map((i) => i.label)).toEqual(expect.arrayContaining(['.model PNP', '.model D', '.model NMOS', '.model PMOS', '.model NJF', '.model PJF', '.model']));
  });
});

describe('completion in fields', () => {
  it('offers the models first in the model field of a Q card, not the M= parallel count', async () => {
    const { items } = await check(snippets, TEXT.replace('.model qn', 'Q7 out b 0 |\n.model qn'));
    expect(items[0]!.label).toBe('qn');
    const m = items.findIndex((i) => i.label === 'M');
    expect(m).toBeGreaterThan(0);
    expect(items.slice(0, m).some((i) => i.label === 'nch')).toBe(false);
    // After the model, only the instance parameters remain.
    const after = await check(snippets, TEXT.replace('.model qn', 'Q7 out b 0 qn |\n.model qn'));
    expect(after.items.map((i) => i.label)).toEqual(['M']);
  });

  it('offers models in the model field of M, J and D cards', async () => {
    expect((await check(snippets, TEXT.replace('.model qn', 'M3 d g 0 0 |\n.model qn'))).items.map((i) => i.label)).toEqual(['nch']);
    expect((await check(snippets, TEXT.replace('.model qn', 'J3 d g 0 |\n.model qn'))).items.map((i) => i.label)).toEqual(['jn']);
    // No diode model in the document: nothing to offer but nothing wrong either.
    expect((await check(snippets, TEXT.replace('.model qn', 'D3 a 0 |\n.model qn'))).items).toEqual([]);
  });

  it('offers node names in node positions, including a node typed since the last analysis', async () => {
    const { items } = await check(snippets, TEXT.replace('.model qn', 'RNEW vcc fresh 1k\nR9 |\n.model qn'));
    const labels = items.map((i) => i.label);
    expect(labels).toEqual(expect.arrayContaining(['vcc', 'b', 'out', '0', 'fresh']));
    expect(items.find((i) => i.label === '0')!.detail).toBe('ground');
    // Nodes inside the subcircuit body are not the top level's.
    expect(labels).not.toContain('in');
  });
});
