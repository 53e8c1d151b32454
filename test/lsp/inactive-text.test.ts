// The server tells the client which text does not exist for the analysis (`.if` branches no
// instance takes), so the VS Code client can fade it; and the client's store keeps only well-formed ranges.

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { INACTIVE_TEXT_NOTIFICATION, type InactiveTextParams } from '../../server/src/protocol';
import { InactiveText } from '../../client/src/inactive';
import { startServer, type ServerSession } from './lsp-client';

const URI = 'file:///qpoint-inactive/corner.cir';
const TEXT = `Divider with a corner switch
.param corner=2
.if (corner == 1)
R2 mid 0 9k
.else
R2 mid 0 10k
.endif
V1 top 0 10
R1 top mid 10k
.end
`;

let server: ServerSession;
const received: InactiveTextParams[] = [];

beforeAll(async () => {
  server = await startServer({ settings: { analysisDelayMs: 10, corners: { enabled: false } } });
  server.connection.onNotification(INACTIVE_TEXT_NOTIFICATION, (p: InactiveTextParams) => void received.push(p));
}, 30_000);

afterAll(async () => {
  await server.stop();
});

describe('inactive text', () => {
  it('sends the branch that is not taken, from the line after .if to the .else card', async () => {
    server.open(URI, TEXT, 1);
    const p = await server.waitFor('inactive text', () => received.find((r) => r.uri === URI && r.ranges.length > 0));
    // corner = 2, so `.if (corner == 1)` is not taken: its branch is line 3 (R2 mid 0 9k), ending where `.else` starts.
    expect(p.ranges).toEqual([{ start: { line: 2, character: 17 }, end: { line: 4, character: 0 } }]);
  });

  it('clears it when an edit takes that branch', async () => {
    received.length = 0;
    const flipped = TEXT.replace('corner=2', 'corner=1');
    server.change(URI, 2, [{ text: flipped }]);
    const p = await server.waitFor('updated inactive text', () => received.find((r) => r.uri === URI));
    // Now the .else branch is the one not taken.
    expect(p.ranges).toEqual([{ start: { line: 4, character: 5 }, end: { line: 6, character: 0 } }]);
    received.length = 0;
    server.change(URI, 3, [{ text: 'Divider\nV1 top 0 10\nR1 top 0 10k\n.end\n' }]);
    const cleared = await server.waitFor('cleared inactive text', () => received.find((r) => r.uri === URI));
    expect(cleared.ranges).toEqual([]);
  });
});

describe('the client store of inactive text', () => {
  it('keeps well-formed ranges per document and forgets a document with none', () => {
    const store = new InactiveText();
    const range = { start: { line: 2, character: 17 }, end: { line: 4, character: 0 } };
    expect(store.update({ uri: 'file:///a.cir', ranges: [range, { start: { line: -1, character: 0 }, end: null }] })).toBe('file:///a.cir');
    expect(store.rangesOf('file:///a.cir')).toEqual([range]);
    expect(store.update({ uri: 'file:///a.cir', ranges: [] })).toBe('file:///a.cir');
    expect(store.rangesOf('file:///a.cir')).toEqual([]);
    expect(store.update(null)).toBeUndefined();
    expect(store.update({ uri: 7, ranges: [] })).toBeUndefined();
  });
});
