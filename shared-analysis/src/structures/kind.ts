// The contract of one structure kind's module: its names, recogniser, hand analysis and the hooks the shared checks call.

import type { Chain, ChainResult, Hand } from './hand';
import type { Matcher, Draft } from './match';
import type { Transistor } from './topology';
import type { OperatingPoint } from '../solve/types';
import type { Severity } from '../types';
import type { Estimate, EstimateStep, Structure, StructureKind, StructureOutput, StructureRole, Technology } from './types';

/** Small-signal values of one device (from the solved record when there is one, else textbook values). */
export interface SmallSignal {
  gm: number;
  ro: number;
  rpi: number;
  beta: number;
  /** Body transconductance of a MOSFET whose source is off its bulk node (S; 0 for a BJT, a bulk tied to its source, or no operating point). */
  gmb: number;
}

/** What a kind's output-resistance hook may ask the structure check. */
export interface ResistanceContext {
  s: Structure;
  bipolar: boolean;
  /** Small-signal values of a structure device at current `i` (A). */
  smallSignal(device: string, i: number): SmallSignal;
  /** Resistance of the reference feed seen from the reference node (1e30 for a current source). */
  feedOhms(): number;
  /** The reference current (solved, else estimated), or `fallback`. */
  irefOr(fallback: number): number;
  /** The structure's device with a role, if any. */
  withRole(role: StructureRole): string | undefined;
  /** A resistor's value by name (0 when there is no such resistor). */
  resistance(name: string): number;
}

/** What a kind's ratio hook may ask. */
export interface RatioContext {
  s: Structure;
  bipolar: boolean;
  estimate?: Estimate;
}

/** A `mirror-ratio` finding's text and data, as a kind words it. */
export interface RatioNote {
  message: string;
  data: Record<string, unknown>;
}

/** The 0.7 V shortcut step of a resistor-fed bipolar reference. */
export interface ShortcutInput {
  available: number;
  ohms: number;
  /** "V+ − V−" with numbers, as the IREF step writes it. */
  supplyText: string;
}

/**
 * One kind of bias structure. The registry (`catalogue.ts`) lists the modules in the order the
 * recognisers are tried, most specific first; everything the engine knows about a kind lives in
 * its module, and shared code asks the module instead of switching on the kind.
 */
export interface KindModule {
  readonly id: StructureKind;
  /** Its name in running text ("Widlar current source"); hover headings capitalise it. The one table of names. */
  readonly name: string;
  /** What one of its outputs is called ("Widlar output"). */
  readonly outputName: string;
  /** One line for the README's table of kinds: the pattern and what sets its current. */
  readonly summary: string;
  /** Device families it is recognised in. */
  readonly technologies: readonly Technology[];
  /** The transistors its recogniser is tried on, in name order. */
  readonly seeds: 'diode-connected' | 'not-diode-connected';
  /** A draft of the structure around `seed`, from the topology and model kinds only (never an operating point). */
  recognise(m: Matcher, seed: Transistor): Draft | undefined;

  /** VBE/VGS drops stacked between the reference node and the common node (starvation, IREF shortcut, resistor sizing). */
  readonly referenceJunctions: number;
  /** Roles the hand analysis cannot do without. */
  readonly requiredRoles?: readonly StructureRole[];
  /** Paralleled diode-connected twins of the reference share its current. */
  readonly parallelReference?: boolean;
  /** The node the structure's currents return to, when it is not the lower diode's or reference's emitter. */
  commonNode?(h: Hand): number | undefined;
  /** False when an edited or foreign structure lacks what the analysis needs (besides devices and roles). */
  complete?(h: Hand): boolean;
  /**
   * Self-biased kinds: IREF from the structure's own loop equation (never from its feed, and never 0 A
   * without a step that says why), with its steps through `c`.
   */
  ownReference?(h: Hand, c: Chain): number;
  /** The structure at one IREF: reference-chain voltage, output currents, output edges; steps through `c`. */
  analyse(h: Hand, iref: number, c: Chain): ChainResult;
  /**
   * Voltages the structure produces, by hand, at the state `analyse` returned (name -> volts, in the
   * convention of `DerivedVoltage`, and the temperature coefficient by hand when the kind derives one);
   * steps through `c`.
   */
  voltages?(h: Hand, state: ChainResult, c: Chain): Record<string, { volts: number; tempcoPpmPerC?: number }>;
  /** The structure has no current outputs of its own (a voltage-producing kind such as the VBE multiplier). */
  readonly voltageOnly?: boolean;
  /** The reference-chain voltage at one IREF without steps, when the kind has a faster form than `analyse`. */
  stackAt?(h: Hand, iref: number): number | undefined;
  /** The reference-chain term of the resistor-fed IREF formula, e.g. "2 stacked VBE". */
  stackFormula?(h: Hand, vName: string): string;
  /** The 0.7 V shortcut step of a resistor-fed bipolar reference, when the kind words it differently. */
  shortcut?(h: Hand, x: ShortcutInput): EstimateStep;

  /**
   * Its outputs' emitter (source) resistors set their currents by Ohm's law, IOUT ≈ (VREF − VBE)/RE,
   * not by a Widlar logarithm: resistor sizing starts from Ohm's law.
   */
  readonly emitterResistorByOhmsLaw?: boolean;

  /** Small-signal output resistance of one output (called only when the output's own ro is bounded). */
  outputResistance(c: ResistanceContext, o: StructureOutput, out: SmallSignal, i: number): number;
  /** The `mirror-ratio` note of an output, or undefined when the output has no intended ratio. */
  ratio(c: RatioContext, o: StructureOutput): RatioNote | undefined;
  /** Whether its hand formula carries the Early effect / channel-length modulation of the outputs. */
  readonly earlyInFormula: boolean;
  /** Pull-downs (resistors, current sources) on its control node are part of its hand analysis. */
  readonly pullDownsInFormula?: boolean;
  /** The simplifications of its hand formula, named when nothing more specific explains a discrepancy. */
  simplifications(s: Structure): string;
  /** Finding codes the kind's own checks raise, with default severity and summary (gathered into the structure codes). */
  readonly codes?: Readonly<Record<string, { severity: Severity; summary: string }>>;
  /** The kind's own checks at the operating point (after the shared ones). */
  check?(c: KindCheckContext): KindFinding[];
}

/** What a kind's own checks may read. */
export interface KindCheckContext {
  s: Structure;
  bipolar: boolean;
  sign: 1 | -1;
  op?: OperatingPoint;
  /** Solved voltage of a node by name (undefined without a solve). */
  v(node: string): number | undefined;
  headroomMarginV: number;
}

/** A finding a kind's check raises, located at one of its devices or parts. */
export interface KindFinding {
  code: string;
  at: string;
  message: string;
  data: Record<string, unknown>;
}
