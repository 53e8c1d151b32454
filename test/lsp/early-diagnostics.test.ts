// A small result's diagnostics go out from its header when the netlist's last small merge fit in one slice (requests
// that arrive until the rest is merged wait for it), else when the whole of it is taken in and accepted (requests that
// arrive before then answer from the last analysis, whose diagnostics the editor still has): either way each answers
// from the analysis whose diagnostics the editor has. Checked through the built server over stdio, against the
// engine's cold analysis of each edited text in this process (the first versions take the second way, later ones
// mostly the first).

import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { CodeActionRequest, HoverRequest, PublishDiagnosticsNotification, type CodeAction, type Hover, type MarkupContent, type PublishDiagnosticsParams } from 'vscode-languageserver-protocol/node';
import { analyse } from '../../shared-analysis/src/service';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { startServer, type ServerSession } from './lsp-client';

const URI = 'file:///qpoint-early/mirror.cir';

/** An invented NPN mirror: the reference resistor sets about 0.9 mA; a load of 10 kΩ or more saturates the output from 5 V. */
function netlist(reference: string, load: string): string {
  return `Mirror with a load\nVCC vcc 0 5\nRREF vcc r ${reference}\nQ1 r r 0 QN\nQ2 o r 0 QN\nRL vcc o ${load}\n.model QN NPN (IS=1e-15 BF=100 VAF=80)\n.end\n`;
}

/** Value edits of one resistor at a time, as an editor sends them (each analysed through the worker's value-edit path). */
const EDITS: [string, string][] = [
  ['4.7k', '10k'],
  ['4.7k', '2.2k'],
  ['5.1k', '2.2k'],
  ['5.1k', '12k'],
  ['3.9k', '12k'],
  ['3.9k', '1.5k'],
  ['4.7k', '1.5k'],
  ['4.7k', '10k'],
];

/** What a request sent the moment the first diagnostics of a version arrive is answered. */
interface AtArrival {
  published: PublishDiagnosticsParams;
  hover: Hover | null;
  fixes: CodeAction[];
}

let server: ServerSession;
/** Per version, the answers to the requests sent on the arrival of its first diagnostics. */
const arrivals = new Map<number, Promise<AtArrival>>();

beforeAll(async () => {
  server = await startServer({ settings: { analysisDelayMs: 0 } });
  // This client asks at once, inside the notification's handler, as an editor may.
  server.connection.onNotification(PublishDiagnosticsNotification.type, (p) => {
    if (p.uri !== URI || p.version === undefined || arrivals.has(p.version)) return;
    const hover = server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: URI }, position: { line: 2, character: 1 } }) as Promise<Hover | null>;
    const out = p.diagnostics.find((d) => d.code === 'mirror-output-out-of-region');
    const fixes = out ? (server.connection.sendRequest(CodeActionRequest.type, { textDocument: { uri: URI }, range: out.range, context: { diagnostics: [out] } }) as Promise<CodeAction[]>) : Promise.resolve([]);
    arrivals.set(p.version, Promise.all([hover, fixes]).then(([h, f]) => ({ published: p, hover: h, fixes: (f ?? []).filter((a) => a.kind === 'quickfix') })));
  });
}, 30_000);

afterAll(async () => {
  expect(await server.stop()).toBe(0);
});

/** The engine's cold analysis of `text` in this process, nominal only (the server publishes the corner findings later). */
function cold(text: string) {
  return analyse({ uri: URI, text, version: 1 }, new MemoryWorkspace({ [URI]: text }), { corners: { enabled: false } });
}

describe("a small result's diagnostics", () => {
  it('are the cold analysis findings, and a hover or code action sent on their arrival answers from that version', async () => {
    let text = netlist(...EDITS[0]!);
    server.open(URI, text, 1);
    for (let k = 0; k < EDITS.length; k++) {
      const version = k + 1;
      if (k > 0) {
        text = netlist(...EDITS[k]!);
        server.change(URI, version, [{ text }]);
      }
      const at = await server.waitFor(`the requests on the diagnostics of version ${version}`, () => arrivals.get(version));
      const { published, hover, fixes } = await at;
      const direct = cold(text);
      expect(published.diagnostics.map((d) => `${d.code}: ${d.message}`)).toEqual(direct.findings.map((f) => `${f.code}: ${f.message}`));
      // The hover's first line holds the resistor's current and voltage, which every edit here changes; the corner
      // phase (which may be in by now) adds lines below it.
      const expected = hoverAt(direct, URI, text.indexOf('RREF') + 1)!.markdown;
      const shown = (hover?.contents as MarkupContent | undefined)?.value ?? '';
      expect(shown.split('\n')[0]).toBe(expected.split('\n')[0]);
      expect(shown).toContain(`RREF, resistor, ${EDITS[k]![0].replace('k', ' kΩ')}`);
      // A saturated output's finding is sized by the worker from the analysis of its own version: on arrival, the
      // code action finds that analysis (one version behind, it would offer nothing for a diagnostic it does not hold).
      const saturated = direct.findings.some((f) => f.code === 'mirror-output-out-of-region');
      expect(saturated).toBe(Number.parseFloat(EDITS[k]![1]) >= 10);
      if (saturated) expect(fixes.length, `version ${version}`).toBeGreaterThan(0);
    }
  }, 120_000);

  it('still serve requests when an edit arrives on their arrival: the analysis that was published is the one held', async () => {
    // A new document: the first diagnostics arrive, and at once the editor sends an edit and a hover (typing on). A
    // ladder of 1,500 resistors makes the merge take several slices (when the diagnostics went out before it, the edit
    // arrived in it).
    const uri = 'file:///qpoint-early/first.cir';
    const ladder = Array.from({ length: 1500 }, (_, i) => `RL${i} ${i === 0 ? 'vcc' : `l${i}`} ${i === 1499 ? '0' : `l${i + 1}`} 1k`).join('\n');
    const withLadder = (text: string) => text.replace('.end', `${ladder}\n.end`);
    const first = withLadder(netlist('4.7k', '2.2k'));
    const hover = new Promise<Hover | null>((resolve) => {
      server.connection.onNotification(PublishDiagnosticsNotification.type, (p) => {
        if (p.uri !== uri || p.version !== 1) return;
        server.change(uri, 2, [{ text: withLadder(netlist('5.1k', '2.2k')) }]);
        resolve(server.connection.sendRequest(HoverRequest.type, { textDocument: { uri }, position: { line: 2, character: 1 } }) as Promise<Hover | null>);
      });
    });
    server.open(uri, first, 1);
    // Answered from version 1, whose diagnostics the editor has (once, the superseded result was dropped and the
    // hover found no analysis of the document at all).
    const shown = ((await hover)?.contents as MarkupContent | undefined)?.value ?? '';
    expect(shown.split('\n')[0]).toBe(hoverAt(cold(first), URI, first.indexOf('RREF') + 1)!.markdown.split('\n')[0]);
  }, 60_000);
});
