// The model fixes: inserting a missing .model card with its defaults (LF and CRLF), and unifying a mirror's models.

import { describe, expect, it } from 'vitest';
import { MODEL_PARAMETERS } from '../../../shared-analysis/src/devices/parameters';
import { parseNumber } from '../../../shared-analysis/src/elaborate/units';
import { defaultModelCardText, missingModelFixes, unifyMirrorModelFixes } from '../../../shared-analysis/src/fixes/model-fixes';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import type { Finding, Fix, TextEdit } from '../../../shared-analysis/src/types';

const URI = 'mem://m.cir';

/** Applies a fix's edits to one document's text (edits sorted from the end so offsets stay valid). */
function apply(text: string, edits: TextEdit[]): string {
  let out = text;
  for (const e of [...edits].sort((a, b) => b.span.start - a.span.start)) out = out.slice(0, e.span.start) + e.newText + out.slice(e.span.end);
  return out;
}

/** The one helper for the missing-model fix: the netlist, the finding's data, and the text after applying the first fix. */
function checkMissing(netlist: string, data: Record<string, unknown>, expected: { text: string; titles?: string[] }): Fix[] {
  const doc = parse(URI, netlist, { hasTitle: true });
  const name = String(data['modelName']);
  const at = netlist.indexOf(` ${name}`) + 1;
  const finding: Finding = { code: 'model-not-found', severity: 'error', message: 'm', uri: URI, span: { start: at, end: at + name.length }, data };
  const fixes = missingModelFixes(finding, { [URI]: doc });
  expect(fixes.length).toBeGreaterThan(0);
  expect(fixes[0].preferred).toBe(true);
  expect(apply(netlist, fixes[0].edits)).toBe(expected.text);
  if (expected.titles) expect(fixes.map((f) => f.title)).toEqual(expected.titles);
  // The inserted card parses back as a .model card with no errors.
  const after = parse(URI, apply(netlist, fixes[0].edits), { hasTitle: true });
  expect(after.errors).toEqual([]);
  expect(after.cards.filter((c) => c.kind === 'model').map((c) => (c.kind === 'model' ? c.name.text : ''))).toContain(name);
  return fixes;
}

const NPN_CARD = '.model QX npn (IS=1e-16 BF=100 BR=1 NF=1 NR=1 XTI=3 EG=1.11) ; VAF not given: no Early effect';

describe('missing-model fix', () => {
  it('inserts after the last .model card (LF)', () =>
    checkMissing('t\nQ1 c b 0 QX\n.model qa npn (bf=80)\nR1 c 0 1k\n.end\n', { modelName: 'QX', expectedKinds: ['npn', 'pnp'] }, {
      text: `t\nQ1 c b 0 QX\n.model qa npn (bf=80)\n${NPN_CARD}\nR1 c 0 1k\n.end\n`,
      titles: [
        'Add a .model card for QX as an NPN transistor with default parameters',
        'Add a .model card for QX as a PNP transistor with default parameters',
      ],
    }));

  it('inserts before .end when there is no .model card, keeping CRLF', () =>
    checkMissing('t\r\nQ1 c b 0 QX\r\n.end\r\n', { modelName: 'QX', expectedKinds: ['npn'] }, {
      text: `t\r\nQ1 c b 0 QX\r\n${NPN_CARD}\r\n.end\r\n`,
    }));

  it('appends at the end of a file without .end or a final newline', () =>
    checkMissing('t\nD1 a 0 DX', { modelName: 'DX', expectedKinds: ['d'] }, {
      text: 't\nD1 a 0 DX\n.model DX d (IS=1e-14 N=1 RS=0 XTI=3 EG=1.11)\n',
    }));

  it('does not put the card inside a .subckt', () =>
    checkMissing('t\n.subckt s a\n.model qloc npn\nQ1 a a 0 QX\n.ends\nX1 n s\n.end\n', { modelName: 'QX', expectedKinds: ['npn'] }, {
      text: `t\n.subckt s a\n.model qloc npn\nQ1 a a 0 QX\n.ends\nX1 n s\n${NPN_CARD}\n.end\n`,
    }));

  // Source: the defaults of docs/DEVICE-MODELS.md: every core parameter's finite default is written out and reads back equal.
  it('writes every core default so the user sees it', () => {
    for (const kind of ['npn', 'pnp', 'd', 'nmos', 'pmos', 'njf', 'pjf', 'sw', 'csw'] as const) {
      const card = defaultModelCardText('M', kind);
      for (const { name: p, default: v, core } of MODEL_PARAMETERS[kind]) {
        if (!core || v === undefined) {
          expect(card).not.toMatch(new RegExp(`\\b${p}=`));
          continue;
        }
        if (!Number.isFinite(v)) {
          expect(card).toContain(`${p} not given`);
          continue;
        }
        const m = new RegExp(`\\b${p}=(\\S+?)[ )]`).exec(card);
        expect(m, `${kind} ${p}`).not.toBeNull();
        const back = parseNumber(m![1]);
        expect(back.ok && back.value).toBe(v);
      }
    }
  });

  it('offers nothing without usable data', () => {
    const doc = parse(URI, 't\nQ1 c b 0 QX\n', { hasTitle: true });
    const f: Finding = { code: 'model-not-found', severity: 'error', message: 'm', uri: URI, span: { start: 11, end: 13 } };
    expect(missingModelFixes(f, { [URI]: doc })).toEqual([]);
    expect(missingModelFixes({ ...f, data: { modelName: 'QX', expectedKinds: ['bogus'] } }, { [URI]: doc })).toEqual([]);
    expect(missingModelFixes({ ...f, data: { modelName: 'QX', expectedKinds: ['npn'] } }, {})).toEqual([]);
  });
});

describe('unify-mirror-model fix', () => {
  /** The one helper: netlist, the finding's device list, and the text after applying the fix (or no fix). */
  function checkUnify(netlist: string, devices: { device: string; model: string }[], expected: string | undefined): void {
    const doc = parse(URI, netlist, { hasTitle: true });
    const withSpans = devices.map((d) => {
      const card = doc.cards.find((c) => c.kind === 'element' && c.name.text === d.device);
      const model = card && card.kind === 'element' ? card.model : undefined;
      return { ...d, uri: URI, modelSpan: model?.span };
    });
    const finding: Finding = { code: 'mirror-unmatched', severity: 'warning', message: 'm', uri: URI, span: { start: 0, end: 1 }, data: { reference: devices[0].device, devices: withSpans } };
    const fixes = unifyMirrorModelFixes(finding, undefined);
    if (expected === undefined) {
      expect(fixes).toEqual([]);
      return;
    }
    expect(fixes).toHaveLength(1);
    expect(apply(netlist, fixes[0].edits)).toBe(expected);
  }

  it('edits only the model-name tokens, keeping spacing and comments', () =>
    checkUnify(
      't\nQ1   b b 0   QA   ; reference\nQ2 out b 0 QB area=2\nQ3 o3 b 0 qa\n',
      [{ device: 'Q1', model: 'QA' }, { device: 'Q2', model: 'QB' }, { device: 'Q3', model: 'qa' }],
      't\nQ1   b b 0   QA   ; reference\nQ2 out b 0 QA area=2\nQ3 o3 b 0 qa\n',
    ));

  it('offers nothing when every device already uses the reference model', () =>
    checkUnify('t\nQ1 b b 0 QA\nQ2 o b 0 qa\n', [{ device: 'Q1', model: 'QA' }, { device: 'Q2', model: 'qa' }], undefined));
});
