// A stage after the operating point that stops on an internal defect (the corner analysis, the tolerance spread) leaves
// its results out and says so in one located finding, instead of a document that silently lacks them.

import { describe, expect, it } from 'vitest';
import { addCorners, analyseSession, variationOf } from '../../../shared-analysis/src/service';
import { readTargets } from '../../../shared-analysis/src/checks/targets';
import { resolveOptions } from '../../../shared-analysis/src/analysis';
import type { Structure } from '../../../shared-analysis/src/structures/types';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

const URI = '/part-failed.cir';

// An invented two-transistor NPN mirror: 10 kΩ reference from 5 V, a 2.2 kΩ load on the output.
const MIRROR = `Part-failure mirror
VCC vcc 0 DC 5
RREF vcc ref 10k
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 2.2k
.model QN NPN (IS=1e-15 BF=150 VAF=80)
.end
`;

function firstPhase() {
  return analyseSession({ uri: URI, text: MIRROR }, new MemoryWorkspace({ [URI]: MIRROR }), { corners: { enabled: false } });
}

describe('a stage that stops on an internal defect', () => {
  it('the corner phase: one warning naming the stage and the error, the first phase left standing', () => {
    const s = firstPhase();
    expect(s.analysis.structures.length).toBeGreaterThan(0);
    const before = JSON.stringify(s.analysis.findings);
    // A structure the corner phase cannot read (no outputs, no devices): the kind of internal defect the guard is for.
    // (A solve that throws is not one: the corner phase counts that corner as not converged, with its own finding.)
    s.analysis.structures.push({ id: 'broken' } as Structure);
    const extra = addCorners(s.analysis, { solver: s.solver!, nominal: s.nominal! });
    const failed = extra.filter((f) => f.code === 'analysis-part-failed');
    expect(failed).toHaveLength(1);
    expect(failed[0]).toMatchObject({ severity: 'warning', uri: URI, span: { start: 0, end: 0 }, data: { part: 'corner analysis' } });
    expect(failed[0].message).toMatch(/^The corner analysis stopped because of an internal error \(.+\); its results are left out/);
    // The first phase's findings are untouched (a host may have published indices into them).
    expect(JSON.stringify(s.analysis.findings)).toBe(before);
  });

  it('the same corner phase with a working solver raises no such finding (a healthy circuit gets no warning)', () => {
    const s = firstPhase();
    const extra = addCorners(s.analysis, { solver: s.solver!, nominal: s.nominal! });
    expect(extra.filter((f) => f.code === 'analysis-part-failed')).toEqual([]);
  });

  it('the spread: the failure reaches the caller, and no result is returned', () => {
    const s = firstPhase();
    const { circuit, documents } = s.analysis;
    // A structure list the spread cannot read (an entry without outputs or devices): the kind of defect the guard is for.
    const broken = [{} as Structure];
    const seen: unknown[] = [];
    const detail = variationOf(circuit!, broken, documents, s.solver!, s.nominal!, readTargets(documents).targets, resolveOptions({}), undefined, (e) => seen.push(e));
    expect(detail).toBeUndefined();
    expect(seen).toHaveLength(1);
    expect(seen[0]).toBeInstanceOf(Error);
  });
});
