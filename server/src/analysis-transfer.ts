// Splits an Analysis into a small header and parts so the main thread can take it in slices, answering editor requests between slices.

import type { Analysis } from '../../shared-analysis/src/analysis';
import type { Circuit, Element } from '../../shared-analysis/src/circuit';
import type { Card } from '../../shared-analysis/src/syntax/ast';
import type { DeviceRecord } from '../../shared-analysis/src/solve/types';
import type { Structure } from '../../shared-analysis/src/structures/types';
import type { Finding } from '../../shared-analysis/src/types';

/** Items per part: small enough that taking one in keeps the main thread free within a few milliseconds. */
const PART_SIZE = 1500;

/** One slice of the big arrays of an analysis. */
export type AnalysisPart =
  | { kind: 'cards'; uri: string; items: Card[] }
  | { kind: 'elements'; items: Element[] }
  | { kind: 'devices'; items: [string, DeviceRecord][] }
  | { kind: 'findings'; items: Finding[] }
  | { kind: 'structures'; items: Structure[] };

/** The analysis with its big arrays emptied, and the parts that refill them in order. */
export function splitAnalysis(analysis: Analysis): { header: Analysis; parts: AnalysisPart[] } {
  const parts: AnalysisPart[] = [];
  const slices = <T>(list: T[], make: (items: T[]) => AnalysisPart) => {
    for (let i = 0; i < list.length; i += PART_SIZE) parts.push(make(list.slice(i, i + PART_SIZE)));
  };
  const documents: Analysis['documents'] = {};
  for (const [uri, doc] of Object.entries(analysis.documents)) {
    documents[uri] = { ...doc, cards: [] };
    slices(doc.cards, (items) => ({ kind: 'cards', uri, items }));
  }
  let circuit: Circuit | undefined;
  if (analysis.circuit) {
    circuit = { ...analysis.circuit, elements: [] };
    slices(analysis.circuit.elements, (items) => ({ kind: 'elements', items }));
  }
  let operatingPoint = analysis.operatingPoint;
  if (operatingPoint) {
    slices(Object.entries(operatingPoint.devices), (items) => ({ kind: 'devices', items }));
    operatingPoint = { ...operatingPoint, devices: {} };
  }
  slices(analysis.findings, (items) => ({ kind: 'findings', items }));
  slices(analysis.structures, (items) => ({ kind: 'structures', items }));
  const header: Analysis = { ...analysis, documents, circuit, operatingPoint, findings: [], structures: [] };
  return { header, parts };
}

/** Puts one part back into an analysis being assembled from its header. */
export function mergePart(target: Analysis, part: AnalysisPart): void {
  switch (part.kind) {
    case 'cards': {
      const doc = target.documents[part.uri];
      if (doc) for (const c of part.items) doc.cards.push(c);
      return;
    }
    case 'elements':
      if (target.circuit) for (const e of part.items) target.circuit.elements.push(relink(target.circuit, e));
      return;
    case 'devices':
      if (target.operatingPoint) for (const [name, rec] of part.items) target.operatingPoint.devices[name] = rec;
      return;
    case 'findings':
      for (const f of part.items) target.findings.push(f);
      return;
    case 'structures':
      for (const s of part.items) target.structures.push(s);
      return;
  }
}

/** Points an element's model back at the circuit's model object (identity is lost across messages). */
function relink(circuit: Circuit, e: Element): Element {
  if (!('model' in e)) return e;
  for (const m of Object.values(circuit.models)) {
    if (m.name === e.model.name && m.origin.uri === e.model.origin.uri && m.origin.span.start === e.model.origin.span.start) {
      return { ...e, model: m } as Element;
    }
  }
  return e;
}
