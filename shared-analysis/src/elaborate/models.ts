// Elaborates `.model` cards: device type, parameter values with defaults filled in, and range checks.

import { MODEL_DEFAULTS, type Model, type ModelKind, type Origin } from '../circuit';
import type { ModelCard } from '../syntax/ast';
import type { ParamScope } from './expressions';
import type { Sink } from './sink';
import { tokenValue } from './values';
import { formatEngineering } from '../fixes/format';
import { nameTable } from '../names';

/** Type words of a `.model` card, case-insensitive. */
const KIND_OF_TYPE: Record<string, ModelKind> = nameTable({ npn: 'npn', pnp: 'pnp', d: 'd', nmos: 'nmos', pmos: 'pmos', r: 'r' });

/** The device kinds each element letter accepts. */
export const KINDS_FOR_LETTER: Record<'D' | 'Q' | 'M' | 'R', ModelKind[]> = {
  D: ['d'],
  Q: ['npn', 'pnp'],
  M: ['nmos', 'pmos'],
  R: ['r'],
};

/**
 * Parameters of the full published device models (Gummel–Poon, junction diode, Shichman–Hodges)
 * that the DC bias equations of DESIGN.md do not use. They are accepted with one note per card.
 */
const KNOWN_UNUSED: Record<Exclude<ModelKind, 'r'>, Set<string>> = {
  npn: new Set('VAR IKF IKR ISE ISC NE NC RB RBM IRB RE RC CJE VJE MJE CJC VJC MJC XCJC CJS VJS MJS TF XTF VTF ITF PTF TR XTB FC KF AF'.split(' ')),
  pnp: new Set('VAR IKF IKR ISE ISC NE NC RB RBM IRB RE RC CJE VJE MJE CJC VJC MJC XCJC CJS VJS MJS TF XTF VTF ITF PTF TR XTB FC KF AF'.split(' ')),
  d: new Set('CJO CJ0 VJ M TT BV IBV FC KF AF'.split(' ')),
  nmos: new Set('TOX NSUB U0 UO LD WD CGSO CGDO CGBO CBD CBS CJ MJ CJSW MJSW PB IS JS RD RS KF AF FC NFS XJ TPG NSS'.split(' ')),
  pmos: new Set('TOX NSUB U0 UO LD WD CGSO CGDO CGBO CBD CBS CJ MJ CJSW MJSW PB IS JS RD RS KF AF FC NFS XJ TPG NSS'.split(' ')),
};

/**
 * Parameters read as limits of the part rather than by the DC equations (`Model.ratings`): BV
 * (a diode's breakdown voltage, which the DC equations here do not model) and RATEDPOWER, the
 * dissipation limit, a parameter of this project's naming accepted on every model type.
 */
export const RATING_PARAMS = new Set(['BV', 'RATEDPOWER']);

/**
 * Other spellings of model parameters that netlists of the family use, read as the parameter they
 * stand for (common practice, from memory): Gummel–Poon `VA`, `VB`, `IK` and the junction
 * capacitance names, the diode's `PB`, the MOSFET's `UO`.
 */
const ALIASES: Record<'bjt' | 'd' | 'mos', Record<string, string>> = {
  bjt: { VA: 'VAF', VB: 'VAR', VBF: 'VAF', VBR: 'VAR', IK: 'IKF', IKRR: 'IKR', PE: 'VJE', ME: 'MJE', PC: 'VJC', MC: 'MJC', PS: 'VJS', MS: 'MJS', CCS: 'CJS' },
  d: { PB: 'VJ', CJ: 'CJO', CJ0: 'CJO', MJ: 'M' },
  mos: { UO: 'U0' },
};

/** More unknown parameters than this on one card are reported in one finding that lists them. */
const UNKNOWN_LISTED_ONE_BY_ONE = 3;

/** Parameters among KNOWN_UNUSED that change the DC operating point, named in the note so nobody is surprised. */
const DC_RELEVANT = new Set(['RB', 'RE', 'RC', 'IKF', 'IKR', 'ISE', 'ISC', 'VAR', 'BV', 'RD', 'RS']);

/** Range rules: a predicate the value must meet and the phrase shown when it does not. */
const RULES: Record<string, { ok: (v: number) => boolean; must: string }> = nameTable({
  IS: { ok: (v) => v > 0, must: 'must be greater than 0' },
  BF: { ok: (v) => v > 0, must: 'must be greater than 0' },
  BR: { ok: (v) => v > 0, must: 'must be greater than 0' },
  NF: { ok: (v) => v > 0, must: 'must be greater than 0' },
  NR: { ok: (v) => v > 0, must: 'must be greater than 0' },
  N: { ok: (v) => v > 0, must: 'must be greater than 0' },
  EG: { ok: (v) => v > 0, must: 'must be greater than 0' },
  KP: { ok: (v) => v > 0, must: 'must be greater than 0' },
  PHI: { ok: (v) => v > 0, must: 'must be greater than 0' },
  VAF: { ok: (v) => v >= 0, must: 'cannot be negative (0 means no Early effect)' },
  RS: { ok: (v) => v >= 0, must: 'cannot be negative' },
  GAMMA: { ok: (v) => v >= 0, must: 'cannot be negative' },
  LAMBDA: { ok: (v) => v >= 0, must: 'cannot be negative' },
});

/** Where and how a model card is being elaborated. */
export interface ModelContext {
  uri: string;
  scope: ParamScope;
  sink: Sink;
  instances: Origin['instances'];
}

/**
 * Elaborates one `.model` card: the type word, every given parameter evaluated in the scope,
 * defaults from MODEL_DEFAULTS for the rest. Returns undefined for an unknown type.
 * VAF = 0 means "no Early effect" (common practice) and becomes Infinity.
 */
export function elaborateModel(card: ModelCard, ctx: ModelContext): Model | undefined {
  const { uri, scope, sink } = ctx;
  const kind = KIND_OF_TYPE[card.type.text.toLowerCase()];
  if (!kind) {
    sink.add(
      'model-unknown-type',
      `\`${card.type.text}\` is not a device type this analysis reads; a model is NPN, PNP, D, NMOS, PMOS or R.`,
      uri,
      card.type.span,
      undefined,
      { modelName: card.name.text, type: card.type.text },
    );
    return undefined;
  }
  const origin: Origin = { uri, span: card.span, instances: ctx.instances };
  if (kind === 'r') {
    // Resistor models are accepted; their parameters do not enter the DC equations here.
    const params: Record<string, number> = nameTable();
    for (const a of card.params) {
      const v = tokenValue(a.value, scope, uri);
      if (v.ok) params[a.name.text.toUpperCase()] = v.value;
    }
    const ratings = params['RATEDPOWER'] !== undefined && params['RATEDPOWER'] > 0 ? { RATEDPOWER: params['RATEDPOWER'] } : undefined;
    return { name: card.name.text, kind, params, given: Object.keys(params), origin, ...(ratings ? { ratings } : {}) };
  }

  const defaults = MODEL_DEFAULTS[kind];
  const used = Object.keys(defaults);
  const params: Record<string, number> = nameTable(defaults);
  const given: string[] = [];
  const ignored: string[] = [];
  const ratings: Record<string, number> = nameTable();
  const seen = new Map<string, (typeof card.params)[number]>();
  let vtoAssignment: (typeof card.params)[number] | undefined;
  const unknown: (typeof card.params)[number][] = [];
  const aliased: string[] = [];
  const isMos = kind === 'nmos' || kind === 'pmos';
  const aliases = ALIASES[isMos ? 'mos' : kind === 'd' ? 'd' : 'bjt'];
  let levelUnsupported = false;
  for (const a of card.params) {
    const written = a.name.text.toUpperCase();
    const alias = aliases[written];
    const key = alias !== undefined && !card.params.some((b) => b.name.text.toUpperCase() === alias) ? alias : written;
    if (alias !== undefined && key === alias) aliased.push(`${written} as ${alias}`);
    if (key === 'LEVEL') {
      const v = tokenValue(a.value, scope, uri);
      given.push('LEVEL');
      if (!v.ok || v.value !== 1) {
        levelUnsupported = true;
        const what = isMos ? 'the level-1 square law' : kind === 'd' ? 'the junction-diode equation' : 'the Gummel–Poon DC equations';
        sink.add(
          'model-level-unsupported',
          `Only ${what} ${isMos ? 'is' : 'are'} solved; ${v.ok ? `LEVEL=${v.value}` : 'this LEVEL'} is treated as level 1, so the currents of \`${card.name.text}\` are first-order estimates.`,
          uri,
          a.span,
        );
      }
      continue;
    }
    if (!(key in defaults)) {
      if (key === 'RATEDPOWER' || (RATING_PARAMS.has(key) && KNOWN_UNUSED[kind].has(key))) {
        // A limit the checks read (BV is also one the DC equations here leave out, so it keeps its note).
        const v = tokenValue(a.value, scope, uri);
        if (v.ok && v.value > 0 && Number.isFinite(v.value)) ratings[key] = v.value;
        if (key !== 'RATEDPOWER') ignored.push(key);
        continue;
      }
      if (KNOWN_UNUSED[kind].has(key)) {
        ignored.push(key);
        continue;
      }
      unknown.push(a);
      continue;
    }
    const previous = seen.get(key);
    if (previous) {
      sink.add('param-duplicate', `\`${key}\` is given twice in model \`${card.name.text}\`; the later value is used.`, uri, a.name.span, [
        { uri, span: previous.name.span, message: `\`${key}\` is first given here.` },
      ]);
    }
    seen.set(key, a);
    const v = tokenValue(a.value, scope, uri);
    if (!v.ok) {
      sink.add(
        'model-parameter-invalid',
        `${key} of model \`${card.name.text}\` cannot be read. ${capitalise(v.message)} The default ${formatDefault(defaults[key]!)} is used.`,
        uri,
        v.inherited ? a.value.span : v.span,
        v.related,
      );
      continue;
    }
    const rule = RULES[key];
    if (rule && !rule.ok(v.value)) {
      sink.add(
        'model-parameter-invalid',
        `${key}=${v.value} in model \`${card.name.text}\` ${rule.must}; the default ${formatDefault(defaults[key]!)} is used instead.`,
        uri,
        a.value.span,
        undefined,
        { parameter: key, value: v.value, default: defaults[key] },
      );
      continue;
    }
    params[key] = key === 'VAF' && v.value === 0 ? Infinity : v.value;
    if (key === 'VTO') vtoAssignment = a;
    if (!given.includes(key)) given.push(key);
  }
  if (vtoAssignment) thresholdSign(card.name.text, kind, params['VTO']!, vtoAssignment.span, ctx);
  if (aliased.length > 0) {
    sink.add(
      'model-parameter-alias',
      `Model \`${card.name.text}\` writes ${aliased.join(', ')}: ${aliased.length === 1 ? 'that spelling is' : 'those spellings are'} read as the parameter${aliased.length === 1 ? '' : 's'} named.`,
      uri,
      card.name.span,
      undefined,
      { aliases: aliased },
    );
  }
  reportUnknown(card, kind, unknown, used, levelUnsupported, ctx);
  if (ignored.length > 0) {
    const dc = ignored.filter((k) => DC_RELEVANT.has(k));
    sink.add(
      'model-parameter-ignored',
      `Model \`${card.name.text}\` gives ${ignored.join(', ')}, which the DC bias equations here do not use${
        dc.length > 0 ? `; ${dc.join(', ')} would shift the bias point, which is computed without ${dc.length > 1 ? 'them' : 'it'}` : ''
      }.`,
      uri,
      card.name.span,
      undefined,
      { parameters: ignored },
    );
  }
  return { name: card.name.text, kind, params, given, origin, ...(Object.keys(ratings).length > 0 ? { ratings } : {}) };
}

/**
 * Reports the parameters the device equations do not know: one finding each when there are a
 * few (with a "did you mean"), else one finding for the card that lists them all. A model of an
 * unsupported level (a process kit's model) already has its level finding; its unknown
 * parameters are then listed in one note, never one finding each.
 */
function reportUnknown(card: ModelCard, kind: ModelKind, unknown: ModelCard['params'], used: string[], levelUnsupported: boolean, ctx: ModelContext): void {
  if (unknown.length === 0) return;
  const { sink, uri } = ctx;
  if (unknown.length <= UNKNOWN_LISTED_ONE_BY_ONE && !levelUnsupported) {
    for (const a of unknown) {
      const key = a.name.text.toUpperCase();
      const hint = nearest(key, used);
      sink.add(
        'model-unknown-parameter',
        `\`${a.name.text}\` is not a parameter of a ${kind.toUpperCase()} model here${hint ? ` (did you mean ${hint}?)` : ''}; the parameters used are ${used.join(', ')}. It is ignored.`,
        uri,
        a.name.span,
        undefined,
        { parameter: key, known: used },
      );
    }
    return;
  }
  const names = unknown.map((a) => a.name.text.toUpperCase());
  const shown = names.slice(0, 30).join(', ') + (names.length > 30 ? `, and ${names.length - 30} more` : '');
  sink.add(
    levelUnsupported ? 'model-parameter-ignored' : 'model-unknown-parameter',
    `Model \`${card.name.text}\` gives ${names.length} parameters the DC equations here do not know (${shown}); they are ignored, and the parameters used are ${used.join(', ')}.`,
    uri,
    card.name.span,
    undefined,
    { parameters: names, known: used },
  );
}

/**
 * Flags a threshold whose sign describes a depletion device. Under the sign convention of the
 * Shichman–Hodges level-1 model (DESIGN.md: PMOS mirrors every sign of NMOS, VTO included), an
 * enhancement NMOS has VTO > 0 and an enhancement PMOS VTO < 0 (common practice, from memory).
 * A positive PMOS VTO is nearly always a dropped minus sign; a negative NMOS VTO is a real but rare
 * depletion device in bias networks, so it only gets a note.
 */
function thresholdSign(model: string, kind: ModelKind, vto: number, span: ModelCard['span'], ctx: ModelContext): void {
  const volts = (v: number): string => formatEngineering(v, { unit: 'V' });
  const data = { modelName: model, kind, VTO: vto };
  if (kind === 'pmos' && vto > 0) {
    ctx.sink.add(
      'model-threshold-sign',
      `${model} is PMOS with VTO = +${volts(vto)}: under the usual sign convention that is a depletion-mode device, on at VGS = 0 V; an enhancement PMOS has a negative VTO such as ${volts(-vto)}. The value is used as written.`,
      ctx.uri,
      span,
      undefined,
      data,
    );
  } else if (kind === 'nmos' && vto < 0) {
    ctx.sink.add(
      'model-threshold-depletion',
      `${model} is NMOS with VTO = ${volts(vto)}: that is a depletion-mode device, on at VGS = 0 V, which bias networks rarely use; an enhancement NMOS has a positive VTO such as +${volts(-vto)}. The value is used as written.`,
      ctx.uri,
      span,
      undefined,
      data,
    );
  }
}

function formatDefault(v: number): string {
  return Number.isFinite(v) ? String(v) : '∞ (no Early effect)';
}

function capitalise(s: string): string {
  return s.length > 0 ? s[0]!.toUpperCase() + s.slice(1) : s;
}

/** The used parameter one edit away from `key`, if there is exactly such a near miss (`VA` → `VAF`). */
function nearest(key: string, used: string[]): string | undefined {
  return used.find((u) => (u.startsWith(key) && u.length - key.length === 1) || (key.startsWith(u) && key.length - u.length === 1));
}
