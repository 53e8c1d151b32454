// The model parameters every device kind reads: name, meaning, unit and default, in one table that the elaborator, the devices, completion and hover all use.

/** Device model kinds the engine understands (the `.model` type words map onto these). */
export type ModelKind = 'npn' | 'pnp' | 'd' | 'nmos' | 'pmos' | 'njf' | 'pjf' | 'sw' | 'csw' | 'r';

/** One model parameter the engine reads. */
export interface ModelParameterInfo {
  /** Upper-case name as model cards write it. */
  name: string;
  /** What it means, as a phrase ("forward Early voltage"). */
  meaning: string;
  unit: string;
  /**
   * The value used when the card does not give it (docs/DEVICE-MODELS.md); `Infinity` for "no
   * such effect". Absent for a parameter that only matters when given (the core parameters of a
   * higher-level MOS model, the bin limits).
   */
  default?: number;
  /** Written out when a missing `.model` card is inserted with its defaults (the parameters a reader expects to see). */
  core?: boolean;
  /** A value of 0 means "no such effect" (`VAF=0`, as model cards write it) and is read as Infinity. */
  zeroMeansNone?: boolean;
}

const TEMPERATURE_IS: ModelParameterInfo[] = [
  { name: 'XTI', meaning: 'temperature exponent of IS', unit: '', default: 3, core: true },
  { name: 'EG', meaning: 'band-gap energy used for the temperature dependence of IS', unit: 'eV', default: 1.11, core: true },
];

/** The card's nominal temperature: every temperature law of its device runs from it (docs/DEVICE-MODELS.md). */
const NOMINAL_TEMPERATURE: ModelParameterInfo = { name: 'TNOM', meaning: "temperature at which the card's parameters hold; the analysis's nominal temperature (.option tnom, 27 °C) when not given", unit: '°C' };

const BJT: ModelParameterInfo[] = [
  { name: 'IS', meaning: 'transport saturation current', unit: 'A', default: 1e-16, core: true },
  { name: 'BF', meaning: 'ideal forward current gain (peak beta)', unit: '', default: 100, core: true },
  { name: 'BR', meaning: 'ideal reverse current gain', unit: '', default: 1, core: true },
  { name: 'NF', meaning: 'forward emission coefficient', unit: '', default: 1, core: true },
  { name: 'NR', meaning: 'reverse emission coefficient', unit: '', default: 1, core: true },
  { name: 'VAF', meaning: 'forward Early voltage', unit: 'V', default: Infinity, core: true, zeroMeansNone: true },
  { name: 'VAR', meaning: 'reverse Early voltage', unit: 'V', default: Infinity, zeroMeansNone: true },
  { name: 'IKF', meaning: 'forward knee current: high injection rolls beta off above it', unit: 'A', default: Infinity, zeroMeansNone: true },
  { name: 'IKR', meaning: 'reverse knee current', unit: 'A', default: Infinity, zeroMeansNone: true },
  { name: 'ISE', meaning: 'base-emitter leakage saturation current: rolls beta off at low current', unit: 'A', default: 0 },
  { name: 'NE', meaning: 'base-emitter leakage emission coefficient', unit: '', default: 1.5 },
  { name: 'ISC', meaning: 'base-collector leakage saturation current', unit: 'A', default: 0 },
  { name: 'NC', meaning: 'base-collector leakage emission coefficient', unit: '', default: 2 },
  { name: 'RB', meaning: 'base resistance', unit: 'Ω', default: 0 },
  { name: 'RE', meaning: 'emitter resistance', unit: 'Ω', default: 0 },
  { name: 'RC', meaning: 'collector resistance', unit: 'Ω', default: 0 },
  ...TEMPERATURE_IS,
  { name: 'XTB', meaning: 'temperature exponent of beta (BF, BR)', unit: '', default: 0 },
  NOMINAL_TEMPERATURE,
  { name: 'MATCHVBE', meaning: 'σ of the VBE difference of two unit devices at equal current, for the spread analysis (docs/VARIATION.md; 0.5 mV when not given)', unit: 'V' },
  { name: 'MATCHBF', meaning: 'relative σ of the β difference of two unit devices, for the spread analysis (1 % when not given)', unit: '' },
];

const DIODE: ModelParameterInfo[] = [
  { name: 'IS', meaning: 'saturation current', unit: 'A', default: 1e-14, core: true },
  { name: 'N', meaning: 'emission coefficient', unit: '', default: 1, core: true },
  { name: 'RS', meaning: 'series resistance', unit: 'Ω', default: 0, core: true },
  { name: 'BV', meaning: 'reverse breakdown voltage (a zener’s voltage)', unit: 'V', default: Infinity, zeroMeansNone: true },
  { name: 'IBV', meaning: 'reverse current at the breakdown voltage', unit: 'A', default: 1e-3 },
  { name: 'NBV', meaning: 'breakdown emission coefficient (sharpness of the knee)', unit: '', default: 1 },
  { name: 'TBV1', meaning: 'first-order temperature coefficient of BV', unit: '1/K', default: 0 },
  ...TEMPERATURE_IS,
  NOMINAL_TEMPERATURE,
];

const MOS: ModelParameterInfo[] = [
  { name: 'KP', meaning: 'transconductance parameter (µ·Cox)', unit: 'A/V²', default: 2e-5, core: true },
  { name: 'VTO', meaning: 'threshold voltage at zero bulk bias', unit: 'V', default: 0, core: true },
  { name: 'LAMBDA', meaning: 'channel-length modulation', unit: '1/V', default: 0, core: true },
  { name: 'GAMMA', meaning: 'body-effect coefficient', unit: '√V', default: 0, core: true },
  { name: 'PHI', meaning: 'surface potential', unit: 'V', default: 0.6, core: true },
  { name: 'BEX', meaning: 'temperature exponent of KP (mobility)', unit: '', default: -1.5 },
  { name: 'TCV', meaning: 'fall of the threshold magnitude per kelvin', unit: 'V/K', default: 1e-3 },
  NOMINAL_TEMPERATURE,
  { name: 'LEVEL', meaning: 'model level; levels above 1 are solved with the level-1 law after mapping VTH0, U0, TOX (or TOXE), K1', unit: '', default: 1 },
  { name: 'VTH0', meaning: 'threshold voltage of a higher-level model (read as VTO)', unit: 'V' },
  { name: 'U0', meaning: 'low-field mobility of a higher-level model (cm²/V·s when above 1, else m²/V·s)', unit: 'cm²/V·s' },
  { name: 'TOX', meaning: 'gate-oxide thickness (KP = U0·εox/TOX)', unit: 'm' },
  { name: 'TOXE', meaning: 'electrical gate-oxide thickness of a BSIM4-style model, read as TOX when the card gives no TOX', unit: 'm' },
  { name: 'K1', meaning: 'body-effect coefficient of a higher-level model (read as GAMMA)', unit: '√V' },
  { name: 'LMIN', meaning: 'shortest channel length this bin of a binned model covers', unit: 'm' },
  { name: 'LMAX', meaning: 'longest channel length this bin covers', unit: 'm' },
  { name: 'WMIN', meaning: 'narrowest channel width this bin covers', unit: 'm' },
  { name: 'WMAX', meaning: 'widest channel width this bin covers', unit: 'm' },
  { name: 'MATCHVT', meaning: 'Pelgrom threshold-mismatch coefficient: σ(ΔVTH) of a pair = MATCHVT/√(W·L), for the spread analysis (docs/VARIATION.md; 5 mV·µm when not given)', unit: 'V·m' },
  { name: 'MATCHKP', meaning: 'Pelgrom current-factor mismatch coefficient: σ(ΔKP/KP) of a pair = MATCHKP/√(W·L) (1 %·µm when not given)', unit: 'm' },
];

const JFET: ModelParameterInfo[] = [
  { name: 'VTO', meaning: 'pinch-off voltage (negative for an n-channel device)', unit: 'V', default: -2, core: true },
  { name: 'BETA', meaning: 'transconductance parameter (IDSS = BETA·VTO²)', unit: 'A/V²', default: 1e-4, core: true },
  { name: 'LAMBDA', meaning: 'channel-length modulation', unit: '1/V', default: 0, core: true },
  { name: 'IS', meaning: 'gate-junction saturation current', unit: 'A', default: 1e-14, core: true },
  { name: 'N', meaning: 'gate-junction emission coefficient', unit: '', default: 1 },
  { name: 'VTOTC', meaning: 'temperature coefficient of VTO', unit: 'V/K', default: 0 },
  { name: 'BETATCE', meaning: 'temperature coefficient of BETA, percent per kelvin', unit: '%/K', default: 0 },
  ...TEMPERATURE_IS,
  NOMINAL_TEMPERATURE,
  { name: 'SPREADVTO', meaning: 'σ of the pinch-off voltage from one part to the next, as a fraction of |VTO|, for the spread analysis (docs/VARIATION.md; 0.25 when not given)', unit: '' },
  { name: 'MATCHVTO', meaning: 'σ of the VTO difference of two matched unit devices, for the spread analysis (5 mV when not given)', unit: 'V' },
  { name: 'MATCHBETA', meaning: 'relative σ of the BETA difference of two matched unit devices, for the spread analysis (2 % when not given)', unit: '' },
];

const VOLTAGE_SWITCH: ModelParameterInfo[] = [
  { name: 'RON', meaning: 'resistance when on', unit: 'Ω', default: 1, core: true },
  { name: 'ROFF', meaning: 'resistance when off', unit: 'Ω', default: 1e12, core: true },
  { name: 'VT', meaning: 'controlling voltage at which the switch changes state', unit: 'V', default: 0, core: true },
  { name: 'VH', meaning: 'hysteresis voltage: the switch turns on at VT + VH and off at VT − VH', unit: 'V', default: 0, core: true },
];

const CURRENT_SWITCH: ModelParameterInfo[] = [
  { name: 'RON', meaning: 'resistance when on', unit: 'Ω', default: 1, core: true },
  { name: 'ROFF', meaning: 'resistance when off', unit: 'Ω', default: 1e12, core: true },
  { name: 'IT', meaning: 'controlling current at which the switch changes state', unit: 'A', default: 0, core: true },
  { name: 'IH', meaning: 'hysteresis current: the switch turns on at IT + IH and off at IT − IH', unit: 'A', default: 0, core: true },
];

const RESISTOR: ModelParameterInfo[] = [
  { name: 'RSH', meaning: 'sheet resistance: R = RSH·L/W', unit: 'Ω/□' },
  { name: 'TC1', meaning: 'first-order temperature coefficient', unit: '1/K', default: 0 },
  { name: 'TC2', meaning: 'second-order temperature coefficient', unit: '1/K²', default: 0 },
];

/** Every model parameter the engine reads, per model kind, in the order hovers and completion list them. */
export const MODEL_PARAMETERS: Readonly<Record<ModelKind, readonly ModelParameterInfo[]>> = {
  npn: BJT,
  pnp: BJT,
  d: DIODE,
  nmos: MOS,
  pmos: MOS,
  njf: JFET,
  pjf: JFET,
  sw: VOLTAGE_SWITCH,
  csw: CURRENT_SWITCH,
  r: RESISTOR,
};

/** The parameters of `kind` that have a default, name -> default (a fresh null-prototype object per kind). */
function defaultsOf(kind: ModelKind): Record<string, number> {
  const out = Object.create(null) as Record<string, number>;
  for (const p of MODEL_PARAMETERS[kind]) if (p.default !== undefined) out[p.name] = p.default;
  return out;
}

/** Default model parameters per kind (docs/DEVICE-MODELS.md), upper-case names. */
export const MODEL_DEFAULTS: Readonly<Record<ModelKind, Readonly<Record<string, number>>>> = {
  npn: defaultsOf('npn'),
  pnp: defaultsOf('pnp'),
  d: defaultsOf('d'),
  nmos: defaultsOf('nmos'),
  pmos: defaultsOf('pmos'),
  njf: defaultsOf('njf'),
  pjf: defaultsOf('pjf'),
  sw: defaultsOf('sw'),
  csw: defaultsOf('csw'),
  r: defaultsOf('r'),
};

/** The table entry of parameter `name` (any case) of `kind`, if the engine reads it. */
export function modelParameter(kind: ModelKind, name: string): ModelParameterInfo | undefined {
  const key = name.toUpperCase();
  return MODEL_PARAMETERS[kind].find((p) => p.name === key);
}
