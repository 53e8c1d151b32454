// Stopping a superseded analysis: the engine's checks (before each stage, before every Newton iteration, between corner
// solves), the worker's shared stop flag, and the main thread's take-in of a result in parts.

import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { existsSync } from 'node:fs';
import { addCorners, analyse, analyseSession, AnalysisStopped } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { AnalysisStoppedError, WorkerHost } from '../../server/src/worker-host';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import { SolveStopped } from '../../shared-analysis/src/solve/newton';

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

  it('asks the check before every Newton iteration, and a solve told to stop ends there', () => {
    const circuit = analyse({ uri: URI, text: TEXT }, ws(), { solve: false }).circuit!;
    let asked = 0;
    const full = new DcSolver(circuit).solve({ shouldStop: () => (asked++, false) });
    expect(full.op.converged).toBe(true);
    // A cold start of a nonlinear circuit takes several iterations; each one asked first.
    expect(full.stats.iterations).toBeGreaterThan(2);
    expect(asked).toBe(full.stats.iterations);
    let calls = 0;
    const solver = new DcSolver(circuit);
    expect(() => solver.solve({ shouldStop: () => ++calls >= 2 })).toThrow(SolveStopped);
    expect(calls).toBe(2);
    // The solver is left usable: the next solve gives the same point as a fresh solver.
    const again = solver.solve({});
    expect(Array.from(again.x)).toEqual(Array.from(full.x));
  });

  it('ends a superseded analysis at exactly the check that says stop, wherever that check is', () => {
    // Every check of a whole analysis, corners included (stages, Newton iterations, corner solves)...
    let total = 0;
    const plain = analyseSession({ uri: URI, text: TEXT }, ws(), {}, { shouldStop: () => (total++, false) }).analysis;
    expect(plain.operatingPoint?.converged).toBe(true);
    expect(plain.structures[0]?.corners?.length).toBeGreaterThan(0);
    // ... is a point where the analysis stops: nothing runs past it (no further check is reached).
    for (let k = 1; k <= total; k++) {
      let calls = 0;
      expect(() => analyseSession({ uri: URI, text: TEXT }, ws(), {}, { shouldStop: () => ++calls >= k })).toThrow(AnalysisStopped);
      expect(calls).toBe(k);
    }
  });

  it('stops the corner phase inside a corner solve too', () => {
    const first = analyseSession({ uri: URI, text: TEXT }, ws(), { corners: { enabled: false } });
    let total = 0;
    addCorners(analyseSession({ uri: URI, text: TEXT }, ws(), { corners: { enabled: false } }).analysis, { solver: first.solver!, nominal: first.nominal!, shouldStop: () => (total++, false) });
    // More checks than corners: each corner solve asks before its Newton iterations as well.
    expect(total).toBeGreaterThan(first.analysis.structures.length * 6);
    for (const k of [1, 2, Math.floor(total / 2), total]) {
      const again = analyseSession({ uri: URI, text: TEXT }, ws(), { corners: { enabled: false } });
      let calls = 0;
      expect(() => addCorners(again.analysis, { solver: again.solver!, nominal: again.nominal!, shouldStop: () => ++calls >= k })).toThrow(AnalysisStopped);
      expect(calls).toBe(k);
    }
  });

  it('stops taking in a superseded result between its parts', async () => {
    const script = join(__dirname, '../../dist/analysis-worker.js');
    if (!existsSync(script)) throw new Error('dist/analysis-worker.js is missing: run `npm run build` first (npm test does).');
    const host = new WorkerHost({ script, log: () => undefined, hardDeadlineMs: 60000 });
    // The mirror plus a ladder of 1,200 resistors: more cards and elements than one part holds.
    const ladder = Array.from({ length: 1200 }, (_, i) => `RL${i} ${i === 0 ? 'vcc' : `l${i}`} ${i === 1199 ? '0' : `l${i + 1}`} 1k`).join('\n');
    const big = TEXT.replace('.end', `${ladder}\n.end`);
    try {
      host.setDocument('file:///stop.cir', big);
      const merged: number[] = [];
      let total = 0;
      const stopped = host.analyse('file:///stop.cir', 1, {}, {
        onPart: (index, parts) => {
          merged.push(index);
          total = parts;
          // An edit arrives while the first part is being taken in.
          if (index === 0) host.stopRunning();
        },
      });
      await expect(stopped).rejects.toBeInstanceOf(AnalysisStoppedError);
      expect(total).toBeGreaterThan(2);
      expect(merged).toEqual([0]);
      // The worker is not restarted and analyses the next version completely.
      const parts: number[] = [];
      const next = await host.analyse('file:///stop.cir', 2, {}, { onPart: (index) => parts.push(index) });
      expect(next.analysis.version).toBe(2);
      expect(next.analysis.circuit?.elements.length).toBe(1205);
      expect(parts.length).toBe(total);
      expect(host.restarts).toBe(0);
    } finally {
      host.dispose();
    }
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
