// The built server answers every editor feature within its work budget: with the budget lowered to a count
// (QPOINT_FEATURE_BUDGET_UNITS), a large outline ends with an entry saying it was cut, completion says its list is
// incomplete, a rename that cannot finish is refused, and the cut is logged. A count, not a clock: nothing is timed.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CompletionRequest, DocumentSymbolRequest, RenameRequest, type CompletionList, type DocumentSymbol } from 'vscode-languageserver-protocol/node';
import { startServer, type ServerSession } from './lsp-client';

const URI = 'file:///budget.cir';
// An invented netlist: a supply, 300 divider pairs off it, and a line being typed at the end.
const LINES = ['Budget over LSP', 'VCC vcc 0 DC 5'];
for (let i = 0; i < 300; i++) LINES.push(`RT${i} vcc d${i} 10k`, `RB${i} d${i} 0 4.7k`, `.param g${i}=${i}`);
LINES.push('RNEW d1 ', '.end', '');
const TEXT = LINES.join('\n');

let s: ServerSession;

beforeAll(async () => {
  s = await startServer({ settings: { analysisDelayMs: 0, corners: { enabled: false } }, env: { QPOINT_FEATURE_BUDGET_UNITS: '100' } });
  s.open(URI, TEXT);
  await s.waitFor('the analysis', () => s.diagnostics.get(URI));
});

afterAll(async () => {
  if (s) expect(await s.stop()).toBe(0);
});

describe('editor features within the budget', () => {
  it('ends a cut outline with an entry saying so, and logs the cut', async () => {
    const outline = (await s.connection.sendRequest(DocumentSymbolRequest.type, { textDocument: { uri: URI } })) as DocumentSymbol[];
    expect(outline.length).toBeGreaterThan(1);
    expect(outline.length).toBeLessThan(300);
    expect(outline[outline.length - 1]!.name).toBe('Outline cut short');
    await s.waitFor('the log line', () => s.logs.some((l) => /The outline answer for budget\.cir was cut/.test(l)));
  });

  it('marks the completion list incomplete', async () => {
    const line = LINES.indexOf('RNEW d1 ');
    const answer = (await s.connection.sendRequest(CompletionRequest.type, { textDocument: { uri: URI }, position: { line, character: 'RNEW d1 '.length } })) as CompletionList;
    expect(Array.isArray(answer)).toBe(false);
    expect(answer.isIncomplete).toBe(true);
  });

  it('refuses a rename it cannot finish, rather than renaming some uses', async () => {
    const line = LINES.indexOf('VCC vcc 0 DC 5');
    await expect(s.connection.sendRequest(RenameRequest.type, { textDocument: { uri: URI }, position: { line, character: 5 }, newName: 'supply' })).rejects.toThrow(/rename was not made/);
  });
});
