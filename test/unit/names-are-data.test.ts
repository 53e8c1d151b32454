// Names from a netlist are data: `constructor`, `__proto__`, `toString` … are ordinary names everywhere and never values in expressions.
import { describe, expect, it } from 'vitest';
import { analyse } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { completionsAt } from '../../shared-analysis/src/features/completion';
import { inlayHints } from '../../shared-analysis/src/features/inlay';
import { documentSymbols } from '../../shared-analysis/src/features/symbols';
import { definitionAt, referencesAt } from '../../shared-analysis/src/features/navigation';
import { restoreNameTables } from '../../shared-analysis/src/names';

/** Every name Object.prototype gives a plain object, and the ones that reach the prototype itself. */
const NAMES = ['constructor', '__proto__', 'toString', 'valueOf', 'hasOwnProperty', 'isPrototypeOf', 'prototype', '__defineGetter__', '__lookupSetter__'];
const URI = '/names.cir';

function analyseText(text: string): Analysis {
  return analyse({ uri: URI, text }, new MemoryWorkspace({ [URI]: text }), { corners: { enabled: false } });
}

/** Every editor feature at every offset, on the analysis and on its copy through JSON (as the server receives it). */
function everyFeature(a: Analysis, text: string): string[] {
  const odd: string[] = [];
  for (const an of [a, restoreNameTables(JSON.parse(JSON.stringify(a)) as Analysis)]) {
    for (let off = 0; off <= text.length; off++) {
      const h = hoverAt(an, URI, off);
      if (h && /NaN|undefined|\[object |function |^Node [^\n]*∞/.test(h.markdown)) odd.push(`hover at ${off}: ${h.markdown.slice(0, 80)}`);
      completionsAt(an, URI, off);
      definitionAt(an, URI, off);
      referencesAt(an, URI, off, { includeDeclaration: true });
    }
    inlayHints(an, URI, { start: 0, end: text.length }, 'full');
    documentSymbols(an, URI);
  }
  return odd;
}

describe.each(NAMES)('the name %s', (name) => {
  it('as a node: solved, present in the operating point at its voltage, shown in hovers', () => {
    // Source: voltage divider, V = 5 V · 1k/(1k + 1k) = 2.5 V at the middle node (Ohm's law).
    const text = `Divider\nV1 top 0 5\nR1 top ${name} 1k\nR2 ${name} 0 1k\n.end\n`;
    const a = analyseText(text);
    expect(a.findings.filter((f) => f.severity === 'error')).toEqual([]);
    expect(Object.hasOwn(a.operatingPoint!.nodes, name)).toBe(true);
    expect(a.operatingPoint!.nodes[name]).toBeCloseTo(2.5, 9);
    expect(everyFeature(a, text)).toEqual([]);
  });

  it('as a model name, a model type, an undefined model and a subcircuit: located findings, no internal error', () => {
    const texts = [
      `Mirror\nV1 vcc 0 5\nR1 vcc ref 10k\nQ1 ref ref 0 ${name}\nQ2 out ref 0 ${name}\nRL vcc out 1k\n.model ${name} NPN\n.end\n`,
      `Type\nV1 vcc 0 5\nR1 vcc ref 10k\nQ1 ref ref 0 QX\n.model QX ${name}\n.end\n`,
      `Undefined\nV1 vcc 0 5\nR1 vcc ref 10k\nQ1 ref ref 0 ${name}\n.end\n`,
      `Subcircuit\nV1 vcc 0 5\n.subckt ${name} a\nR1 a 0 1k\n.ends\nX1 vcc ${name}\n.end\n`,
      `Element\nV1 a 0 5\nR${name} a 0 1k\n.end\n`,
    ];
    for (const text of texts) {
      const a = analyseText(text);
      expect(a.findings.filter((f) => /internal error/i.test(f.message)), text).toEqual([]);
      expect(everyFeature(a, text), text).toEqual([]);
    }
    const mirror = analyseText(texts[0]!);
    expect(mirror.structures.length).toBe(1);
    expect(Object.hasOwn(mirror.circuit!.models, name.toLowerCase())).toBe(true);
    expect(analyseText(texts[1]!).findings.map((f) => f.code)).toContain('model-unknown-type');
    expect(analyseText(texts[2]!).findings.map((f) => f.code)).toContain('model-not-found');
  });

  it('as a parameter it holds its value; undefined, it is never a value of an expression', () => {
    const param = analyseText(`Param\n.param ${name}=2\nV1 a 0 {${name}*2}\nR1 a 0 1k\n.end\n`);
    expect(param.operatingPoint!.nodes['a']).toBeCloseTo(4, 9);
    const bare = analyseText(`Bare\nV1 a 0 {${name} == ${name} ? 5 : 1}\nR1 a 0 1k\n.end\n`);
    expect(bare.findings.some((f) => f.severity === 'error' && f.message.toLowerCase().includes(`\`${name.toLowerCase()}\``))).toBe(true);
    expect(bare.operatingPoint?.nodes['a'] ?? 0).not.toBeCloseTo(5, 3);
    const call = analyseText(`Call\nV1 a 0 {${name}(1)}\nR1 a 0 1k\n.end\n`);
    expect(call.findings.some((f) => f.severity === 'error')).toBe(true);
  });
});
