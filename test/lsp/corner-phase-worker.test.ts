// The worker pushes every part of a large result analysed with `cornersLater`, then solves its corners when the main
// thread asks, once that result is taken in. These tests run a real worker: the phase finished, stopped by a newer
// edit, superseded by a newer analysis, and failed.

import { afterEach, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { existsSync } from 'node:fs';
import { AnalysisStoppedError, WorkerHost } from '../../server/src/worker-host';
import { analyse } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { startServer } from './lsp-client';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { HoverRequest, type MarkupContent } from 'vscode-languageserver-protocol/node';

const URI = 'file:///corner-phase.cir';

/** Each test analyses a result of thousands of elements and its corners in a real worker; the limit only stops a hang. */
const TIMEOUT_MS = 120_000;

/**
 * An invented NPN sink (about 0.43 mA from 5 V through `rr`) whose load carries a target of 430 µA ±5 %, beside a ladder of
 * `rungs` resistors: with 7,000 rungs the result has more than 32 parts (taken in slices), with 300 it travels whole.
 */
function netlist(rungs: number, rr = '10k'): string {
  const ladder = Array.from({ length: rungs }, (_, i) => `RX${i} ${i === 0 ? 'vcc' : `x${i}`} ${i === rungs - 1 ? '0' : `x${i + 1}`} 1k`).join('\n');
  return `corners ahead\nVCC vcc 0 DC 5\n.model QN NPN (IS=1e-15 BF=120 VAF=80)\nRR vcc r ${rr}\nQR r r 0 QN\nQO o r 0 QN\nRL vcc o 1k ; expect 430uA ±5%\n${ladder}\n.end\n`;
}

/** A finding as the tests compare it. */
const shown = (findings: { code: string; message: string; span: { start: number } }[]) => findings.map((f) => `${f.span.start} ${f.code}: ${f.message}`);

/** The independent computation: the engine in this thread, corners on (one pass) and off (the nominal result). */
function direct(text: string, version: number): { all: string[]; nominal: string[] } {
  const ws = () => new MemoryWorkspace({ [URI]: text });
  return {
    all: shown(analyse({ uri: URI, text, version }, ws(), {}).findings),
    nominal: shown(analyse({ uri: URI, text, version }, ws(), { corners: { enabled: false } }).findings),
  };
}

function workerHost(fault?: 'hold' | 'throw'): WorkerHost {
  const script = join(__dirname, '../../dist/analysis-worker.js');
  if (!existsSync(script)) throw new Error('dist/analysis-worker.js is missing: run `npm run build` first (npm test does).');
  // The worker reads its environment when it starts: the planted fault reaches this worker only.
  if (fault) process.env['QPOINT_TEST_CORNER_FAULT'] = fault;
  try {
    return new WorkerHost({ script, log: () => undefined, hardDeadlineMs: 90_000 });
  } finally {
    delete process.env['QPOINT_TEST_CORNER_FAULT'];
  }
}

let host: WorkerHost | undefined;
afterEach(() => host?.dispose());

describe('the corner phase of a result taken in', () => {
  it('follows a large result whose parts arrived without being asked for, and a newer edit stops it', async () => {
    // Held at its first check, the phase keeps the worker busy: a take-in that asked the worker for parts would wait for it.
    host = workerHost('hold');
    const text = netlist(7000);
    const expected = direct(text, 1);
    host.setDocument(URI, text);
    let parts = 0;
    const { analysis } = await host.analyse(URI, 1, {}, { cornersLater: true, onPart: () => parts++ });
    expect(parts).toBeGreaterThan(32);
    expect(analysis.circuit?.elements.length).toBe(7005);
    expect(shown(analysis.findings)).toEqual(expected.nominal);
    // The phase starts when asked for and is held at its first check; a newer edit stops it there, and the request
    // learns it was stopped.
    const asked = host.corners(URI, 1, { of: analysis });
    host.stopRunning();
    await expect(asked).rejects.toBeInstanceOf(AnalysisStoppedError);
    // Nothing is left to collect, and the worker was not restarted.
    expect((await host.corners(URI, 1, { of: analysis })).stale).toBe(true);
    expect(host.restarts).toBe(0);
  }, TIMEOUT_MS);

  it('gives the corner findings of one pass for a large and a small result, and only to the analysis it was solved for', async () => {
    host = workerHost();
    const large = netlist(7000);
    host.setDocument(URI, large);
    const first = (await host.analyse(URI, 1, {}, { cornersLater: true })).analysis;
    const expected = direct(large, 1);
    // Some corner findings exist (the spread misses the target), so the comparison below can fail.
    expect(expected.all.length).toBeGreaterThan(expected.nominal.length);
    const phase = await host.corners(URI, 1, { of: first });
    expect(phase.stale).toBe(false);
    expect([...shown(first.findings), ...shown(phase.findings)].sort()).toEqual([...expected.all].sort());
    // Two analyses of one version (a settings change analyses the same text again): the corners belong to the second.
    const small = netlist(300, '9.1k');
    host.setDocument(URI, small);
    const again = direct(small, 2);
    const a = (await host.analyse(URI, 2, {}, { cornersLater: true })).analysis;
    const b = (await host.analyse(URI, 2, {}, { cornersLater: true })).analysis;
    expect((await host.corners(URI, 2, { of: a })).stale).toBe(true);
    expect((await host.corners(URI, 1, { of: first })).stale).toBe(true);
    const own = await host.corners(URI, 2, { of: b });
    expect(own.stale).toBe(false);
    expect([...shown(b.findings), ...shown(own.findings)].sort()).toEqual([...again.all].sort());
  }, TIMEOUT_MS);

  it('is superseded by the analysis of a newer edit, whose own phase the next request collects', async () => {
    host = workerHost();
    const text = netlist(7000);
    const edited = text.replace('RR vcc r 10k', 'RR vcc r 12k');
    host.setDocument(URI, text);
    const first = (await host.analyse(URI, 1, {}, { cornersLater: true })).analysis;
    // The edit arrives before the first phase is collected, as the server sees it: the text, then the stop.
    host.setDocument(URI, edited);
    host.stopRunning();
    const second: Analysis = (await host.analyse(URI, 2, {}, { cornersLater: true, held: first })).analysis;
    expect((await host.corners(URI, 1, { of: first })).stale).toBe(true);
    const phase = await host.corners(URI, 2, { of: second });
    expect(phase.stale).toBe(false);
    const expected = direct(edited, 2);
    expect(shown(second.findings)).toEqual(expected.nominal);
    expect([...shown(second.findings), ...shown(phase.findings)].sort()).toEqual([...expected.all].sort());
  }, TIMEOUT_MS);

  it('reports a phase that failed as a failure of the corners alone: the nominal result stands and the worker goes on', async () => {
    host = workerHost('throw');
    const text = netlist(300);
    host.setDocument(URI, text);
    const { analysis } = await host.analyse(URI, 1, {}, { cornersLater: true });
    expect(shown(analysis.findings)).toEqual(direct(text, 1).nominal);
    const failed = host.corners(URI, 1, { of: analysis });
    await expect(failed).rejects.toThrow(/internal error.*planted corner-phase fault/s);
    await expect(failed).rejects.not.toBeInstanceOf(AnalysisStoppedError);
    const next = await host.analyse(URI, 2, { corners: { enabled: false } });
    expect(next.analysis.version).toBe(2);
    expect(host.restarts).toBe(0);
  }, TIMEOUT_MS);
});

describe('the server hovering a structure once its corners are in', () => {
  it('shows a derived voltage with its range across the corners and its drift, as the one pass does', async () => {
    // An invented NPN mirror beside a VBE multiplier (RA over RB on QM's base): VCE = VBE·(1 + RA/RB), about 2.3 V.
    const text = 'voltage corners\nVCC vcc 0 5\nR1 vcc r 4.3k\nQ1 r r 0 QN\nQ2 o r 0 QN\nRL vcc o 2k\nRM vcc c 2k\nRA c b 2.2k\nRB b 0 1k\nQM c b 0 QN\n.model QN NPN (IS=1e-15 BF=100 VAF=80)\n.end\n';
    const server = await startServer({ settings: { analysisDelayMs: 0 } });
    try {
      server.open(URI, text, 1);
      await server.waitFor('the corner phase', () => server.logs.some((l) => l.includes('Solved the corners of')) && (server.publishCount.get(URI) ?? 0) >= 2, TIMEOUT_MS);
      // The independent computation: the engine's one pass in this thread, corners on.
      const onePass = analyse({ uri: URI, text, version: 1 }, new MemoryWorkspace({ [URI]: text }), {});
      const offset = text.indexOf('QM c b') + 1;
      const want = hoverAt(onePass, URI, offset)!.markdown;
      expect(want).toMatch(/ V to .* V across the corners; drift .* from the cold and hot corners/);
      const h = await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: URI }, position: { line: text.slice(0, offset).split('\n').length - 1, character: 1 } });
      expect(((h?.contents ?? { value: '' }) as MarkupContent).value).toBe(want);
    } finally {
      await server.stop();
    }
  }, TIMEOUT_MS);
});

describe('the server publishing corner findings solved ahead', () => {
  it('publishes for each version only findings of that version, and at the end every finding of one pass', async () => {
    const server = await startServer({ settings: { analysisDelayMs: 0 } });
    try {
      // Large (taken in slices): the corner findings may go out before the result is wholly taken in.
      const texts = [netlist(7000), netlist(7000, '10.2k'), netlist(7000, '9.9k')];
      const expected = texts.map((t, v) => new Set(direct(t, v + 1).all.map((f) => f.slice(f.indexOf(' ') + 1))));
      const solved = () => server.logs.filter((l) => l.includes('Solved the corners of')).length;
      server.open(URI, texts[0]!, 1);
      await server.waitFor('the corner findings of version 1', () => solved() >= 1, TIMEOUT_MS);
      // Two edits in quick succession: the first one's analysis or corner phase is superseded.
      server.change(URI, 2, [{ text: texts[1]! }]);
      server.change(URI, 3, [{ text: texts[2]! }]);
      await server.waitFor('the corner findings of version 3', () => server.logs.some((l) => l.includes('Solved the corners of')) && server.diagnostics.get(URI)?.version === 3 && solved() >= 2 && server.diagnosticsOf(URI).length === expected[2]!.size, TIMEOUT_MS);
      // The independent computation: the engine in this thread, corners on, on each version's text.
      for (const p of server.published.filter((x) => x.uri === URI)) {
        const mine = p.diagnostics.map((d) => `${d.code}: ${d.message}`);
        for (const m of mine) expect(expected[p.version! - 1]!.has(m), `version ${p.version}: ${m}`).toBe(true);
      }
      expect(new Set(server.diagnosticsOf(URI).map((d) => `${d.code}: ${d.message}`))).toEqual(expected[2]);
      // Every version has a finding of the corner phase alone (the spread misses the target the nominal point meets),
      // with the version's own figures: one given to another version would show above.
      for (const [v, t] of texts.entries()) expect(expected[v]!.size).toBeGreaterThan(direct(t, v + 1).nominal.length);
      // The structures' corners and spread are added over slices after the findings: the hovers of the mirror's devices
      // come to read as the engine's one pass reads them (corner and spread lines included).
      const last = texts[2]!;
      const onePass = analyse({ uri: URI, text: last, version: 3 }, new MemoryWorkspace({ [URI]: last }), {});
      for (const needle of ['QO o r', 'QR r r', 'RL vcc o']) {
        const offset = last.indexOf(needle) + 1;
        const want = hoverAt(onePass, URI, offset)!.markdown;
        expect(want).toMatch(/corner|spread|σ/i);
        const line = last.slice(0, offset).split('\n').length - 1;
        const position = { line, character: 1 };
        let got = '';
        for (let tries = 0; tries < 200 && got !== want; tries++) {
          const h = await server.connection.sendRequest(HoverRequest.type, { textDocument: { uri: URI }, position });
          got = ((h?.contents ?? { value: '' }) as MarkupContent).value;
          if (got !== want) await new Promise((r) => setTimeout(r, 50));
        }
        expect(got).toBe(want);
      }
    } finally {
      await server.stop();
    }
  }, TIMEOUT_MS);
});
