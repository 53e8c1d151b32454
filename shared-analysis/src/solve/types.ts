// The DC operating point as the solver returns it: plain, JSON-safe data.

/** BJT regions by junction bias (DESIGN.md). */
export type BjtRegion = 'forward-active' | 'saturation' | 'cutoff' | 'reverse-active';
/** MOSFET regions of the square-law model. */
export type MosRegion = 'saturation' | 'triode' | 'cutoff';

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
  /** Small-signal transconductance (S), input resistance (Ω), output resistance (Ω; a large finite cap when VAF is infinite is not used: see `roInfinite`). */
  gm: number;
  rpi: number;
  ro: number;
  /** True when the model has no Early effect and `ro` is reported as 1e30 Ω. */
  roInfinite?: boolean;
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
}

export interface DiodeRecord {
  type: 'diode';
  /** Anode-to-cathode current and voltage (across the whole device including RS). */
  id: number;
  vd: number;
  region: 'forward' | 'reverse';
}

/** Resistors, sources and controlled sources: current from the first node through the element to the second, voltage first minus second, power absorbed (negative when delivering). */
export interface TwoTerminalRecord {
  type: 'resistor' | 'voltage-source' | 'current-source' | 'inductor' | 'capacitor' | 'controlled-source';
  current: number;
  voltage: number;
  power: number;
}

export type DeviceRecord = BjtRecord | MosRecord | DiodeRecord | TwoTerminalRecord;

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
  /** Newton iteration cap per attempt (default 150). */
  maxIterations?: number;
}
