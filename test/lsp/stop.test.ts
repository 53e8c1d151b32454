// Stopping a superseded analysis: the engine's checks (before each stage, between corner solves) and the worker's shared stop flag.

import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { existsSync } from 'node:fs';
import { addCorners, analyse, analyseSession, AnalysisStopped } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { AnalysisStoppedError, WorkerHost } from '../../server/src/worker-host';

const URI = '/stop.cir';
// An invented NPN mirror with a load.
const TEXT = 'stop test\nVCC vcc 0 5\nR1 vcc r 4.3k\nQ1 r r 0 QN\nQ2 o r 0 QN\nRL vcc o 2k\n.model QN NPN (IS=1e-15 BF=100 VAF=80)\n.end\n';
const ws = () => new MemoryWorkspace({ [URI]: TEXT });

describe('stopping an analysis', () => {
  it('throws AnalysisStopped at the first check that says stop, and changes nothing when none does', () => {
    let asked = 0;
    expect(() => analyseSession({ uri: URI, text: TEXT }, ws(), {}, { shouldStop: () => ++asked > 3 })).toThrow(AnalysisStopped);
    expect(asked).toBe(4);
    const plain = analyse({ uri: URI, text: TEXT }, ws());
    const checked = analyseSession({ uri: URI, text: TEXT }, ws(), {}, { shouldStop: () => false }).analysis;
    expect(checked.findings).toEqual(plain.findings);
    expect(checked.structures.map((s) => s.corners)).toEqual(plain.structures.map((s) => s.corners));
  });

  it('stops the corner phase between corner solves', () => {
    const first = analyseSession({ uri: URI, text: TEXT }, ws(), { corners: { enabled: false } });
    let solves = 0;
    expect(() => addCorners(first.analysis, { solver: first.solver!, nominal: first.nominal!, shouldStop: () => ++solves > 5 })).toThrow(AnalysisStopped);
    expect(solves).toBe(6);
  });

  it('lets the server stop the running analysis through the worker, and analyse the next text', async () => {
    const script = join(__dirname, '../../dist/analysis-worker.js');
    if (!existsSync(script)) throw new Error('dist/analysis-worker.js is missing: run `npm run build` first (npm test does).');
    const host = new WorkerHost({ script, log: () => undefined, hardDeadlineMs: 60000 });
    try {
      host.setDocument('file:///stop.cir', TEXT);
      const stopped = host.analyse('file:///stop.cir', 1, {});
      host.stopRunning();
      await expect(stopped).rejects.toBeInstanceOf(AnalysisStoppedError);
      const next = await host.analyse('file:///stop.cir', 2, {});
      expect(next.analysis.version).toBe(2);
      expect(next.analysis.structures.length).toBe(1);
      expect(host.restarts).toBe(0);
    } finally {
      host.dispose();
    }
  });
});
