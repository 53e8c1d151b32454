// The CLI's chunked JSON writer, as text and as UTF-8 bytes, against the language's own JSON.stringify (ECMA-262, JSON.stringify), and the JSON document's corner summary.

import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { JsonEntries, JsonItems, JsonText, writeJson, writeJsonBytes } from '../../server/src/json-stream';
import { escapedJsonChunk, escapeJsonText } from '../../server/src/escape';
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

  it('writes modest entries and items that skip undefined members or are too heavy to gather as JSON.stringify does', () => {
    // Batches end at a member left out (undefined), at one heavier than a batch (written alone) and at the table's
    // end, in the middle of a batch and right after one is full: the gathering loop's every way out.
    const huge = { values: Array.from({ length: 5000 }, (_, k) => k) };
    const valueAt = (i: number): unknown => (i % 11 === 0 ? undefined : i % 401 === 0 ? huge : i % 3 === 0 ? { i, x: i / 7 } : i * 0.5);
    for (const n of [0, 1, 4095, 4096, 4097, 9000]) {
      const entries = new JsonEntries(function* () {
        for (let i = 1; i <= n; i++) yield [`m${i}`, valueAt(i)];
      }, true);
      const items = new JsonItems(n, (i) => valueAt(i + 1) ?? null);
      const plain = { entries: Object.fromEntries(Array.from({ length: n }, (_, i) => [`m${i + 1}`, valueAt(i + 1)])), items: Array.from({ length: n }, (_, i) => valueAt(i + 1) ?? null) };
      for (const indent of [0, 2]) expect(written({ entries, items }, indent).text).toBe(JSON.stringify(plain, null, indent));
    }
  });

  it('writes gathered members whose values are all numbers or all plain records as JSON.stringify writes their object', () => {
    // Compact, such a batch is written from the values' list and the names put before their texts: the values' texts
    // are found by the commas between numbers and the "},{" between records, which a record's strings may also hold.
    // Each case below is one way that must still give JSON.stringify's text (ECMA-262, SerializeJSONObject).
    class Shaped {
      constructor(readonly a: number) {}
    }
    const tricky = ['},{', '"},{"', 'a,b', '\\', '"', '\n', '\u2028', 'µ−°', '\ud83d\ude00', '\ud800', ''];
    const names: [string, (i: number) => string][] = [
      ['plain', (i) => `R${i}`],
      ['escaped', (i) => (i % 37 === 5 ? `R${i}${tricky[i % tricky.length]}` : `R${i}`)],
      ['non-ASCII', (i) => `Q${i}µ°−`],
    ];
    const values: [string, (i: number) => unknown][] = [
      ['numbers', (i) => [i / 7, -0, NaN, Infinity, 1e21, 5e-324][i % 6]],
      ['records', (i) => ({ type: 'resistor', current: i * 1e-6, voltage: i % 3 ? 1 : -0, power: NaN })],
      ['records holding "},{"', (i) => ({ name: tricky[i % tricky.length], list: [{ a: i }, { b: [i, { c: '},{' }] }], deep: { x: {} } })],
      ['empty records', () => ({})],
      ['records, one with toJSON', (i) => (i === 700 ? { toJSON: () => 'seven hundred' } : { i })],
      ['records, one of a class', (i) => (i === 900 ? new Shaped(i) : { a: i })],
      ['records, one without a prototype', (i) => (i === 1100 ? Object.assign(Object.create(null), { a: i }) : { a: i })],
      ['numbers, one boxed', (i) => (i === 300 ? Object(7) : i)],
      ['numbers, one a date', (i) => (i === 300 ? new Date(0) : i)],
      ['records, one a list', (i) => (i === 50 ? [{ a: 1 }, { b: 2 }] : { a: i })],
      // As many "},{" as a batch of records has separators, none of them between records.
      ['strings holding "},{"', (i) => (i === 0 ? '' : '},{')],
    ];
    let cases = 0;
    for (const [, nameOf] of names) {
      for (const [, valueAt] of values) {
        const entries = new JsonEntries(function* () {
          for (let i = 0; i < 3000; i++) yield [nameOf(i), valueAt(i)];
        }, true);
        const plain: Record<string, unknown> = {};
        for (let i = 0; i < 3000; i++) plain[nameOf(i)] = valueAt(i);
        expect(written({ t: entries }).text).toBe(JSON.stringify({ t: plain }));
        expect(written({ t: entries }, 2).text).toBe(JSON.stringify({ t: plain }, null, 2));
        cases++;
      }
    }
    expect(cases).toBe(33);
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

describe('writeJsonBytes', () => {
  /** The chunks handed over, kept as they come (the writer must not reuse a chunk it handed over). */
  function chunks(value: unknown, indent?: number, transform?: (b: Buffer) => Uint8Array): Buffer[] {
    const out: Buffer[] = [];
    writeJsonBytes(value, (b) => out.push(Buffer.from(b.buffer, b.byteOffset, b.byteLength)), { indent, transform });
    return out;
  }
  const text = (value: unknown, indent?: number): string => Buffer.concat(chunks(value, indent)).toString('utf8');

  it('writes the UTF-8 of the text JSON.stringify writes, compact and indented, for any JSON value', () => {
    fc.assert(
      fc.property(fc.jsonValue(), (v) => {
        expect(text(v)).toBe(JSON.stringify(v));
        expect(text(v, 2)).toBe(JSON.stringify(v, null, 2));
      }),
      { seed: 13, numRuns: 300 },
    );
  });

  it('writes numbers that are not finite as JSON.stringify does (null), in lists, members, gathered entries and items', () => {
    const odd = [NaN, Infinity, -Infinity, -0, 5e-324, 1.7976931348623157e308];
    const plain = { list: odd, record: { a: NaN, b: -Infinity, c: 1 }, entries: Object.fromEntries(odd.map((x, i) => [`n${i}`, x])), items: odd.map((x) => ({ x })) };
    const doc = { ...plain, entries: new JsonEntries(() => odd.map((x, i) => [`n${i}`, x] as const), true), items: new JsonItems(odd.length, (i) => ({ x: odd[i] })) };
    for (const indent of [0, 2]) {
      expect(text(doc, indent)).toBe(JSON.stringify(plain, null, indent));
      expect(JSON.parse(text(doc, indent))).toEqual(JSON.parse(JSON.stringify(plain)));
    }
  });

  it('writes deeply nested and long lists of lists as JSON.stringify does', () => {
    let deep: unknown = [1];
    for (let d = 0; d < 200; d++) deep = [deep, d % 2 ? [] : [d, [d / 3]]];
    const long = Array.from({ length: 5000 }, (_, i) => (i % 3 ? [i, [i / 7, [String(i)]]] : []));
    const doc = { deep, long, items: new JsonItems(3000, (i) => [[i], [[i * 1e-9]]]) };
    const plain = { deep, long, items: Array.from({ length: 3000 }, (_, i) => [[i], [[i * 1e-9]]]) };
    for (const indent of [0, 2]) expect(JSON.parse(text(doc, indent))).toEqual(JSON.parse(JSON.stringify(plain, null, indent)));
    expect(text(doc)).toBe(JSON.stringify(plain));
  });

  it('hands over a large document in chunks of at most 1 MiB, each escaped whole, as the escaped UTF-8 of the whole text', () => {
    // Unsafe characters (a bidirectional override, a C1 control, a line separator) and multi-byte ones kept
    // (−, °, µ, an emoji) spread over about 6 MB, so chunk ends fall in every kind of text.
    const odd = ['\u202e', '\u0085', '\u2028', '−40 °C', 'µA', '\ud83d\ude00', 'plain'];
    const rows = Array.from({ length: 60000 }, (_, i) => ({ name: `Q${i}${odd[i % odd.length]}`, ic: i * 1.1e-6, tags: [odd[(i * 3) % odd.length]] }));
    const doc = { rows: new JsonEntries(function* () {
      for (let i = 0; i < rows.length; i++) yield [`R${i}${odd[(i * 5) % odd.length]}`, rows[i]];
    }, true) };
    const plain = { rows: Object.fromEntries(rows.map((r, i) => [`R${i}${odd[(i * 5) % odd.length]}`, r])) };
    const got = chunks(doc, 0, escapedJsonChunk);
    expect(got.length).toBeGreaterThan(3);
    for (const c of got) expect(c.length).toBeLessThanOrEqual(1 << 20);
    // The plain path: the whole text escaped character by character (escape.ts), then encoded.
    expect(Buffer.concat(got).equals(Buffer.from(escapeJsonText(JSON.stringify(plain)), 'utf8'))).toBe(true);
    expect(JSON.parse(Buffer.concat(got).toString('utf8'))).toEqual(plain);
  });

  it('writes gathered batches larger than a chunk, and batches of multi-byte text, as JSON.stringify does', () => {
    // A batch is sized by its count of values, not its bytes: forty items of 30,000 characters make one
    // batch of about 1.2 million, more than a chunk takes, which goes over in pieces of its own; the
    // small items around it are written into chunks with their brackets cut in place.
    const itemAt = (i: number): unknown => (i >= 100 && i < 140 ? { big: (i % 2 ? 'µ' : 'x').repeat(30000) } : { i, name: `Q${i}−` });
    const records = (i: number): readonly [string, unknown] => [`R${i}°`, itemAt(i)];
    const doc = { items: new JsonItems(300, itemAt), entries: new JsonEntries(() => Array.from({ length: 300 }, (_, i) => records(i)), true) };
    const plain = { items: Array.from({ length: 300 }, (_, i) => itemAt(i)), entries: Object.fromEntries(Array.from({ length: 300 }, (_, i) => records(i))) };
    for (const indent of [0, 2]) expect(text(doc, indent)).toBe(JSON.stringify(plain, null, indent));
  });

  it('hands over a string longer than a chunk in one piece, and fits pieces larger than the first chunks', () => {
    const long = 'x'.repeat(600000) + '\u00e9'.repeat(300000);
    const got = chunks({ a: 1, long, b: [2] });
    expect(Buffer.concat(got).toString('utf8')).toBe(JSON.stringify({ a: 1, long, b: [2] }));
    // Pieces of 10 k to 300 k characters (each written as it comes: a JsonText) among small ones, from the
    // first, small chunk on: each must fit whole in the chunk it starts.
    const strings = [10000, 3, 40000, 7, 100000, 300000, 1, 200000].map((n) => '\u00b5'.repeat(n));
    const pieces = strings.map((x) => new JsonText([JSON.stringify(x)]));
    expect(Buffer.concat(chunks(pieces)).toString('utf8')).toBe(JSON.stringify(strings));
  });
  it('fills a full-sized chunk again only when the chunks handed over are written out', () => {
    // About 8 MB of records: the chunks grow to 1 MiB, then each is copied out (as a file or blocking pipe takes it).
    const rows = Array.from({ length: 150000 }, (_, i) => ({ name: `Q${i}µ`, ic: i * 1.1e-6, tags: ['−40 °C'] }));
    const doc = { rows: new JsonEntries(function* () {
      for (let i = 0; i < rows.length; i++) yield [`R${i}`, rows[i]];
    }, true) };
    const plain = { rows: Object.fromEntries(rows.map((r, i) => [`R${i}`, r])) };
    for (const out of [true, false]) {
      const copies: Buffer[] = [];
      const buffers = new Set<ArrayBufferLike>();
      writeJsonBytes(doc, (b) => (copies.push(Buffer.from(b)), buffers.add(b.buffer)), { written: () => out });
      expect(Buffer.concat(copies).toString('utf8')).toBe(JSON.stringify(plain));
      expect(copies.length).toBeGreaterThan(9);
      // Written out: the doubling chunks (16 KiB … 1 MiB, seven buffers at most) and then the same one; held: a new buffer each.
      if (out) expect(buffers.size).toBeLessThanOrEqual(7);
      else expect(buffers.size).toBe(copies.length);
    }
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
