// mapList builds the list Array.prototype.map builds (ECMA-262, Array.prototype.map), item by item; trimmed copies a
// list as Array.prototype.slice() does (ECMA-262, Array.prototype.slice: a new array of the same items).
import { describe, expect, it } from 'vitest';
import { mapList, trimmed } from '../../shared-analysis/src/arrays';

describe('mapList', () => {
  it('gives what Array.prototype.map gives, with each item and its index, for lists of strings and of objects', () => {
    const names = ['Q1', 'Q2', 'R10', 'X1.Q3'];
    expect(mapList(names, (s, i) => `${s}#${i}`)).toEqual(names.map((s, i) => `${s}#${i}`));
    const records = names.map((name, k) => ({ name, k }));
    expect(mapList(records, (r, i) => ({ name: r.name.toLowerCase(), at: i * r.k }))).toEqual(records.map((r, i) => ({ name: r.name.toLowerCase(), at: i * r.k })));
    expect(mapList([] as string[], (s) => s)).toEqual([]);
  });

  it('makes a new list and leaves the one it reads alone', () => {
    const list = ['a', 'b'];
    const out = mapList(list, (s) => s.toUpperCase());
    expect(out).not.toBe(list);
    expect(list).toEqual(['a', 'b']);
    expect(out).toEqual(['A', 'B']);
  });
});

describe('trimmed', () => {
  it('gives a new list of the same items in the same order, which later writes to either leave the other alone', () => {
    const grown: string[] = [];
    for (const name of ['RR0', 'RR1', 'X1.RB']) grown.push(name);
    const copy = trimmed(grown);
    expect(copy).toEqual(['RR0', 'RR1', 'X1.RB']);
    expect(copy).not.toBe(grown);
    copy.push('RL0');
    grown[0] = 'R9';
    expect(grown).toEqual(['R9', 'RR1', 'X1.RB']);
    expect(copy).toEqual(['RR0', 'RR1', 'X1.RB', 'RL0']);
    expect(trimmed([])).toEqual([]);
  });
});
