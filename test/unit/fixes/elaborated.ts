// The circuit of one netlist text, parsed (first line a title) and elaborated, for the sizing and corner tests.

import type { Circuit } from '../../../shared-analysis/src/circuit';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

export function circuitOf(text: string, uri = '/netlist.cir'): Circuit {
  return elaborate(parse(uri, text, { hasTitle: true }), new MemoryWorkspace({ [uri]: text }), {}).circuit;
}
