// The corner phase in the server's worker reads the netlist's targets as the engine does in one process: a
// target met at the nominal point but not across the spread is reported by both.

import { describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { existsSync } from 'node:fs';
import { WorkerHost } from '../../server/src/worker-host';
import { analyse } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';

const URI = 'file:///corner-targets.cir';

/**
 * An invented NPN sink (about 0.43 mA from 5 V through 10k) whose load carries a target of 430 µA ±5 %, met at the
 * nominal point, beside a ladder of `rungs` resistors: past 400 unknowns the spread is left to the corner phase.
 */
function netlist(rungs: number): string {
  const ladder = Array.from({ length: rungs }, (_, i) => `RX${i} ${i === 0 ? 'vcc' : `x${i}`} ${i === rungs - 1 ? '0' : `x${i + 1}`} 1k`).join('\n');
  return `corner targets\nVCC vcc 0 DC 5\n.model QN NPN (IS=1e-15 BF=120 VAF=80)\nRR vcc r 10k\nQR r r 0 QN\nQO o r 0 QN\nRL vcc o 1k ; expect 430uA ±5%\n${ladder}\n.end\n`;
}

/** The findings about targets, as code and message. */
const targetFindings = (findings: { code: string; message: string }[]) => findings.filter((f) => f.code.startsWith('target-')).map((f) => `${f.code}: ${f.message}`);

describe('targets in the corner phase of the worker', () => {
  it('reports what the engine reports in one process for a target the spread misses', async () => {
    const script = join(__dirname, '../../dist/analysis-worker.js');
    if (!existsSync(script)) throw new Error('dist/analysis-worker.js is missing: run `npm run build` first (npm test does).');
    const text = netlist(450);
    // The plain path: the engine in this thread, corners on, in one pass.
    const direct = analyse({ uri: URI, text, version: 1 }, new MemoryWorkspace({ [URI]: text }), {});
    const expected = targetFindings(direct.findings);
    // The nominal point meets the target; only the spread misses it (a worker given no targets reported nothing).
    expect(expected.some((f) => f.startsWith('target-missed:'))).toBe(false);
    expect(expected.length).toBeGreaterThan(0);
    const host = new WorkerHost({ script, log: () => undefined, hardDeadlineMs: 60000 });
    try {
      host.setDocument(URI, text);
      const { analysis } = await host.analyse(URI, 1, {}, { cornersLater: true });
      const phase = await host.corners(URI, 1);
      expect(phase.stale).toBe(false);
      expect([...targetFindings(analysis.findings), ...targetFindings(phase.findings)]).toEqual(expected);
    } finally {
      host.dispose();
    }
  });
});
