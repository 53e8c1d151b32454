// After a chain of edits the server shows what it shows for the edited text opened afresh: the edited result reuses the
// held one (its cards, elements and structures travel as runs of the held ones, the worker's engine state is the last
// edit's), the cold one reuses nothing. Diagnostics, hovers, inlay hints and code actions, once the corner phase is in.

import { describe, expect, it } from 'vitest';
import { CodeActionRequest, DidCloseTextDocumentNotification, HoverRequest, InlayHintRequest, type Diagnostic } from 'vscode-languageserver-protocol/node';
import { startServer, type ServerSession } from './lsp-client';
import { rng } from '../seeded-random';
import { expectSame } from '../unit/solve/same-analysis';

const URI = 'file:///edit-equals-cold.cir';

/** Two servers, a corner phase per edit on each; the limit only stops a hang. */
const TIMEOUT_MS = 180_000;

/**
 * An invented array of NPN sinks (every fifth a Widlar source, every ninth load with a current target it misses, so
 * sizing fixes are offered) beside a ladder: over 400 unknowns, so the spread is left to the corner phase and a value
 * edit's structures travel as runs of the held ones.
 */
function netlist(): string[] {
  const lines = ['Edited against cold', 'VCC vcc 0 DC 9', '.model QN NPN (IS=1e-15 BF=110 VAF=60)'];
  for (let k = 0; k < 90; k++) {
    const widlar = k % 5 === 2;
    const target = k % 9 === 4 ? ' ; expect 0.5mA ±1%' : '';
    lines.push(`RR${k} vcc r${k} ${20 + (k % 9)}k`, `QR${k} r${k} r${k} 0 QN`, widlar ? `QO${k} o${k} r${k} e${k} QN` : `QO${k} o${k} r${k} 0 QN`, `RL${k} vcc o${k} ${2 + (k % 4)}.2k${target}`);
    if (widlar) lines.push(`RE${k} e${k} 0 ${100 + 10 * k}`);
  }
  for (let k = 0; k < 250; k++) lines.push(`RX${k} ${k === 0 ? 'vcc' : `x${k}`} ${k === 249 ? '0' : `x${k + 1}`} 1k`);
  lines.push('.end', '');
  return lines;
}

/** How many corner phases a server has finished and put on its result. */
const cornerPhases = (server: ServerSession) => server.logs.filter((l) => l.includes('Solved the corners of')).length;

/**
 * Waits until `server` has finished one corner phase more than `before` and published version `version` of URI with its
 * corner findings: a version's diagnostics go out once with the nominal findings, and again after the phase's log line.
 */
async function settled(server: ServerSession, version: number, before: number): Promise<void> {
  const publications = () => server.published.filter((p) => p.uri === URI && p.version === version).length;
  await server.waitFor(`version ${version} with its corners`, () => cornerPhases(server) > before && publications() >= 2 && server.diagnostics.get(URI)?.version === version, TIMEOUT_MS);
}

/** What the editor shows of the document: diagnostics, hovers at the given lines, inlay hints and the code actions on each diagnostic. */
async function shown(server: ServerSession, lines: number[], lineCount: number): Promise<unknown> {
  const c = server.connection;
  const textDocument = { uri: URI };
  const diagnostics: Diagnostic[] = server.diagnosticsOf(URI);
  const hovers = [];
  for (const line of lines) hovers.push(await c.sendRequest(HoverRequest.type, { textDocument, position: { line, character: 1 } }));
  const inlays = await c.sendRequest(InlayHintRequest.type, { textDocument, range: { start: { line: 0, character: 0 }, end: { line: lineCount, character: 0 } } });
  const actions = [];
  for (const d of diagnostics) actions.push(await c.sendRequest(CodeActionRequest.type, { textDocument, range: d.range, context: { diagnostics: [d] } }));
  return { diagnostics, hovers, inlays, actions };
}

describe('a chain of edits against the edited text opened afresh', () => {
  it('shows the same diagnostics, hovers, inlay hints and code actions once the corners are in (seeded)', async () => {
    const edited = await startServer({ settings: { analysisDelayMs: 0 } });
    const cold = await startServer({ settings: { analysisDelayMs: 0 } });
    try {
      const lines = netlist();
      const random = rng(20261207);
      const resistors = lines.flatMap((l, i) => (/^R[RLE]\d/.test(l) ? [i] : []));
      let before = cornerPhases(edited);
      edited.open(URI, lines.join('\n'), 1);
      await settled(edited, 1, before);
      let sizingOffered = 0;
      for (let round = 0; round < 6; round++) {
        const version = round + 2;
        // A resistor's number, of the same or another length (a value edit); every third round a comment line added
        // above the cells too (every span past it moves).
        const line = resistors[Math.floor(random() * resistors.length)]!;
        const value = random() < 0.5 ? `${10 + Math.floor(random() * 90)}k` : `${1 + Math.floor(random() * 9)}.${Math.floor(random() * 10)}k`;
        const old = lines[line]!;
        const at = old.indexOf(' ', old.indexOf(' ', old.indexOf(' ') + 1) + 1) + 1;
        const end = old.indexOf(' ', at) < 0 ? old.length : old.indexOf(' ', at);
        const changes = [{ range: { start: { line, character: at }, end: { line, character: end } }, text: value }];
        lines[line] = old.slice(0, at) + value + old.slice(end);
        if (round % 3 === 2) {
          changes.push({ range: { start: { line: 3, character: 0 }, end: { line: 3, character: 0 } }, text: `* round ${round}\n` });
          lines.splice(3, 0, `* round ${round}`);
          for (let k = 0; k < resistors.length; k++) resistors[k]! += 1;
        }
        before = cornerPhases(edited);
        edited.change(URI, version, changes);
        await settled(edited, version, before);
        // The cold result: the text opened afresh (closing it drops everything the worker kept of it).
        const beforeCold = cornerPhases(cold);
        if (round > 0) await cold.connection.sendNotification(DidCloseTextDocumentNotification.type, { textDocument: { uri: URI } });
        cold.open(URI, lines.join('\n'), version);
        await settled(cold, version, beforeCold);
        // Hovers on the edited line's cell and on lines drawn at random.
        const cell = lines.findIndex((l, i) => i > line - 6 && /^RR\d/.test(l));
        const asked = [...Array.from({ length: 6 }, (_, k) => cell + k), ...Array.from({ length: 30 }, () => 3 + Math.floor(random() * (lines.length - 5)))];
        const want = await shown(cold, asked, lines.length);
        // Every text exactly; the numbers a finding carries for fixes and reports up to the rounding of Newton's other
        // start (the edited result's point is solved from the last one's), as the engine's own incremental tests compare them.
        expectSame(await shown(edited, asked, lines.length), want, `round ${round}`, 1e-9);
        sizingOffered += (want as { actions: unknown[][] }).actions.flat().length;
      }
      // The comparison covered code actions: the missed targets offer sizing fixes.
      expect(sizingOffered).toBeGreaterThan(0);
    } finally {
      await edited.stop();
      await cold.stop();
    }
  }, TIMEOUT_MS);
});
