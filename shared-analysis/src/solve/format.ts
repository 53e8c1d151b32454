// Text helpers for solver messages: engineering notation (shared with every other message) and name lists.

import { formatEngineering } from '../fixes/format';

/** Formats `value` with an SI prefix and `unit` (display style, three significant figures), e.g. "1.23 mA". */
export function formatEng(value: number, unit: string): string {
  return formatEngineering(value, { unit, style: 'display' });
}

/** Joins names as "A", "A and B", "A, B and C", eliding beyond `max` ("… and 4 more"). */
export function listNames(names: string[], max = 6): string {
  if (names.length === 0) return '';
  const shown = names.slice(0, max);
  const rest = names.length - shown.length;
  if (rest > 0) return `${shown.join(', ')} and ${rest} more`;
  if (shown.length === 1) return shown[0];
  return `${shown.slice(0, -1).join(', ')} and ${shown[shown.length - 1]}`;
}
