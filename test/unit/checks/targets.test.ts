// The target-current notation: reading valid and malformed annotations (located findings), and checking targets.

import { describe, expect, it } from 'vitest';
import { readTargets, type Target } from '../../../shared-analysis/src/checks/targets';
import { parse } from '../../../shared-analysis/src/syntax/parser';

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

describe('readTargets: malformed annotations are located', () => {
  it('a standalone target without `=`', () =>
    check('t\n* expect Q2 1mA\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: 'expect Q2 1mA', says: 'no `=`' }],
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

  it('a tolerance without %', () =>
    check('t\nR1 a b 1k ; expect 1mA ±5\n', {
      targets: [],
      problems: [{ code: 'target-unreadable', spanText: '±5', says: 'add the % sign' }],
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
