// The CLI's chunked JSON writer against the language's own JSON.stringify (ECMA-262, JSON.stringify), and the JSON document's corner summary.

import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { JsonEntries, JsonItems, JsonText, writeJson } from '../../server/src/json-stream';
import { cornerKey } from '../../server/src/cli';

function written(value: unknown, indent?: number): { text: string; pieces: number } {
  const out: string[] = [];
  writeJson(value, (s) => out.push(s), { indent });
  return { text: out.join(''), pieces: out.length };
}

describe('writeJson', () => {
  it('writes the text JSON.stringify writes, compact and indented, for any JSON value', () => {
    fc.assert(
      fc.property(fc.jsonValue(), (v) => {
        expect(written(v).text).toBe(JSON.stringify(v));
        expect(written(v, 2).text).toBe(JSON.stringify(v, null, 2));
      }),
      { seed: 11, numRuns: 300 },
    );
  });

  it('places a value written at its depth elsewhere (a worker thread\'s file entry) as JSON.stringify writes the whole', () => {
    fc.assert(
      fc.property(fc.array(fc.jsonValue(), { maxLength: 4 }), fc.constantFrom(0, 2, 4), (files, indent) => {
        const doc = { version: 2, files };
        // Each entry written alone at depth 2 (inside { files: [ … ] }), then placed as JsonText.
        const placed = {
          version: 2,
          files: files.map((f) => {
            const pieces: string[] = [];
            writeJson(f, (t) => pieces.push(t), { indent, depth: 2 });
            return new JsonText(pieces);
          }),
        };
        expect(written(placed, indent).text).toBe(JSON.stringify(doc, null, indent));
        expect(JSON.stringify(placed)).toBe(JSON.stringify(doc));
      }),
      { seed: 12, numRuns: 200 },
    );
  });

  it('skips undefined members, writes undefined list items as null, and calls toJSON', () => {
    const v = { a: undefined, b: [undefined, 1, () => 0], c: { toJSON: () => 'x' }, d: new Date(0), e: NaN, f: [] , g: {} };
    expect(written(v, 2).text).toBe(JSON.stringify(v, null, 2));
    expect(written(v).text).toBe(JSON.stringify(v));
  });

  it('writes JsonEntries as the object JSON.stringify makes of it, member by member', () => {
    const entries = new JsonEntries(function* () {
      yield ['n', 1];
      yield ['skip', undefined];
      yield ['list', [1, { deep: [2, 3] }]];
      yield ['inner', new JsonEntries(() => [['k', 'v']])];
    });
    const doc = { top: entries, empty: new JsonEntries(() => []) };
    expect(written(doc, 2).text).toBe(JSON.stringify(doc, null, 2));
    expect(written(doc).text).toBe(JSON.stringify(doc));
  });

  it('writes large lists of records, records holding JsonEntries deep down, and typed arrays as JSON.stringify does', () => {
    // Small subtrees go to the native writer whole, large ones and those holding JsonEntries are walked:
    // the text must not depend on which.
    const deep = new JsonEntries(() => [['q', [1, 2, { r: 'µ−' }]]]);
    const doc = {
      rows: Array.from({ length: 3000 }, (_, i) => ({ name: `R${i}`, steps: [{ v: i / 7, s: 'a\nb' }], tags: i % 2 ? [] : ['x'] })),
      small: { a: { b: { c: [deep] } } },
      typed: { f: new Float64Array([1.5, -2]) },
      wide: Object.fromEntries(Array.from({ length: 5000 }, (_, i) => [`k${i}`, { v: i }])),
    };
    for (const indent of [0, 2]) expect(written(doc, indent).text).toBe(JSON.stringify(doc, null, indent));
  });

  it('keeps the order of JsonEntries members among gathered ones, integer-like and prototype names included', () => {
    const entries = new JsonEntries(function* () {
      yield ['b', 1];
      yield ['2', { x: 1 }];
      yield ['a', [3]];
      yield ['__proto__', 4];
      yield ['10', 'ten'];
    });
    // Written out by hand: an object would list "2" and "10" first (ECMA-262, OrdinaryOwnPropertyKeys).
    expect(written({ e: entries }).text).toBe('{"e":{"b":1,"2":{"x":1},"a":[3],"__proto__":4,"10":"ten"}}');
    expect(written({ e: entries }, 2).text).toBe('{\n  "e": {\n    "b": 1,\n    "2": {\n      "x": 1\n    },\n    "a": [\n      3\n    ],\n    "__proto__": 4,\n    "10": "ten"\n  }\n}');
  });

  it('writes JsonItems and JsonEntries of modest values, gathered by count, as JSON.stringify writes them', () => {
    // Items of very different weights in one list: a batch is sized from its first item, so a light
    // first item followed by heavy ones, and the other way round, must give the same text.
    const itemAt = (i: number): unknown =>
      i % 97 === 0 ? { heavy: Array.from({ length: 300 }, (_, k) => ({ k, v: k / 3 })) } : i % 5 === 0 ? `s${i}` : { name: `Q${i}`, ic: i * 1e-6, region: 'forward-active', tags: [i, -i] };
    const list = (n: number): unknown[] => Array.from({ length: n }, (_, i) => itemAt(i));
    const entries = (name: (i: number) => string, modest: boolean) =>
      new JsonEntries(function* () {
        for (let i = 0; i < 3000; i++) yield [name(i), itemAt(i)];
      }, modest);
    const named = (i: number): string => `R${i}`;
    for (const indent of [0, 2]) {
      const doc = { items: new JsonItems(2000, itemAt), none: new JsonItems(0, itemAt), deep: [{ items: new JsonItems(3, itemAt) }], records: entries(named, true) };
      const plain = { items: list(2000), none: [], deep: [{ items: list(3) }], records: Object.fromEntries(list(3000).map((v, i) => [named(i), v])) };
      expect(written(doc, indent).text).toBe(JSON.stringify(plain, null, indent));
      expect(JSON.stringify(doc)).toBe(JSON.stringify(plain));
      // Integer-like names keep the producer's order: the same text as the walked path, which the test above checks by hand.
      const numbered = (i: number): string => (i % 7 === 0 ? String(i) : named(i));
      expect(written({ r: entries(numbered, true) }, indent).text).toBe(written({ r: entries(numbered, false) }, indent).text);
    }
  });

  it('hands a long document over in pieces, never as one string', () => {
    const rows = new JsonEntries(function* () {
      for (let i = 0; i < 50000; i++) yield [`R${i}`, { type: 'resistor', current: i * 1e-6, voltage: 1, power: i * 1e-6 }];
    });
    const { text, pieces } = written({ devices: rows }, 2);
    expect(pieces).toBeGreaterThan(20);
    expect(Object.keys(JSON.parse(text).devices)).toHaveLength(50000);
  });
});

describe('cornerKey', () => {
  it('turns corner labels into distinct plain-ASCII keys', () => {
    const labels = ['supply −5 %, −40 °C, beta ×0.5', 'supply +5 %, 125 °C', 'beta ×2', 'VCC alone +5 %', 'VCC alone −5 %', 'Vµ alone +5 %'];
    const keys = labels.map(cornerKey);
    expect(keys.slice(0, 4)).toEqual(['supply_-5%,-40C,beta_x0.5', 'supply_+5%,125C', 'beta_x2', 'VCC_alone_+5%']);
    expect(new Set(keys).size).toBe(labels.length);
    for (const k of keys) expect(k).toMatch(/^[\x21-\x7e]+$/);
  });
});
