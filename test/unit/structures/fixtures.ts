// Invented bias circuits, one per structure kind and polarity, shared by the structure tests.

import type { Circuit } from '../../../shared-analysis/src/circuit';
import type { StructureKind, Technology } from '../../../shared-analysis/src/structures/types';
import { CircuitBuilder } from './build';

/** Options of a fixture circuit. */
export interface FixtureOptions {
  /** Hierarchical prefix for devices and internal nodes, e.g. `X1.`. */
  prefix?: string;
  supply?: number;
  rRef?: number;
  /** Load resistor from the rail to the output node. */
  rLoad?: number;
  /** Widlar emitter resistor; the output's emitter resistor of a degenerated mirror. */
  r2?: number;
  /** The reference's emitter resistor of a degenerated mirror. */
  r1?: number;
  /** Pull-down from the helper mirror's base node to the rail. */
  rB?: number;
  /** Extra model parameters for every device. */
  model?: Record<string, number>;
  temperatureC?: number;
}

/**
 * A reference resistor from one rail into the structure and a load resistor from the
 * other side to each output. NPN/NMOS structures sit on ground with VCC on top; PNP/PMOS
 * structures hang from VCC with the reference resistor to ground.
 */
export function fixture(kind: StructureKind, tech: Technology, o: FixtureOptions = {}): { circuit: Circuit; b: CircuitBuilder; p: string } {
  const p = o.prefix ?? '';
  const b = new CircuitBuilder();
  if (o.temperatureC !== undefined) b.temperatureC = o.temperatureC;
  const up = tech === 'npn' || tech === 'nmos';
  const bip = tech === 'npn' || tech === 'pnp';
  const supply = o.supply ?? 5;
  b.v('VCC', 'vcc', '0', supply);
  b.model('dev', tech, { ...(bip ? {} : { KP: 1e-4, VTO: up ? 0.5 : -0.5 }), ...(o.model ?? {}) });
  const rail = up ? '0' : 'vcc';
  const feedRail = up ? 'vcc' : '0';
  const n = (x: string) => `${p}${x}`;
  const dev = (name: string, c: string, base: string, e: string) =>
    bip ? b.q(n(name), c, base, e, 'dev') : b.mos(n(name), c, base, e, rail, 'dev');
  const rRef = o.rRef ?? 4.3e3;
  const rLoad = o.rLoad ?? 1e3;
  b.r(n('RREF'), feedRail, n('a'), rRef);
  switch (kind) {
    case 'simple-mirror':
      dev('Q1', n('a'), n('a'), rail);
      dev('Q2', n('out'), n('a'), rail);
      break;
    case 'widlar-source':
      dev('Q1', n('a'), n('a'), rail);
      dev('Q2', n('out'), n('a'), n('e2'));
      b.r(n('R2'), n('e2'), rail, o.r2 ?? 5e3);
      break;
    case 'degenerated-mirror':
      dev('Q1', n('a'), n('a'), n('e1'));
      b.r(n('R1'), n('e1'), rail, o.r1 ?? 1e3);
      dev('Q2', n('out'), n('a'), n('e2'));
      b.r(n('R2'), n('e2'), rail, o.r2 ?? 1e3);
      break;
    case 'helper-mirror':
      dev('Q1', n('a'), n('b'), rail);
      dev('Q3', feedRail, n('a'), n('b'));
      dev('Q2', n('out'), n('b'), rail);
      // The follower's pull-down: needed for MOS (gates draw no current), a speed-up resistor for BJTs.
      b.r(n('RB'), n('b'), rail, o.rB ?? 20e3);
      break;
    case 'wilson-mirror':
      dev('Q1', n('a'), n('b'), rail);
      dev('Q2', n('b'), n('b'), rail);
      dev('Q3', n('out'), n('a'), n('b'));
      break;
    case 'improved-wilson-mirror':
      dev('Q1', n('c'), n('b'), rail);
      dev('Q2', n('b'), n('b'), rail);
      dev('Q3', n('out'), n('a'), n('b'));
      dev('Q4', n('a'), n('a'), n('c'));
      break;
    case 'cascode-mirror':
      dev('Q1', n('b'), n('b'), rail);
      dev('Q2', n('c'), n('b'), rail);
      dev('Q3', n('a'), n('a'), n('b'));
      dev('Q4', n('out'), n('a'), n('c'));
      break;
  }
  b.r(n('RL'), feedRail, n('out'), rLoad);
  return { circuit: b.build(), b, p };
}
