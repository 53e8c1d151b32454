// The seed netlists of the fuzz target (target.ts, `npm run fuzz`) and of the whole-pipeline property
// tests (pipeline.fuzz.test.ts): one list, so both start from the same invented scenarios. Between
// them they use every card kind the engine reads (mirrors of each polarity, JFETs, switches,
// behavioural and table sources, subcircuits with parameters, nested subcircuits, includes, library
// sections, `.if`, `.func`, `.global`) and the dialect it skips (`.control`, `.meas`).
// The netlists are invented scenarios; nothing here is copied from elsewhere.

/** Where the fuzzed root netlist lives in the in-memory workspace. */
export const FUZZ_ROOT = '/w/top.cir';

/** Index in SEED_NETLISTS of the netlist that includes every LIBRARY file (used when a library file is the one mutated). */
export const INCLUDING_SEED = 2;

/** Invented seed netlists. */
export const SEED_NETLISTS: readonly string[] = [
  `Thermocouple preamp bias: NPN mirrors, a helper and a Widlar trim
.param vsup=9 iref=200u rref={(vsup-0.7)/iref}
.temp 35
.option tnom=27
VCC vcc 0 DC {vsup}
VP pulse 0 PULSE(0 1 1n 1n 1n 1u 2u)
VS sine 0 SIN(0.5 0.1 1k)
VE expo 0 EXP(0 1 1n 10n 20n 30n)
IW sine 0 PWL(0 10u 1m 20u)
RREF vcc ref {rref}
Q1 ref ref 0 qamp
Q2 out ref 0 qamp          ; expect 200uA ±5%
Q3 out3 ref 0 qamp 2
RL2 vcc out 10k
RL3 vcc out3 4.7k
Q4 trim ref et qamp
RE4 et 0 2.2k
RT vcc trim 22k
D1 vcc dk dclamp
RD dk 0 47k
C1 ref 0 10n
L1 vcc lf 10u
RLF lf 0 100k
RPU pulse 0 1k
RSI sine 0 1k
REX expo 0 1k
.model qamp NPN (IS=3e-16 BF=160 VAF=70)
.model dclamp D (IS=1e-14 N=1.1 RS=5)
.op
.end
`,
  `Battery monitor CMOS bias: NMOS ratio mirror, PMOS mirror, cascode and controlled sources
.param wn=4u ln=1u
VDD vdd 0 DC 3.3
IREF vdd gn 20u
M1 gn gn 0 0 nch W={wn} L={ln}
M2 dn gn 0 0 nch W={2*wn} L={ln} ; expect 40uA ±10%
M3 casc gn 0 0 nch W={wn} L={ln}
M4 cout vb casc 0 nch W={wn} L={ln}
VB vb 0 1.6
RC vdd cout 20k
MP1 gp gp vdd vdd pch W=8u L=1u
MP2 op gp vdd vdd pch W=8u L=1u M=2
RGP gp 0 100k
ROP op 0 30k
RDN vdd dn 15k
E1 e1 0 dn 0 2
RE1 e1 0 1k
VSENSE dn sense 0
RSENSE sense 0 1meg
F1 0 f1 VSENSE 1.5
RF1 f1 0 1k
G1 0 g1 op 0 1m
RG1 g1 0 1k
H1 h1 0 VSENSE 100
RH1 h1 0 1k
X1 vdd xo pbias wr=2
RX xo 0 50k
* expect X1.MB = 20uA ±20%
.subckt pbias top out wr=1
RB top gb 120k
MA gb gb 0 0 nch W=4u L=1u
MB out gb 0 0 nch W={wr*4u} L=1u
.ends pbias
.model nch NMOS (VTO=0.45 KP=120u LAMBDA=0.04)
.model pch PMOS (VTO=-0.5 KP=40u LAMBDA=0.05)
.end
`,
  `Line driver: PNP source mirror and NPN Wilson sink, models from included files, a corner chosen by .if
.include "lib/drivers.inc"
.param corner=1
.if (corner == 1)
.lib "lib/corners.lib" typical
.else
.lib "lib/corners.lib" slow
.endif
.param vcc=15 rset={(vcc-1.4)/1m}
VCC vcc 0 {vcc}
VEE vee 0 -5
RSET pref vee {rset}
QP1 pref pref vcc qsrc
QP2 pout pref vcc qsrc   ; expect 1mA ±5%
QP3 pout2 pref vcc qsrc
RPL pout vee 6.8k
RPL2 pout2 0 3.3k
RWR vcc w1 12k
QW1 w1 w2 vee qsink
QW2 w2 w2 vee qsink
QW3 wout w1 w2 qsink
RWL vcc wout 5.6k
.control
op
if v(wout) > 0.5
  let x = 1
end
.endc
.meas dc vx when v(wout)=2
.end
`,
  `Sensor array: one parameterised bias cell used three times
.param vsup=5 base=10k
.func half(x) = x/2
.global vdd
VDD vdd 0 DC {vsup}
XA a1 cell ratio=1
XB b1 cell ratio=2 rtop={half(base)}
XC c1 cell
RA a1 0 1k
RB b1 0 1k
RC vdd c1 2k
* expect XA.QO = 400uA ±25%
.subckt cell out ratio=1 rtop={base}
.param rr={rtop*1}
RR vdd r {rr}
QR r r 0 qs
QO out r 0 qs {ratio}
XN vdd r inner
.subckt inner p q
RI p q 1meg
.ends inner
.ends cell
.model qs NPN (BF=120 VAF=60)
.end
`,
  `Audio preamp front end: JFETs of both polarities with temperature terms
.temp 60
VDD vdd 0 DC 15
RD vdd d 3.3k
J1 d 0 s jn 2
RS s 0 470
JP out src vdd jp M=2
RSP vdd src 1k
RL out 0 2.2k
J3 d3 g3 0 jn
RG g3 0 1meg
RD3 vdd d3 10k TC1=1.5m TC2=2u
S1 d3 0 ctl 0 smod
VCTL ctl 0 2
W1 out 0 VCTL wmod
RP vdd out RPOLY L=20u W=2u
B1 bo 0 V={V(d, s)*2 + (V(out) > 1 ? 0.5 : 0)}
RBO bo 0 10k
B2 bi 0 I={1m*tanh(V(bi)/0.3) + I(VCTL)}
RBI vdd bi 4.7k
E5 eo 0 VALUE={sqrt(abs(V(d)))}
G5 0 go POLY(2) d 0 s 0 1u 2u 0 1n
RGO go 0 1k
E6 to 0 TABLE {V(d)} = (0,0) (5,1) (10,3)
H5 ho 0 POLY(1) VCTL 0 100
T1 ho 0 tl 0 Z0=50 TD=2n
RTL tl 0 10k
RHO ho 0 1k
.model smod SW (RON=50 ROFF=1meg VT=1 VH=0.2)
.model wmod CSW (RON=10 ROFF=1e9 IT=1u)
.model RPOLY R (RSH=150 TC1=-1m)
.model jn NJF (VTO=-2 BETA=1.3m LAMBDA=0.01 IS=2e-14 VTOTC=-2m BETATCE=-0.5)
.model jp PJF (VTO=-2.5 BETA=1m LAMBDA=0.02)
.end
`,
  `.lib typical
.model qk NPN (IS=5e-16 BF=120 VAF=80 VA=70)
.endl typical
.subckt ref top out
R1 top b 47k
Q1 b b 0 qk
Q2 out b 0 qk
.ends ref
`,
];

/** Files the seeds include (SEED_NETLISTS[INCLUDING_SEED] includes them all); mutated in some cases. */
export const SEED_LIBRARY: Readonly<Record<string, string>> = {
  '/w/lib/drivers.inc': '* driver transistors\n.model qsrc PNP (IS=1e-15 BF=90 VAF=45)\n.include common.inc\n',
  '/w/lib/common.inc': '.model qsink NPN (IS=2e-16 BF=200 VAF=90)\n.param rbase=4.7k\n',
  '/w/lib/corners.lib': '.lib typical\n.param bscale=1\n.endl typical\n.lib slow\n.param bscale=0.6\n.endl slow\n',
};
