// A section-style library (`.lib NAME` … `.endl`) opened on its own: hovers on its models' parameters
// show each section's own values, and the file raises no finding (a test bench supplies the rest).

import { describe, expect, it } from 'vitest';
import { analyse } from '../../../shared-analysis/src/service';
import { hoverAt } from '../../../shared-analysis/src/features/hover';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

const URI = '/kit/corners.lib';
const TEXT = `.param vscale=1
.lib typical
* Typical corner of a small bipolar kit
.param bfnom=120
.model QKN NPN (IS=5e-16 BF={bfnom} VAF={80*vscale})
.endl typical

.lib slow
.model QKN NPN (IS=3e-16 BF=80 VAF=60)
.endl slow
`;

function hoverOn(needle: string, nth = 0): string {
  const a = analyse({ uri: URI, text: TEXT }, new MemoryWorkspace({}), { corners: { enabled: false } });
  let at = -1;
  for (let k = 0; k <= nth; k++) at = TEXT.indexOf(needle, at + 1);
  const h = hoverAt(a, URI, at + 1);
  expect(h, needle).toBeDefined();
  return h!.markdown;
}

describe('hovers in a section library opened on its own', () => {
  it('raises no finding', () => {
    expect(analyse({ uri: URI, text: TEXT }, new MemoryWorkspace({}), { corners: { enabled: false } }).findings).toEqual([]);
  });

  it("shows each section's own value of a parameter", () => {
    expect(hoverOn('BF=', 0)).toMatch(/Value: 120\b/); // BF={bfnom}, the section's .param
    expect(hoverOn('BF=', 1)).toMatch(/Value: 80\b/);
    expect(hoverOn('VAF=', 0)).toMatch(/Value: 80 V/); // {80*vscale}, a .param outside the sections
    expect(hoverOn('VAF=', 1)).toMatch(/Value: 60 V/);
  });

  it('shows the model of the section hovered', () => {
    expect(hoverOn('QKN', 1)).toMatch(/Model \*\*QKN\*\*[^]*\| BF \| 80 \|/);
  });
});
