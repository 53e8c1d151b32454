// Reads the target current a user types for resistor sizing (`250u`, `1.2mA`) and explains what is wrong with bad input.
import { parseNumber, splitSuffix } from '../../shared-analysis/src/elaborate/units';
import { formatEngineering } from '../../shared-analysis/src/fixes/format';

/** A target current read from user text: the value in amperes and how it reads back, or why it cannot be used. */
export type TargetCurrent = { ok: true; amps: number; readsAs: string } | { ok: false; message: string };

/**
 * Reads a target current in the netlist's engineering notation: an optional scale suffix
 * (`m` = milli, `u`/`µ` = micro, `n`, `p`, …) and an optional unit `A`. The value must be a
 * positive, finite current; a unit other than amperes (`1.2mV`) is refused.
 */
export function readTargetCurrent(text: string): TargetCurrent {
  const trimmed = text.trim();
  if (trimmed === '') return { ok: false, message: 'Type the current the branch should carry, for example 250u or 1.2mA.' };
  const compact = trimmed.replace(/\s+(?=[A-Za-zµμ]+$)/, '');
  const parsed = parseNumber(compact);
  if (!parsed.ok) return { ok: false, message: parsed.message };
  const letters = /[A-Za-zµμ]*$/.exec(compact)![0];
  const { unit } = splitSuffix(letters);
  if (unit !== '' && unit.toLowerCase() !== 'a') {
    return { ok: false, message: `\`${trimmed}\` ends in \`${unit}\`, which is not a current unit; give amperes, for example 250u or 250uA.` };
  }
  if (!(parsed.value > 0)) return { ok: false, message: `The target current must be greater than zero; \`${trimmed}\` reads as ${formatEngineering(parsed.value, { unit: 'A' })}.` };
  if (parsed.value > 100) return { ok: false, message: `\`${trimmed}\` reads as ${formatEngineering(parsed.value, { unit: 'A' })}, which is far beyond a bias current; check the suffix (m is milli, meg is mega).` };
  return { ok: true, amps: parsed.value, readsAs: formatEngineering(parsed.value, { unit: 'A' }) };
}
