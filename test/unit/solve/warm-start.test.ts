// A re-analysis after a value edit starts Newton from the last version's solution: it must give what a cold
// analysis of the same text gives (the comparison is the check; the cold analysis is the independent computation),
// use fewer iterations, and not be used where it could change the answer (other unknowns, a self-biased loop).

import { describe, expect, it } from 'vitest';
import { analyseSession, type AnalysisSession } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { unknownsFingerprint } from '../../../shared-analysis/src/solve/warm-start';
import { expectSameAnalysis } from './same-analysis';

const URI = '/t/warm.cir';

function run(text: string, previous?: AnalysisSession, corners = true): AnalysisSession {
  return analyseSession({ uri: URI, text }, new MemoryWorkspace({ [URI]: text }), { corners: { enabled: corners } }, previous?.warmStart ? { warmStart: previous.warmStart } : {});
}

// An invented two-output NPN mirror with a Widlar output and loads, and a resistor divider.
const MIRROR = (rref: string) => `warm start mirror
VCC vcc 0 DC 12
RREF vcc ref ${rref}
Q1 ref ref 0 QN
Q2 a ref 0 QN
Q3 b ref e3 QN
RE3 e3 0 1.2k
RLA vcc a 3.3k
RLB vcc b 10k
RD1 vcc d 22k
RD2 d 0 4.7k
.model QN NPN (IS=2e-15 BF=140 VAF=90)
.end
`;

// An invented ΔVBE cell: two NPNs of area ratio 8 closed by a PNP mirror, with a start-up resistor.
const SELF_BIASED = (r: string) => `warm start self-biased cell
.model qn npn (bf=100)
.model qp pnp (bf=50)
VCC vcc 0 5
Q1 n1 n1 0 qn
Q2 p n1 x qn area=8
R x 0 ${r}
QP1 p p vcc qp
QP2 n1 p vcc qp
RSTART vcc n1 1meg
.end
`;

describe('warm start of a re-analysis', () => {
  it('gives the cold analysis of the edited text in fewer Newton iterations', () => {
    const v1 = run(MIRROR('10k'));
    expect(v1.warmStart).toBeDefined();
    for (const rref of ['10.5k', '8.2k', '15k']) {
      const cold = run(MIRROR(rref));
      const warm = run(MIRROR(rref), v1);
      expect(warm.analysis.operatingPoint!.converged).toBe(true);
      expectSameAnalysis(warm, cold);
      expect(warm.analysis.operatingPoint!.iterations).toBeLessThan(cold.analysis.operatingPoint!.iterations);
    }
  });

  it('keeps the fingerprint of the unknowns across a value edit and changes it with the topology', () => {
    const fp = (text: string) => unknownsFingerprint(run(text, undefined, false).analysis.circuit!);
    expect(fp(MIRROR('10k'))).toBe(fp(MIRROR('47k')));
    // Another node name, or the same values wired differently, is another set of unknowns.
    expect(fp(MIRROR('10k'))).not.toBe(fp(MIRROR('10k').replace('RD2 d 0', 'RD2 dd 0')));
    expect(fp(MIRROR('10k'))).not.toBe(fp(MIRROR('10k').replace('RLB vcc b', 'RLB vcc a')));
    // A 0 Ω resistor is solved with a current unknown of its own.
    expect(fp(MIRROR('10k'))).not.toBe(fp(MIRROR('10k').replace('RE3 e3 0 1.2k', 'RE3 e3 0 0')));
  });

  it('starts cold when the unknowns changed', () => {
    const v1 = run(MIRROR('10k'));
    const edited = MIRROR('10k').replace('RD2 d 0 4.7k', 'RD2 d 0 4.7k\nRD3 d f 1k\nRD4 f 0 1k');
    const cold = run(edited);
    const warm = run(edited, v1);
    expectSameAnalysis(warm, cold);
    expect(warm.analysis.operatingPoint!.iterations).toBe(cold.analysis.operatingPoint!.iterations);
  });

  it('starts cold for a circuit with a self-biased loop, which also balances at zero current', () => {
    const v1 = run(SELF_BIASED('1k'));
    expect(v1.analysis.structures.some((s) => s.startup)).toBe(true);
    const cold = run(SELF_BIASED('1.1k'));
    const warm = run(SELF_BIASED('1.1k'), v1);
    expectSameAnalysis(warm, cold);
    expect(warm.analysis.operatingPoint!.iterations).toBe(cold.analysis.operatingPoint!.iterations);
  });
});
