// Test builder: makes elaborated Circuit objects directly from a compact element list, with distinct spans per element.

import type { BehaviouralSource, BehaviourInput, Circuit, Element, Model, ModelKind } from '../../../shared-analysis/src/circuit';
import type { BehaviourProgram } from '../../../shared-analysis/src/devices/behaviour-program';
import { MODEL_DEFAULTS } from '../../../shared-analysis/src/circuit';

/** A model for tests: defaults filled in, given parameters marked. */
export function model(name: string, kind: Exclude<ModelKind, 'r'>, params: Record<string, number> = {}): Model {
  return {
    name,
    kind,
    params: { ...MODEL_DEFAULTS[kind], ...Object.fromEntries(Object.entries(params).map(([k, v]) => [k.toUpperCase(), v])) },
    given: Object.keys(params).map((k) => k.toUpperCase()),
    origin: { uri: 'test.cir', span: { start: 9000, end: 9010 }, instances: [] },
  };
}

/** One element in builder form: kind letter, name, node names, and kind-specific values. */
export type Spec =
  | ['R', string, string, string, number]
  | ['C' | 'L', string, string, string, number?]
  | ['V' | 'I', string, string, string, number]
  | ['E' | 'G', string, string, string, string, string, number]
  | ['F' | 'H', string, string, string, string, number]
  | ['D', string, string, string, Model, { area?: number; m?: number }?]
  | ['Q', string, string, string, string, Model, { area?: number; m?: number }?]
  | ['M', string, string, string, string, string, Model, { w?: number; l?: number; m?: number }?]
  | ['J', string, string, string, string, Model, { area?: number; m?: number }?]
  | ['S', string, string, string, string, string, Model]
  | ['W', string, string, string, string, Model]
  | ['T', string, string, string, string, string]
  | ['B', string, string, string, BehaviouralSource['output'], BehaviourProgram, [string, string][]];

/**
 * Builds a Circuit. Node '0' (or 'gnd') is ground; other nodes are numbered in order of
 * first appearance. Element i gets the span {start: 100·i, end: 100·i + 50} in 'test.cir'.
 */
export function circuit(specs: Spec[], opts: { temperatureC?: number; tnomC?: number; title?: string } = {}): Circuit {
  const nodes = ['0'];
  const index = new Map<string, number>([['0', 0], ['gnd', 0]]);
  const node = (name: string): number => {
    const key = name.toLowerCase();
    let i = index.get(key);
    if (i === undefined) {
      i = nodes.length;
      nodes.push(name);
      index.set(key, i);
    }
    return i;
  };
  const elements: Element[] = specs.map((s, i) => {
    const origin = { uri: 'test.cir', span: { start: 100 * i, end: 100 * i + 50 }, instances: [] };
    const name = s[1];
    switch (s[0]) {
      case 'R':
        return { kind: 'R', name, nodes: [node(s[2]), node(s[3])], resistance: s[4], origin };
      case 'C':
        return { kind: 'C', name, nodes: [node(s[2]), node(s[3])], capacitance: s[4] ?? 1e-9, origin };
      case 'L':
        return { kind: 'L', name, nodes: [node(s[2]), node(s[3])], inductance: s[4] ?? 1e-6, origin };
      case 'V':
        return { kind: 'V', name, nodes: [node(s[2]), node(s[3])], dc: s[4], origin };
      case 'I':
        return { kind: 'I', name, nodes: [node(s[2]), node(s[3])], dc: s[4], origin };
      case 'E':
        return { kind: 'E', name, nodes: [node(s[2]), node(s[3]), node(s[4]), node(s[5])], gain: s[6], origin };
      case 'G':
        return { kind: 'G', name, nodes: [node(s[2]), node(s[3]), node(s[4]), node(s[5])], gain: s[6], origin };
      case 'F':
        return { kind: 'F', name, nodes: [node(s[2]), node(s[3])], control: s[4], gain: s[5], origin };
      case 'H':
        return { kind: 'H', name, nodes: [node(s[2]), node(s[3])], control: s[4], gain: s[5], origin };
      case 'D':
        return { kind: 'D', name, nodes: [node(s[2]), node(s[3])], model: s[4], area: s[5]?.area ?? 1, m: s[5]?.m ?? 1, origin };
      case 'Q':
        return { kind: 'Q', name, nodes: [node(s[2]), node(s[3]), node(s[4])], model: s[5], area: s[6]?.area ?? 1, m: s[6]?.m ?? 1, origin };
      case 'S':
        return { kind: 'S', name, nodes: [node(s[2]), node(s[3]), node(s[4]), node(s[5])], model: s[6], origin };
      case 'B':
        return { kind: 'B', name, nodes: [node(s[2]), node(s[3])], written: 'B', form: 'expression', output: s[4], program: s[5], inputs: s[6].map(([a, b]): BehaviourInput => ({ kind: 'v', a: node(a), b: node(b) })), origin };
      case 'T':
        return { kind: 'T', name, nodes: [node(s[2]), node(s[3]), node(s[4]), node(s[5])], origin };
      case 'W':
        return { kind: 'W', name, nodes: [node(s[2]), node(s[3])], control: s[4], model: s[5], origin };
      case 'J':
        return { kind: 'J', name, nodes: [node(s[2]), node(s[3]), node(s[4])], model: s[5], area: s[6]?.area ?? 1, m: s[6]?.m ?? 1, origin };
      case 'M':
        return {
          kind: 'M',
          name,
          nodes: [node(s[2]), node(s[3]), node(s[4]), node(s[5])],
          model: s[6],
          w: s[7]?.w ?? 10e-6,
          l: s[7]?.l ?? 1e-6,
          m: s[7]?.m ?? 1,
          origin,
        };
    }
  });
  const models: Record<string, Model> = {};
  for (const el of elements) if ('model' in el) models[el.model.name.toLowerCase()] = el.model;
  return { title: opts.title ?? 'test', nodes, elements, models, temperatureC: opts.temperatureC ?? 27, tnomC: opts.tnomC ?? 27, params: {} };
}
