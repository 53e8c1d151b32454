// The target-current notation: reading valid and malformed annotations (located findings), and checking targets.

import { describe, expect, it } from 'vitest';
import { resolveOptions, type AnalysisOptions } from '../../../shared-analysis/src/analysis';
import { runCorners } from '../../../shared-analysis/src/checks/corners';
import { analyseStructures } from '../../../shared-analysis/src/checks/structures';
import { checkTargets, readTargets, type Target } from '../../../shared-analysis/src/checks/targets';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { analyseSession, attachAllSizingFixes } from '../../../shared-analysis/src/service';
import { MemoryWorkspace, type Finding } from '../../../shared-analysis/src/types';

interface ExpectedTarget {
  subject: string;
  kind: 'name' | 'card';
  current: number;
  tolerance?: number;
  cornerTolerance?: number;
}

interface ExpectedProblem {
  code: string;
  /** The text the finding's span must cover exactly. */
  spanText: string;
  /** A fragment the message must contain. */
  says: string;
}

/**
 * The one helper for reading: the netlist (title line first), the targets expected in order,
 * and the findings expected in order.
 */
function check(netlist: string, expected: { targets: ExpectedTarget[]; problems?: ExpectedProblem[] }): Target[] {
  const doc = parse('mem://t.cir', netlist, { hasTitle: true });
  const { targets, findings } = readTargets({ [doc.uri]: doc });
  expect(
    targets.map((t) => ({
      subject: t.subject.name,
      kind: t.subject.kind,
      current: t.current,
      ...(t.tolerance !== undefined ? { tolerance: t.tolerance } : {}),
      ...(t.cornerTolerance !== undefined ? { cornerTolerance: t.cornerTolerance } : {}),
    })),
  ).toEqual(expected.targets.map((e) => ({ ...e, current: expect.closeTo(e.current, 15) })));
  const problems = expected.problems ?? [];
  expect(findings.map((f) => f.code)).toEqual(problems.map((p) => p.code));
  findings.forEach((f, i) => {
    expect(netlist.slice(f.span.start, f.span.end)).toBe(problems[i].spanText);
    expect(f.message).toContain(problems[i].says);
    expect(f.message).not.toMatch(/NaN|undefined/);
  });
  return targets;
}

describe('readTargets: valid annotations', () => {
  it('reads an end-of-line target on a transistor card', () =>
    check('t\nQ2 out b 0 qn ; expect 1mA ±5%\n.end\n', { targets: [{ subject: 'Q2', kind: 'card', current: 1e-3, tolerance: 0.05 }] }));

  it('reads a `$ ` comment, +- and +/- tolerances and a bare suffix', () => {
    check('t\nR1 a b 8.2k $ expect 1.1m +-2%\nR2 b 0 1k ; expect 250u +/- 2.5 %\n', {
      targets: [
        { subject: 'R1', kind: 'card', current: 1.1e-3, tolerance: 0.02 },
        { subject: 'R2', kind: 'card', current: 250e-6, tolerance: 0.025 },
      ],
    });
  });

  it('reads a standalone comment line naming a hierarchical element', () =>
    check('t\n* expect X1.Q3 = 0.5 mA\n', { targets: [{ subject: 'X1.Q3', kind: 'name', current: 0.5e-3 }] }));

  it('reads the corner clause', () =>
    check('t\n*EXPECT QOUT = 2mA ±10% corners ±25%\n', {
      targets: [{ subject: 'QOUT', kind: 'name', current: 2e-3, tolerance: 0.1, cornerTolerance: 0.25 }],
    }));

  it('reads an exponent form and the unit A alone', () =>
    check('t\nQ1 c b 0 qn ; expect 1.2e-3A\n', { targets: [{ subject: 'Q1', kind: 'card', current: 1.2e-3 }] }));

  it('puts the end-of-line target of a continued card on that card', () =>
    check('t\nR1 a b {2*x} ; expect 1mA\n+ m=2\n', { targets: [{ subject: 'R1', kind: 'card', current: 1e-3 }] }));

  it('resolves a standalone target inside a .subckt to the local card', () =>
    check('t\n.subckt cell in out\nQ3 out in 0 qn\n* expect Q3 = 100u\n.ends\nX1 a b cell\n', {
      targets: [{ subject: 'Q3', kind: 'card', current: 100e-6 }],
    }));

  it('ignores prose comments and other end-of-line comments', () =>
    check('t\n* expect the reference to settle first\n* note: 1mA nominal\nQ1 c b 0 qn ; matched to Q2\n', { targets: [] }));

  it('does not mistake a `$` inside an expression for a comment', () =>
    check("t\nR1 a b {1k} ; expect 1mA\n", { targets: [{ subject: 'R1', kind: 'card', current: 1e-3 }] }));
});

describe('readTargets: near misses of the notation', () => {
  // Each is unambiguous, so it is read as meant rather than refused.
  it('a tolerance without % is a percentage', () =>
    check('t\nR1 a b 1k ; expect 1mA ±5\n', { targets: [{ subject: 'R1', kind: 'card', current: 1e-3, tolerance: 0.05 }] }));

  it('`Expect:` with a capital and a colon', () =>
    check('t\nQ2 c b 0 qn ; Expect: 450uA ±2%\n', { targets: [{ subject: 'Q2', kind: 'card', current: 450e-6, tolerance: 0.02 }] }));

  it('`expected` on a comment line of its own', () =>
    check('t\n* expected Q3 = 2mA\n', { targets: [{ subject: 'Q3', kind: 'name', current: 2e-3 }] }));

  it('an element name and a current without `=`', () =>
    check('t\n* expect Q2 1mA\n', { targets: [{ subject: 'Q2', kind: 'name', current: 1e-3 }] }));

  it('the element named before the keyword', () =>
    check('t\n* Q2 expect 1mA ±5%\n', { targets: [{ subject: 'Q2', kind: 'name', current: 1e-3, tolerance: 0.05 }] }));

  it('text before the keyword at the end of a card', () =>
    check('t\nQ2 c b 0 qn ; bias: expect 1mA\n', { targets: [{ subject: 'Q2', kind: 'card', current: 1e-3 }] }));

  it('prose that happens to use the word is left alone', () =>
    check('t\nQ1 c b 0 qn ; expected 0.7V at the base\n* we expect the lamp to light\n', { targets: [] }));

  it('a near miss that goes wrong after its current says what to write', () =>
    check('t\nQ2 c b 0 qn ; Expect: 1mA give or take\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: 'give or take', says: 'the notation is `; expect 1mA ±5%`' }],
    }));
});

describe('readTargets: malformed annotations are located', () => {
  it('a standalone target without `=` and without a name', () =>
    check('t\n* expect 1mA\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: 'expect 1mA', says: 'no `=`' }],
    }));

  it('a current that is not a number', () =>
    check('t\nQ2 c b 0 qn ; expect =1mA\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: '=1mA', says: 'not a current' }],
    }));

  it('a voltage instead of a current', () =>
    check('t\n* expect Q2 = 1.5V\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: '1.5V', says: 'unit `V`' }],
    }));

  it('the resistor-marking style is refused with the decimal form', () =>
    check('t\nR1 a b 1k ; expect 4m7\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: '4m7', says: 'write 4.7m' }],
    }));


  it('a zero or negative current', () => {
    check('t\nR1 a b 1k ; expect 0mA\n', { targets: [], problems: [{ code: 'target-unreadable', spanText: '0mA', says: 'zero' }] });
    check('t\nR1 a b 1k ; expect -1mA\n', { targets: [], problems: [{ code: 'target-unreadable', spanText: '-1mA', says: 'negative' }] });
  });

  it('a tolerance of 100 % or more', () =>
    check('t\nR1 a b 1k ; expect 1mA ±150%\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: '±150%', says: 'between 0 % and 100 %' }],
    }));

  it('trailing words it cannot read', () =>
    check('t\nR1 a b 1k ; expect 1mA ±5% roughly\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: 'roughly', says: 'cannot read' }],
    }));

  it('a name in an end-of-line target', () =>
    check('t\nQ2 c b 0 qn ; expect Q2 = 1mA\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: 'Q2 =', says: 'names no element' }],
    }));

  it('a target on a subcircuit instance or a capacitor', () => {
    check('t\nX1 a b cell ; expect 1mA\n', {
      targets: [],
      problems: [{ code: 'target-not-applicable', spanText: 'expect 1mA', says: 'X1.Q1' }],
    });
    check('t\nC1 a 0 1u ; expect 1mA\n', {
      targets: [],
      problems: [{ code: 'target-not-applicable', spanText: 'expect 1mA', says: 'no DC current' }],
    });
    check('t\nK1 L1 L2 0.9 ; expect 1mA\n', {
      targets: [],
      problems: [{ code: 'target-not-applicable', spanText: 'expect 1mA', says: 'K1 is not an element whose one DC current' }],
    });
  });

  it('a standalone target inside a .subckt naming no local element', () =>
    check('t\n.subckt cell a b\nR1 a b 1k\n* expect Q9 = 1mA\n.ends\n', {
      targets: [],
      problems: [{ code: 'target-not-applicable', spanText: 'Q9', says: 'defines no element' }],
    }));

  it('keeps reading after a malformed annotation', () =>
    check('t\n* expect Q1 = lots\nR1 a b 1k ; expect 2mA\n', {
      targets: [{ subject: 'R1', kind: 'card', current: 2e-3 }],
      problems: [{ code: 'target-unreadable', spanText: 'lots', says: 'not a current' }],
    }));

  it('handles CRLF line endings', () =>
    check('t\r\n* expect Q2 = 1mA ±5%\r\nR1 a b 1k ; expect 2m\r\n', {
      targets: [
        { subject: 'Q2', kind: 'name', current: 1e-3, tolerance: 0.05 },
        { subject: 'R1', kind: 'card', current: 2e-3 },
      ],
    }));
});

// ---- checking targets against the solved point and the corners ----

/** The one helper for checking: netlist → codes (and message fragments) of the target findings. */
function checkMisses(netlist: string, expected: { codes: string[]; says?: string[][]; severities?: string[] }, options: AnalysisOptions = {}): Finding[] {
  const uri = '/t.cir';
  const doc = parse(uri, netlist, { hasTitle: true });
  const { circuit, documents } = elaborate(doc, new MemoryWorkspace({ [uri]: netlist }), {});
  const solver = new DcSolver(circuit);
  const nominal = solver.solve({});
  const structures = recogniseStructures(circuit);
  const resolved = resolveOptions(options);
  analyseStructures({ circuit, op: nominal.op, structures, options: resolved });
  runCorners({ circuit, solver, structures, options: resolved, nominal });
  const { targets, findings: readFindings } = readTargets(documents);
  expect(readFindings).toEqual([]);
  const findings = checkTargets({ circuit, op: nominal.op, structures, targets, options: resolved });
  expect(findings.map((f) => f.code)).toEqual(expected.codes);
  findings.forEach((f, i) => {
    for (const s of expected.says?.[i] ?? []) expect(f.message).toContain(s);
    if (expected.severities) expect(f.severity).toBe(expected.severities[i]);
    expect(f.message).not.toMatch(/NaN|undefined|Infinity/);
    expect(JSON.stringify(f.data)).not.toMatch(/null/);
  });
  return findings;
}

// An invented 5 V bias mirror. Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IREF = (V+ − VBE)/R1
// and IOUT = IREF/(1 + 2/β): with R1 = 4.3 kΩ, VBE ≈ 0.77 V (IS = 1e-16 A at 1 mA) and β = 100,
// IOUT ≈ (5 − 0.77)/4.3k / 1.02 ≈ 0.964 mA.
const mirror = (annotation: string): string => `5 V bias mirror
VCC vcc 0 DC 5
R1 vcc b 4.3k
Q1 b b 0 qn
Q2 out b 0 qn ${annotation}
RL vcc out 2k
.model qn npn (IS=1e-16 BF=100)
.end
`;

describe('checkTargets', () => {
  it('is quiet when the target is met (corners off)', () =>
    checkMisses(mirror('; expect 0.964mA ±2%'), { codes: [] }, { corners: { enabled: false } }));

  it('reports a miss at nominal with both numbers and the percent', () => {
    const [f] = checkMisses(mirror('; expect 1mA ±2%'), {
      codes: ['target-missed'],
      says: [['Q2 carries 964 µA at the operating point (hand estimate', '−3.6 % from its target of 1 mA ±2 %', 'R1 sets it.']],
      severities: ['warning'],
    });
    expect(f.data).toMatchObject({ element: 'Q2', target: 1e-3, tolerance: 0.02, resistor: 'R1', series: 'E24' });
    expect(f.data!['estimate'] as number).toBeCloseTo(0.964e-3, 5);
  });

  // A JFET with its gate tied to its source carries IDSS = BETA·VTO² in saturation (Shichman–Hodges
  // square law; LAMBDA = 0): BETA = 1 mA/V², VTO = −2 V → 4 mA. With 1 kΩ from 10 V, VDS = 6 V > |VTO|.
  const jfet = (note: string): string => `jfet source\nV1 vdd 0 10\nR1 vdd d 1k\nJ1 d 0 0 jn ${note}\n.model jn NJF VTO=-2 BETA=1m\n.end\n`;
  it('takes a target on a JFET and checks it against the drain current', () => {
    checkMisses(jfet('; expect 4mA ±1%'), { codes: [] }, { corners: { enabled: false } });
    checkMisses(jfet('; expect 3mA ±1%'), { codes: ['target-missed'], says: [['J1 carries 4']] }, { corners: { enabled: false } });
  });

  it('sizes the source resistor of a JFET self-biased source for its target, verified by re-solves', () => {
    // Shockley's law with VGS = −ID·RS (Boylestad and Nashelsky, ch. 7, from memory): IDSS = 1m × 2² = 4 mA, VP = −2 V.
    // ID = 2·IDSS/((2k + 1) + sqrt(4k + 1)) with k = IDSS·RS/|VP|: 1.53 mA at RS = 500 Ω (k = 1), exactly 1 mA at RS = 1 kΩ (k = 2), an E24 value.
    const text = `JFET source with a target\nVCC vcc 0 15\nJ1 d 0 s JN ; expect 1mA ±2%\nRS s 0 500\nRL vcc d 3.3k\n.model JN NJF (VTO=-2 BETA=1m)\n.end\n`;
    const session = analyseSession({ uri: '/t.cir', text }, new MemoryWorkspace({ '/t.cir': text }), { corners: { enabled: false } });
    attachAllSizingFixes(session);
    const f = session.analysis.findings.find((x) => x.code === 'target-missed')!;
    expect(f.message).toMatch(/J1 carries 1\.53 mA at the operating point \(hand estimate 1\.53 mA\).*RS sets it/);
    const best = f.fixes!.find((x) => x.preferred)!;
    expect(best.title).toMatch(/^Set RS to 1k \(E24\): J1 → 1 mA/);
    expect(best.edits.map((e) => e.newText)).toEqual(['1k']);
  });

  it('takes a target on a switch and checks it against its current', () => {
    // Closed switch (RON = 1 Ω, control 5 V far above VT = 1 V) in series with 999 Ω across 10 V: 10 mA by Ohm's law.
    const sw = (note: string): string =>
      `switch\nV1 vdd 0 10\nVc c 0 5\nR1 vdd a 999\nS1 a 0 c 0 sm ${note}\n.model sm SW VT=1 VH=0.1 RON=1 ROFF=1G\n.end\n`;
    checkMisses(sw('; expect 10mA ±1%'), { codes: [] }, { corners: { enabled: false } });
    checkMisses(sw('; expect 20mA ±1%'), { codes: ['target-missed'] }, { corners: { enabled: false } });
  });

  it('makes a miss beyond three times the tolerance an error', () =>
    checkMisses(mirror('; expect 2mA ±5%'), { codes: ['target-missed'], severities: ['error'] }));

  it('defaults the tolerance to the resistor series', () => {
    checkMisses(mirror('; expect 1mA corners ±60%'), { codes: [] }); // −3.6 % is inside E24's ±5 %
    checkMisses(mirror('; expect 1mA corners ±60%'), { codes: ['target-missed'], says: [['±1 %']] }, { resistorSeries: 'E96' });
  });

  it('reports a target naming an element the circuit lacks', () =>
    checkMisses(mirror('').replace('.end', '* expect Q9 = 1mA\n.end'), { codes: ['target-not-applicable'], says: [['no element of that name']] }));

  it('reports a target met at nominal but missed at a corner, naming the corner', () => {
    const [f] = checkMisses(mirror('; expect 0.964mA ±2%'), {
      codes: ['target-missed-at-corner'],
      says: [['meets its target', 'at nominal but leaves ±2 %', 'the worst is']],
      severities: ['info'],
    });
    expect(typeof f.data!['corner']).toBe('string');
    expect(f.message).toContain(f.data!['corner'] as string);
  });

  it('makes a corner miss a warning when the target gives its own corner tolerance', () =>
    checkMisses(mirror('; expect 0.964mA ±2% corners ±10%'), { codes: ['target-missed-at-corner'], severities: ['warning'] }));

  it('is quiet when the corners stay inside a wide corner tolerance', () =>
    checkMisses(mirror('; expect 0.964mA ±2% corners ±60%'), { codes: [] }));
});

describe('targets inside subcircuits and unsized cases', () => {
  // An invented two-channel bias block: one cell definition, two instances, one target on the cell's output.
  const twoCells = `two bias cells
VCC vcc 0 DC 5
.subckt cell vcc
R1 vcc b 4.3k
Q1 b b 0 qn
Q2 out b 0 qn ; expect 1mA ±2%
RL vcc out 2k
.ends
X1 vcc cell
X2 vcc cell
.model qn npn (IS=1e-16 BF=100)
.end
`;
  it('applies a target in a .subckt to every instance', () => {
    const found = checkMisses(twoCells, { codes: ['target-missed', 'target-missed'] }, { corners: { enabled: false } });
    expect(found.map((f) => f.data!['element'])).toEqual(['X1.Q2', 'X2.Q2']);
    expect(found.map((f) => f.data!['resistor'])).toEqual(['X1.R1', 'X2.R1']);
  });

  it('checks a reference-device target against its own collector current', () =>
    checkMisses(mirror('').replace('Q1 b b 0 qn', 'Q1 b b 0 qn ; expect 964uA ±1%'), { codes: [] }, { corners: { enabled: false } }));

  it('has no resistor to size for a current-source-fed mirror', () => {
    const text = mirror('; expect 2mA ±2%').replace('R1 vcc b 4.3k', 'IB vcc b DC 1m');
    const [f] = checkMisses(text, { codes: ['target-missed'] }, { corners: { enabled: false } });
    expect(f.data!['resistor']).toBeUndefined();
    expect(f.message).not.toContain('Changing');
  });
});
