// The variation figures as plain JSON-safe data: spread, drift, supply sensitivity and ranked contributors per output (docs/VARIATION.md).

/** One source's part of an output's spread. */
export interface Contribution {
  /** The source (`RREF`, `VCC`) or the group of a structure's mismatch (`Q1/Q2 VBE`). */
  name: string;
  /** Fraction of the output's variance (0…1). */
  share: number;
  /** Its σ in the output's unit (A or V). */
  sigma: number;
  /** Its worst-case excursion in the output's unit. */
  worstCase: number;
}

/** One normalised sensitivity. */
export interface Sensitivity {
  /** The resistor, source or device parameter (`RREF`, `VCC`, `Q1 VBE`). */
  parameter: string;
  /** `%/%` for a resistor (d ln y / d ln R), `%/V` or `%/A` for a source, `%/mV` for a VBE or VTH shift, `%/%` for a β or KP change. */
  unit: string;
  value: number;
}

/** Monte Carlo figures of one output. */
export interface MonteCarloFigures {
  runs: number;
  /** Runs that converged and were counted. */
  converged: number;
  mean: number;
  sigma: number;
  min: number;
  max: number;
  /** Equal-width bins from `min` to `max`. */
  histogram: number[];
  /** Fraction of runs within the target, when the output has one. */
  yield?: number;
}

/** The predicted spread of one output. */
export interface OutputVariation {
  /** `IREF`, the output device, the voltage's name or the element with a target. */
  output: string;
  key: string;
  unit: 'A' | 'V';
  structure?: string;
  element?: string;
  nominal: number;
  /** Statistical spread: σ = √Σ(S·σᵢ)² (A or V) and relative to the nominal. */
  sigma: number;
  sigmaRelative: number;
  /** Linear worst case Σ|S·Δᵢ| (A or V) and relative to the nominal. */
  worstCase: number;
  worstCaseRelative: number;
  /** Temperature coefficient at the analysis temperature, ppm/°C of the nominal value. */
  tempcoPpmPerC: number;
  /** Supply sensitivity per voltage source: % of the nominal value per volt. */
  supplyPercentPerVolt: Record<string, number>;
  /** Contributors ranked by their share of the variance (at most 8). */
  contributors: Contribution[];
  /** The largest normalised sensitivities (at most 10), by magnitude. */
  sensitivities: Sensitivity[];
  /** Against its target, when the element has one: the window and the predicted fraction of builds inside it. */
  target?: { current: number; tolerance: number; yield: number };
  monteCarlo?: MonteCarloFigures;
}

/** One source of spread as used, for the report. */
export interface SourceSummary {
  name: string;
  /** `part spread`: a device's own spread from one part to the next (a JFET's pinch-off voltage). */
  kind: 'resistor' | 'source' | 'mismatch' | 'part spread';
  /** Relative tolerance (resistors, sources), σ in volts (VBE, VTH, a JFET's VTO) or relative σ (β, KP, BETA). */
  figure: number;
  from: 'card' | 'series' | 'setting' | 'supply' | 'model' | 'default';
}

export interface VariationResult {
  outputs: OutputVariation[];
  sources: SourceSummary[];
  /** Transposed solves done and time spent (ms). */
  stats: { adjointSolves: number; parameters: number; ms: number };
  monteCarlo?: { runs: number; seed: number; converged: number; ms: number };
}
