// The docs/DEVICE-MODELS.md level-1 MOSFET equations written out for the reference tests, independently of the
// engine's device code, so the tests that check the engine's MOSFET against them share one copy.

export type MosP = { KP: number; VTO: number; LAMBDA: number; GAMMA: number; PHI: number };

/** Drain current for VDS ≥ 0 (NMOS sense): VTH with body effect, then cutoff, saturation or triode. */
export function squareLaw(vgs: number, vds: number, vbs: number, p: MosP, wl: number): number {
  const vth = p.VTO + p.GAMMA * (Math.sqrt(p.PHI - vbs) - Math.sqrt(p.PHI));
  const vov = vgs - vth;
  const beta = p.KP * wl;
  if (vov <= 0) return 0;
  if (vds >= vov) return (beta / 2) * vov * vov * (1 + p.LAMBDA * vds);
  return beta * (vov * vds - (vds * vds) / 2) * (1 + p.LAMBDA * vds);
}

/** Drain current for any VDS: the channel is symmetric, so for VDS < 0 the drain acts as source. */
export function mosDrainCurrent(vgs: number, vds: number, vbs: number, p: MosP, wl: number): number {
  return vds >= 0 ? squareLaw(vgs, vds, vbs, p, wl) : -squareLaw(vgs - vds, -vds, vbs - vds, p, wl);
}
