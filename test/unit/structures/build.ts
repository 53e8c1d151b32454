// A small builder of elaborated Circuit objects for the structure tests, independent of the parser and elaborator.

import { MODEL_DEFAULTS, type Circuit, type Element, type Model, type ModelKind, type Origin } from '../../../shared-analysis/src/circuit';

/** Options for a transistor card. */
export interface DeviceOptions {
  area?: number;
  m?: number;
  w?: number;
  l?: number;
}

/**
 * Builds a Circuit card by card. Each card gets a distinct fake span (40 characters
 * apart, in card order) so findings can be checked for pointing at the right card.
 * Names containing a dot (`X1.Q1`) get a matching instance in their origin.
 */
export class CircuitBuilder {
  private readonly nodes: string[] = ['0'];
  private readonly elements: Element[] = [];
  private readonly models: Record<string, Model> = {};
  private cards = 0;
  temperatureC = 27;
  tnomC = 27;

  constructor(readonly uri = 'test.cir') {}

  private node(name: string): number {
    const n = name.toLowerCase() === 'gnd' ? '0' : name;
    let i = this.nodes.indexOf(n);
    if (i < 0) {
      this.nodes.push(n);
      i = this.nodes.length - 1;
    }
    return i;
  }

  private origin(name: string): Origin {
    const start = this.cards++ * 40;
    const parts = name.split('.');
    const instances = parts.slice(0, -1).map((p, k) => ({ name: parts.slice(0, k + 1).join('.'), uri: this.uri, span: { start: 10000 + k, end: 10001 + k } }));
    return { uri: this.uri, span: { start, end: start + 30 }, valueSpan: { start: start + 20, end: start + 30 }, modelSpan: { start: start + 20, end: start + 30 }, instances };
  }

  /** Spans the card of element `name` was given. */
  spanOf(name: string): { start: number; end: number } {
    const e = this.elements.find((x) => x.name === name);
    if (!e) throw new Error(`no element ${name}`);
    return e.origin.span;
  }

  model(name: string, kind: Exclude<ModelKind, 'r'>, params: Record<string, number> = {}): this {
    const upper: Record<string, number> = {};
    for (const [k, v] of Object.entries(params)) upper[k.toUpperCase()] = v;
    this.models[name.toLowerCase()] = {
      name,
      kind,
      params: { ...MODEL_DEFAULTS[kind], ...upper },
      given: Object.keys(upper),
      origin: this.origin(`.model ${name}`),
    };
    return this;
  }

  private getModel(name: string): Model {
    const m = this.models[name.toLowerCase()];
    if (!m) throw new Error(`model ${name} not defined yet`);
    return m;
  }

  r(name: string, a: string, b: string, ohms: number): this {
    this.elements.push({ kind: 'R', name, nodes: [this.node(a), this.node(b)], resistance: ohms, origin: this.origin(name) });
    return this;
  }

  c(name: string, a: string, b: string, farads: number): this {
    this.elements.push({ kind: 'C', name, nodes: [this.node(a), this.node(b)], capacitance: farads, origin: this.origin(name) });
    return this;
  }

  v(name: string, plus: string, minus: string, dc: number): this {
    this.elements.push({ kind: 'V', name, nodes: [this.node(plus), this.node(minus)], dc, origin: this.origin(name) });
    return this;
  }

  /** `dc` amperes flow from `plus` through the source to `minus`. */
  i(name: string, plus: string, minus: string, dc: number): this {
    this.elements.push({ kind: 'I', name, nodes: [this.node(plus), this.node(minus)], dc, origin: this.origin(name) });
    return this;
  }

  /** A voltage-controlled voltage source: V(outP) − V(outN) = gain·(V(ctrlP) − V(ctrlN)). */
  e(name: string, outP: string, outN: string, ctrlP: string, ctrlN: string, gain: number): this {
    this.elements.push({ kind: 'E', name, nodes: [this.node(outP), this.node(outN), this.node(ctrlP), this.node(ctrlN)], gain, origin: this.origin(name) });
    return this;
  }

  q(name: string, c: string, b: string, e: string, model: string, o: DeviceOptions = {}): this {
    this.elements.push({
      kind: 'Q',
      name,
      nodes: [this.node(c), this.node(b), this.node(e)],
      model: this.getModel(model),
      area: o.area ?? 1,
      m: o.m ?? 1,
      origin: this.origin(name),
    });
    return this;
  }

  /** A diode from anode `a` to cathode `k`. */
  d(name: string, a: string, k: string, model: string, o: { area?: number; m?: number } = {}): this {
    this.elements.push({ kind: 'D', name, nodes: [this.node(a), this.node(k)], model: this.getModel(model), area: o.area ?? 1, m: o.m ?? 1, origin: this.origin(name) });
    return this;
  }

  mos(name: string, d: string, g: string, s: string, bulk: string, model: string, o: DeviceOptions = {}): this {
    this.elements.push({
      kind: 'M',
      name,
      nodes: [this.node(d), this.node(g), this.node(s), this.node(bulk)],
      model: this.getModel(model),
      w: o.w ?? 10e-6,
      l: o.l ?? 1e-6,
      m: o.m ?? 1,
      origin: this.origin(name),
    });
    return this;
  }

  /** A junction FET: drain, gate, source (`o.area` and `o.m` as on the card). */
  jfet(name: string, d: string, g: string, s: string, model: string, o: { area?: number; m?: number } = {}): this {
    this.elements.push({ kind: 'J', name, nodes: [this.node(d), this.node(g), this.node(s)], model: this.getModel(model), area: o.area ?? 1, m: o.m ?? 1, origin: this.origin(name) });
    return this;
  }

  build(): Circuit {
    return {
      title: 'structure test',
      nodes: [...this.nodes],
      elements: [...this.elements],
      models: { ...this.models },
      temperatureC: this.temperatureC,
      tnomC: this.tnomC,
      params: {},
    };
  }
}
