// Elaborates `.model` cards: device type, parameter values with defaults filled in, and range checks.

import { MODEL_DEFAULTS, type Model, type ModelKind, type Origin } from '../circuit';
import { MODEL_PARAMETERS, modelParameter } from '../devices/parameters';
import type { ModelCard } from '../syntax/ast';
import type { ParamScope } from './expressions';
import type { Sink } from './sink';
import { tokenValue } from './values';
import { formatEngineering } from '../fixes/format';
import { nameTable } from '../names';

/** Type words of a `.model` card, case-insensitive. */
const KIND_OF_TYPE: Record<string, ModelKind> = nameTable({ npn: 'npn', pnp: 'pnp', d: 'd', nmos: 'nmos', pmos: 'pmos', njf: 'njf', pjf: 'pjf', sw: 'sw', csw: 'csw', r: 'r', res: 'r' });

/** The device kinds each element letter accepts. */
export const KINDS_FOR_LETTER: Record<'D' | 'Q' | 'M' | 'J' | 'S' | 'W' | 'R', ModelKind[]> = {
  S: ['sw'],
  W: ['csw'],
  D: ['d'],
  J: ['njf', 'pjf'],
  Q: ['npn', 'pnp'],
  M: ['nmos', 'pmos'],
  R: ['r'],
};

/**
 * Parameters of the full published device models (Gummel–Poon, junction diode, Shichman–Hodges)
 * that the DC bias equations of docs/DEVICE-MODELS.md do not use. They are accepted with one note per card.
 */
const BJT_UNUSED = new Set('RBM IRB CJE VJE MJE CJC VJC MJC XCJC CJS VJS MJS TF XTF VTF ITF PTF TR FC KF AF'.split(' '));
const JFET_UNUSED = new Set('RD RS CGS CGD PB FC KF AF M B ISR NR ALPHA VK'.split(' '));
const KNOWN_UNUSED: Partial<Record<ModelKind, Set<string>>> = {
  njf: JFET_UNUSED,
  pjf: JFET_UNUSED,
  npn: BJT_UNUSED,
  pnp: BJT_UNUSED,
  d: new Set('CJO CJ0 VJ M TT FC KF AF TBV2'.split(' ')),
  nmos: new Set('TOX NSUB U0 UO LD WD CGSO CGDO CGBO CBD CBS CJ MJ CJSW MJSW PB IS JS RD RS KF AF FC NFS XJ TPG NSS'.split(' ')),
  pmos: new Set('TOX NSUB U0 UO LD WD CGSO CGDO CGBO CBD CBS CJ MJ CJSW MJSW PB IS JS RD RS KF AF FC NFS XJ TPG NSS'.split(' ')),
};

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
const DC_RELEVANT = new Set(['RBM', 'IRB', 'TBV2', 'RD', 'RS']);

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
  VAR: { ok: (v) => v >= 0, must: 'cannot be negative (0 means no reverse Early effect)' },
  IKF: { ok: (v) => v >= 0, must: 'cannot be negative (0 means no high-injection knee)' },
  IKR: { ok: (v) => v >= 0, must: 'cannot be negative (0 means no high-injection knee)' },
  ISE: { ok: (v) => v >= 0, must: 'cannot be negative' },
  ISC: { ok: (v) => v >= 0, must: 'cannot be negative' },
  NE: { ok: (v) => v > 0, must: 'must be greater than 0' },
  NC: { ok: (v) => v > 0, must: 'must be greater than 0' },
  RB: { ok: (v) => v >= 0, must: 'cannot be negative' },
  RE: { ok: (v) => v >= 0, must: 'cannot be negative' },
  RC: { ok: (v) => v >= 0, must: 'cannot be negative' },
  BV: { ok: (v) => v >= 0, must: 'cannot be negative (0 means no breakdown)' },
  IBV: { ok: (v) => v > 0, must: 'must be greater than 0' },
  NBV: { ok: (v) => v > 0, must: 'must be greater than 0' },
  RS: { ok: (v) => v >= 0, must: 'cannot be negative' },
  GAMMA: { ok: (v) => v >= 0, must: 'cannot be negative' },
  LAMBDA: { ok: (v) => v >= 0, must: 'cannot be negative' },
  BETA: { ok: (v) => v > 0, must: 'must be greater than 0' },
  RON: { ok: (v) => v > 0, must: 'must be greater than 0' },
  ROFF: { ok: (v) => v > 0, must: 'must be greater than 0' },
  TNOM: { ok: (v) => v > -273.15, must: 'must be a temperature above absolute zero (−273.15 °C)' },
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
 * VAF, VAR, IKF, IKR or BV = 0 means "no such effect" (common practice) and becomes Infinity.
 */
export function elaborateModel(card: ModelCard, ctx: ModelContext): Model | undefined {
  const { uri, scope, sink } = ctx;
  const kind = KIND_OF_TYPE[card.type.text.toLowerCase()];
  if (!kind) {
    sink.add(
      'model-unknown-type',
      `\`${card.type.text}\` is not a device type this analysis reads; a model is NPN, PNP, D, NMOS, PMOS, NJF, PJF, SW, CSW or R.`,
      uri,
      card.type.span,
      undefined,
      { modelName: card.name.text, type: card.type.text },
    );
    return undefined;
  }
  const origin: Origin = { uri, span: card.span, instances: ctx.instances };
  const defaults = MODEL_DEFAULTS[kind];
  const used = MODEL_PARAMETERS[kind].map((p) => p.name).filter((n) => n !== 'LEVEL');
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
  let level = 1;
  let levelSpan: ModelCard['span'] | undefined;
  for (const a of card.params) {
    const written = a.name.text.toUpperCase();
    const alias = aliases[written];
    const key = alias !== undefined && !card.params.some((b) => b.name.text.toUpperCase() === alias) ? alias : written;
    if (alias !== undefined && key === alias) aliased.push(`${written} as ${alias}`);
    if (key === 'LEVEL') {
      const v = tokenValue(a.value, scope, uri);
      given.push('LEVEL');
      if (isMos) {
        // A higher level is solved with the level-1 law after mapping its core parameters (mapMosParameters).
        level = v.ok ? v.value : NaN;
        levelSpan = a.span;
        levelUnsupported = level !== 1;
      } else if (!v.ok || v.value !== 1) {
        levelUnsupported = true;
        const what = kind === 'd' ? 'the junction-diode equation' : 'the Gummel–Poon DC equations';
        sink.add(
          'model-level-unsupported',
          `Only ${what} are solved; ${v.ok ? `LEVEL=${v.value}` : 'this LEVEL'} is treated as level 1, so the currents of \`${card.name.text}\` are first-order estimates.`,
          uri,
          a.span,
        );
      }
      continue;
    }
    if (key === 'RATEDPOWER') {
      // A limit the checks read, accepted on every model type.
      const v = tokenValue(a.value, scope, uri);
      if (v.ok && v.value > 0 && Number.isFinite(v.value)) ratings[key] = v.value;
      continue;
    }
    if (!modelParameter(kind, key)) {
      // Resistor models carry many parameters of other analyses; those the DC equations do not read are noted together.
      if (kind === 'r' || KNOWN_UNUSED[kind]?.has(key)) {
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
        `${key} of model \`${card.name.text}\` cannot be read. ${capitalise(v.message)} ${capitalise(defaultPhrase(defaults[key]))}.`,
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
        `${key}=${v.value} in model \`${card.name.text}\` ${rule.must}; ${defaultPhrase(defaults[key])} instead.`,
        uri,
        a.value.span,
        undefined,
        { parameter: key, value: v.value, default: defaults[key] },
      );
      continue;
    }
    params[key] = v.value === 0 && modelParameter(kind, key)?.zeroMeansNone ? Infinity : v.value;
    if (key === 'VTO') vtoAssignment = a;
    if (!given.includes(key)) given.push(key);
  }
  if (kind === 'nmos' || kind === 'pmos') {
    params['LEVEL'] = Number.isFinite(level) ? level : 1;
    const mapped = mapMosParameters(params, given);
    if (level !== 1) levelFinding(card, level, levelSpan ?? card.name.span, mapped, given, ctx);
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

/** Permittivity of silicon dioxide, F/m: 3.9·ε0 with ε0 = 8.854e-12 F/m (docs/DEVICE-MODELS.md). */
export const EPSILON_OX = 3.9 * 8.854e-12;

const MAPPED_UNITS: Record<string, string> = { VTO: 'V', KP: 'A/V²', GAMMA: '√V' };

/** One level-1 parameter taken from a higher-level model's parameters. */
interface MappedParameter {
  name: string;
  value: number;
  from: string;
}

/**
 * Fills the level-1 parameters a card does not give from the core parameters of a higher-level
 * model (docs/DEVICE-MODELS.md): VTO ← VTH0, KP ← U0·εox/TOX (U0 above 1 is in cm²/V·s, as model
 * kits write it, and is converted to m²/V·s; TOXE, a BSIM4-style card's electrical oxide thickness, when
 * the card gives no TOX), GAMMA ← K1. A level-1 card with U0 and TOX but no
 * KP gets its KP the same way. Returns what was mapped.
 */
export function mapMosParameters(params: Record<string, number>, given: string[]): MappedParameter[] {
  const out: MappedParameter[] = [];
  const has = (k: string): boolean => given.includes(k) && Number.isFinite(params[k]);
  if (!given.includes('VTO') && has('VTH0')) {
    params['VTO'] = params['VTH0']!;
    out.push({ name: 'VTO', value: params['VTO']!, from: 'VTH0' });
  }
  // The oxide: TOX, or a BSIM4-style card's electrical thickness TOXE, which such cards give instead of TOX.
  const oxide = has('TOX') ? 'TOX' : has('TOXE') ? 'TOXE' : undefined;
  if (!given.includes('KP') && has('U0') && oxide && params[oxide]! > 0 && params['U0']! > 0) {
    const u0 = params['U0']!;
    const mobility = u0 > 1 ? u0 * 1e-4 : u0;
    params['KP'] = (mobility * EPSILON_OX) / params[oxide]!;
    out.push({ name: 'KP', value: params['KP']!, from: `${u0 > 1 ? 'U0 (cm²/V·s)' : 'U0 (m²/V·s)'} and ${oxide}` });
  }
  if (!given.includes('GAMMA') && has('K1') && params['K1']! >= 0) {
    params['GAMMA'] = params['K1']!;
    out.push({ name: 'GAMMA', value: params['GAMMA']!, from: 'K1' });
  }
  return out;
}

/** The one finding of a MOS model of a level above 1: its currents are a level-1 approximation, with the parameters used. */
function levelFinding(card: ModelCard, level: number, span: ModelCard['span'], mapped: MappedParameter[], given: string[], ctx: ModelContext): void {
  const core = ['VTO', 'KP', 'GAMMA', 'LAMBDA', 'PHI'];
  const parts = core.map((name) => {
    const m = mapped.find((p) => p.name === name);
    if (m) return `${name} = ${formatEngineering(m.value, { unit: MAPPED_UNITS[name] })} from ${m.from}`;
    return given.includes(name) ? `${name} as written` : `${name} at its level-1 default`;
  });
  const levelText = Number.isFinite(level) ? `LEVEL=${level}` : 'an unreadable LEVEL';
  ctx.sink.add(
    'model-level-approximated',
    `\`${card.name.text}\` is a ${levelText} model; it is solved with the level-1 square law, so its currents are a level-1 approximation. Used: ${parts.join(', ')}.`,
    ctx.uri,
    span,
    undefined,
    { modelName: card.name.text, level: Number.isFinite(level) ? level : null, mapped: mapped.map((m) => ({ parameter: m.name, value: m.value, from: m.from })) },
  );
}

/**
 * Flags a threshold whose sign describes a depletion device. Under the sign convention of the
 * Shichman–Hodges level-1 model (docs/DEVICE-MODELS.md: PMOS mirrors every sign of NMOS, VTO included), an
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

/** What is used when a given value is unusable: the default, or nothing for a parameter that only matters when given. */
function defaultPhrase(v: number | undefined): string {
  if (v === undefined) return 'it is left unset';
  return `the default ${Number.isFinite(v) ? String(v) : '∞ (no such effect)'} is used`;
}

function capitalise(s: string): string {
  return s.length > 0 ? s[0]!.toUpperCase() + s.slice(1) : s;
}

/** The used parameter one edit away from `key`, if there is exactly such a near miss (`VA` → `VAF`). */
function nearest(key: string, used: string[]): string | undefined {
  return used.find((u) => (u.startsWith(key) && u.length - key.length === 1) || (key.startsWith(u) && key.length - u.length === 1));
}
