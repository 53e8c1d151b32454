// The DC operating point as the solver returns it: plain, JSON-safe data.

/** BJT regions by junction bias (docs/DEVICE-MODELS.md). */
export type BjtRegion = 'forward-active' | 'saturation' | 'cutoff' | 'reverse-active';
/** Diode regions: forward, reverse, or reverse breakdown (a zener at work). */
export type DiodeRegion = 'forward' | 'reverse' | 'breakdown';
/** MOSFET regions of the square-law model. */
export type MosRegion = 'saturation' | 'triode' | 'cutoff';

/** JFET regions of the Shichman–Hodges form, as the trade names them. */
export type JfetRegion = 'saturation' | 'linear' | 'cutoff';

/** Currents are positive flowing into the terminal. */
export interface BjtRecord {
  type: 'bjt';
  polarity: 'npn' | 'pnp';
  region: BjtRegion;
  ic: number;
  ib: number;
  ie: number;
  vbe: number;
  vbc: number;
  vce: number;
  /**
   * Small-signal transconductance (S), input resistance (Ω) and output resistance (Ω): the slope
   * 1/(∂IC/∂VCE) at the operating point with VBE held, so (VAF − VBC)/IC in forward-active (own
   * polarity) and the low resistance of the collector–emitter path in saturation. With no Early
   * voltage in forward-active or cutoff it is 1e30 and `roInfinite` is set.
   */
  gm: number;
  rpi: number;
  ro: number;
  /** True when the model has no Early effect, the device is not saturated, and `ro` is reported as 1e30 Ω. */
  roInfinite?: boolean;
  /** DC current gain IC/IB at this operating point: the model's β at the operating current (high injection, leakage and temperature included). */
  beta: number;
  /** Base–collector conductance ∂IB/∂VBC (S), own polarity, gmin left out: tiny in forward-active, large in saturation, where it lets the collector move the base. */
  gmu: number;
}

export interface MosRecord {
  type: 'mosfet';
  polarity: 'nmos' | 'pmos';
  region: MosRegion;
  /** Drain current, positive into the drain. */
  id: number;
  vgs: number;
  vds: number;
  vth: number;
  /** Overdrive VGS − VTH (for PMOS in the mirrored sense, positive when on). */
  vov: number;
  gm: number;
  ro: number;
  roInfinite?: boolean;
  /** Body transconductance ∂ID/∂VBS (S): the body effect's share of a source-degenerated or cascode output's resistance. */
  gmbs: number;
}

/** Junction FET: currents positive into the terminal (the source carries −(id + ig)). */
export interface JfetRecord {
  type: 'jfet';
  polarity: 'njf' | 'pjf';
  region: JfetRegion;
  /** Drain current (channel minus gate-drain junction current). */
  id: number;
  /** Gate current: the two gate junctions' currents (picoamperes when the gate is reverse-biased). */
  ig: number;
  vgs: number;
  vds: number;
  /** Pinch-off voltage at the analysis temperature, own polarity (negative for a depletion device). */
  vto: number;
  gm: number;
  ro: number;
  roInfinite?: boolean;
}

/** Switch states: fully on (RON), fully off (ROFF), or inside the smooth transition between them. */
export type SwitchRegion = 'on' | 'off' | 'transition';

/** A voltage- or current-controlled switch: the two-terminal values of its switched path, its resistance and its control. */
export interface SwitchRecord {
  type: 'switch';
  region: SwitchRegion;
  /** From the first output node through the switch to the second. */
  current: number;
  voltage: number;
  power: number;
  /** Resistance at this operating point, ohms. */
  resistance: number;
  /** The controlling voltage (S, volts) or current (W, amperes). */
  control: number;
}

export interface DiodeRecord {
  type: 'diode';
  /** Anode-to-cathode current and voltage (across the whole device including RS). */
  id: number;
  vd: number;
  /** `breakdown` when the reverse breakdown current (BV, IBV) dominates the junction's reverse current. */
  region: DiodeRegion;
  /** Dynamic (small-signal) resistance dVD/dID at this point, including RS, ohms. */
  rd: number;
}

/** Resistors, sources and controlled sources: current from the first node through the element to the second, voltage first minus second, power absorbed (negative when delivering). */
export interface TwoTerminalRecord {
  type: 'resistor' | 'voltage-source' | 'current-source' | 'inductor' | 'capacitor' | 'controlled-source' | 'transmission-line';
  current: number;
  voltage: number;
  power: number;
  /** A transmission line's return-conductor current (port-1 − to port-2 −); `current` is its signal conductor's. */
  returnCurrent?: number;
}

export type DeviceRecord = BjtRecord | MosRecord | JfetRecord | DiodeRecord | SwitchRecord | TwoTerminalRecord;

export type Fallback = 'gmin-stepping' | 'source-stepping';

export interface OperatingPoint {
  converged: boolean;
  temperatureC: number;
  iterations: number;
  fallbacks: Fallback[];
  /** Node name -> volts (ground included as 0). */
  nodes: Record<string, number>;
  /** Element name -> record. */
  devices: Record<string, DeviceRecord>;
  /**
   * Nodes with no DC path to ground that the solver tied to ground through a tiny
   * conductance (`TIE_CONDUCTANCE`, 1 pS) so the rest of the circuit could be solved. Their
   * voltages are arbitrary (set by the tie, not by the circuit). Absent when none were tied.
   */
  tiedNodes?: string[];
}

/** Per-solve changes, so sweeps and corners reuse one prepared solver without rebuilding the circuit. */
export interface SolveOptions {
  /** Overrides the circuit's temperature. */
  temperatureC?: number;
  /** Element name -> new DC value for V and I sources. */
  sourceValues?: Record<string, number>;
  /** Multiplies BF (and BR) of every BJT model: beta corners. */
  betaScale?: number;
  /** Starting node voltages, e.g. the previous point of a sweep. */
  initialGuess?: Float64Array;
  /**
   * Temperature (°C) at which `initialGuess` was solved, so junction voltages can be predicted
   * for the new temperature. Not needed when `initialGuess` is the `x` of an earlier result of
   * the same solver: the solver remembers the temperature of every `x` it returned.
   */
  initialGuessTemperatureC?: number;
  /** Newton iteration cap per attempt (default 150). */
  maxIterations?: number;
  /**
   * False: Newton from the start alone, with no gmin or source stepping after it when it does not
   * converge (for a caller that tries a start it predicted and has a plain start to fall back on).
   */
  fallbacks?: boolean;
  /**
   * Element name -> resistance in ohms for this solve only, applied to the prepared matrix
   * without rebuilding it. Any finite value is accepted, negative included, with one exception:
   * a resistor written with a non-zero value cannot be set to 0 Ω (a short needs a current
   * unknown the prepared system lacks); a resistor written as 0 Ω may take any finite value.
   * Refused entries keep the netlist value and give a located `dc-override-refused` finding.
   */
  resistances?: Record<string, number>;
  /**
   * Element name -> model parameters (upper-case name -> value) that this one device uses
   * instead of its model's, for this solve only: the per-device draws of mismatch and Monte
   * Carlo (docs/VARIATION.md). The tables of the kinds concerned are rebuilt; the matrix
   * pattern and its symbolic factorisation are kept. Names that are not devices are ignored.
   */
  deviceParameters?: Record<string, Record<string, number>>;
  /**
   * Asked before every Newton iteration (continuations included): true ends the solve by throwing
   * `SolveStopped` (solve/newton.ts), the one case in which `solve` throws. A host passes its
   * cancellation check here so a superseded analysis stops inside a long solve.
   */
  shouldStop?: () => boolean;
  /**
   * The caller reads the result before its next solve with this flag and keeps nothing of it (not
   * the point, its vectors, nor `x`): the solver may write the result into vectors it overwrites at
   * that next solve instead of allocating them (the corner phase: at 100,000 elements every corner's
   * fresh vectors were 7 MB outside the heap, and each 64 MB of them set off a full collection of a
   * heap of 0.5 GB). The numbers are the same either way.
   */
  reuseResult?: boolean;
  /**
   * The caller reads the point alone, none of the result's findings (the corner phase, which makes its own): the
   * solve leaves out the findings it would look for after the solve (every device asked whether a junction is
   * overdriven, behavioural sources that cannot be evaluated, why Newton failed, results past ±1e300, whose device
   * columns are then not looked over: a record made from them is, as it is made) and the netlist's static and structural
   * ones (floating nodes, voltage loops), so `findings` holds at most what the options themselves drew. The point, `x`
   * and the counters are the same.
   */
  pointOnly?: boolean;
}
