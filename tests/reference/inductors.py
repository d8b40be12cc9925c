#!/usr/bin/env python3
"""ngspice references for supplies with inductors (issue 12): choke-input (LC) filters, CLC pi
filters, and capacitor-input supplies with transformer leakage inductance.

What it does. For each invented supply of CASES below (our own scenario; none is taken from any
book, lecture or product) this script
  1. writes the supply as a railcheck file under tests/reference/inductors/, with the keys
     issue 12 adds (railcheck does not read them yet; the lead implements them to this format):
       [transformer] leakage_mh   millihenries referred to the WHOLE secondary, in series with
                                  it; a center tap gets half in each half winding;
       [filter] kind = "lc"       choke_h, choke_ohms, uf, esr_ohms: the rectifier feeds the
                                  choke, the choke feeds the capacitor, the output is the
                                  capacitor;
       [filter] kind = "clc"      uf (first capacitor, at the rectifier), esr_ohms (the first
                                  capacitor's), choke_h, choke_ohms, second_uf (the output
                                  capacitor, no ESR);
  2. builds the same circuit as an ngspice netlist from ngspice's own parts, as generate.py does
     (controlled-source ideal transformer with the primary resistance on the primary side, the
     winding resistance and the leakage inductor in series with the secondary, SPICE junction
     diodes of railcheck's silicon preset, capacitors with a series ESR resistor, a choke as an
     ngspice inductor with its series resistor, resistor or current-source loads);
  3. runs a transient from near the working point (capacitor voltages and the choke's current
     set by .ic / IC=) with generate.py's options (reltol 1e-4, trapezoidal, other option sets
     when ngspice gives up) and its settling rule (the DC of the last two mains periods within
     2e-5), plus a stricter one for the slow ring of an LC section: the DC of the last period
     also agrees within 2e-5 per period with the period a quarter of the LC's own ring period
     earlier (two successive periods can agree at the crest of a slow ring). A run that has not
     settled is run three times as long, twice; then the script stops without writing the CSV;
  4. stores the figures of the last mains period in tests/reference/ngspice_inductors.csv, the
     ngspice version in its first line.

Columns (all over the last mains period in steady state):
  case            the case's name (the file is tests/reference/inductors/<case>.toml);
  dc_v, max_v, min_v, ripple_pp_v, ripple_rms_v   the output (the load's node): its average,
                  extremes, peak to peak and the RMS of its AC part;
  diode_peak_a, diode_avg_a, diode_rms_a          one diode's current (D1: the diode from the
                  winding's first end to the rail; for the doubler, the one charging the top
                  capacitor);
  diode_piv_v     the largest reverse voltage across that diode;
  winding_rms_a   the RMS current in the secondary winding (for a center tap, one half
                  winding, as generate.py);
  cap_ripple_rms_a  the OUTPUT capacitor's RMS current (the capacitor-input supplies: the
                  reservoir; the doubler: the top capacitor, as generate.py; LC: its only
                  capacitor; CLC: second_uf);
  choke_rms_a, choke_peak_a  the choke's current; choke_dc_drop_v the average voltage across
                  the choke and its resistance (= choke_ohms x its average current); all three
                  empty for supplies without a choke;
  conduction_deg  how many degrees of a mains period D1 conducts: the time its current is above
                  1e-6 of its own peak, the crossings interpolated linearly between ngspice's
                  points, times 360 / period;
  ripple_hz       the stronger of the line-frequency and twice-line components of the output
                  (generate.py's dominant_ripple), written as the line frequency or twice it;
The period's ends are interpolated between ngspice's points, so each integral spans exactly
one mains period.
  load_a          the load's average current.

Textbook relations the Rust tests check against (standard choke-input and pi-filter
relations, quoted from memory as they appear in undergraduate electronics texts, e.g. Millman
and Halkias's chapter on rectifiers and filters; each is derived below from the Fourier series
of the full-wave rectified sine so it can be checked without the book):
  A full-wave rectified sine of peak Vm is
      v(t) = (2 Vm / pi) (1 - (2/3) cos 2wt - (2/15) cos 4wt - ...),   w = 2 pi f.
  - DC above critical inductance: the choke's current never stops, so the rectifier's output is
    that wave and the choke passes its average: DC = (2 sqrt 2 / pi) V_rms = 0.900 V_rms (V_rms
    of the whole secondary for a bridge, of one half winding for a center tap), less the
    resistive drop I_dc (winding referred to the secondary (per half for a center tap) + choke)
    and the diode drops (two for a bridge, one for a center tap). The script takes the diode
    drop as the silicon preset's forward voltage at I_dc (n Vt ln(I/IS) + I RS, Vt at ngspice's
    27 C), since above critical each diode carries I_dc for half a period.
  - L-section ripple factor (full wave): the 2w term, amplitude 4 Vm / (3 pi), divides by
    X_L / X_C = (2w)^2 L C when X_L >> X_C, so
      ripple_rms / DC = (sqrt 2 / 3) / ((2 w)^2 L C)          (0.471 / (4 w^2 L C)).
    The DC here is the ideal 0.9 V_rms: the 2w term's amplitude is set by the winding's peak,
    not by the resistive and diode drops, so ripple_rms = 0.9 V_rms x the factor (the script
    compares that; the factor times the loaded DC reads low by the drops' share).
  - Critical inductance (full wave): the choke's current stays positive while the 2w current's
    peak, 4 Vm / (3 pi 2 w L), does not exceed I_dc = 2 Vm / (pi R_load):
      L_crit = R_load / (3 w).
    Below it the current stops each cycle and the output rises toward the peak, Vm (at no load).
  - Pi (CLC) section, full wave: the first capacitor's ripple is near a sawtooth of peak to peak
    I_dc / (2 f C1) whose 2f component has RMS sqrt 2 I_dc X_C1; the L-C2 section divides it by
    X_L / X_C2, so
      ripple_rms = sqrt 2 I_dc X_C1 X_C2 / X_L,  ripple factor = sqrt 2 X_C1 X_C2 / (R_L X_L),
    with every reactance at 2w: X_C = 1 / (2 w C), X_L = 2 w L.
For each LC case above critical the script prints (stderr) the textbook DC and ripple RMS beside
ngspice's; for each CLC case, the pi relation's ripple beside ngspice's.

Choke faults (--faults). `python3 tests/reference/inductors.py --faults` simulates five of the
cases above (three LC, two CLC, all with resistive loads: a current source would drag an
isolated rail below zero, which no real load does) healthy, with the choke shorted and with it
open, into tests/reference/ngspice_choke_faults.csv (the ngspice version in its first line),
leaving the other CSV alone. Shorted: the inductor replaced by a 0 V source, its series
resistor (the choke's copper) kept. Open: the inductor removed, so nothing reaches the output
capacitor; the rectifier's output node gets 1 Gohm to ground (tens of nanoamps) so that
ngspice has a DC path there with every diode off. The rows carry the figures above plus
secondary_vac, the RMS of the whole secondary's terminal voltage (v(a) - v(b), as an AC meter
across the winding reads it), for the diagnosis test.

Run from the repository root:  python3 tests/reference/inductors.py
Needs: ngspice (Debian package `ngspice`; ngspice-39 made the stored data) and python3.
`cargo test` reads only the CSV and the TOML files, never ngspice.
"""

import math
import os
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
# Shared with the reference matrix: the diode presets, the wrdata reader, the ripple-frequency
# rule and the ngspice option sets.
from generate import OPTION_SETS, PRESETS, dominant_ripple, read_wrdata  # noqa: E402

OUT_DIR = os.path.join(HERE, "inductors")
CSV = os.path.join(HERE, "ngspice_inductors.csv")
# A run ten times as long as the slowest seen (about 0.04 s of this machine a mains period)
# has lost its way: its time step has collapsed (the doubler with leakage does so under the
# first two option sets, its winding's end floating between two off diodes behind the
# inductor), and the next option set gets through (rshunt: 1 Gohm from every node to ground).
def ngspice_timeout_s(periods):
    return 20 + 0.4 * periods
VT_27C = 1.380649e-23 * 300.15 / 1.602176634e-19


def case(name, what, topology, vrms, hz, ratio, *, sec, pri=0.0, leak_mh=0.0, kind="capacitor",
         uf=None, esr=0.0, choke_h=None, choke_ohms=None, second_uf=None, amps=None, ohms=None):
    return dict(name=name, what=what, topology=topology, vrms=vrms, hz=hz, ratio=ratio, sec=sec,
                pri=pri, leak_mh=leak_mh, kind=kind, uf=uf, esr=esr, choke_h=choke_h,
                choke_ohms=choke_ohms, second_uf=second_uf, amps=amps, ohms=ohms)


def referred_ohms(ratio, sec, pri):
    """The winding resistance referred to the whole secondary."""
    return sec + pri / ratio ** 2


def leak_for(x_over_r, ratio, sec, pri, hz):
    """Leakage (mH, whole secondary) whose reactance at the line frequency is x_over_r times
    the winding resistance referred to the secondary."""
    return round(x_over_r * referred_ohms(ratio, sec, pri) / (2 * math.pi * hz) * 1e3, 4)


CASES = [
    # --- Choke-input LC, full wave. L_crit = R_load / (3 w).
    # 230 V : 30 V bridge, 47 ohm (about 0.55 A): L_crit 0.050 H, the choke 0.2 H (4 x).
    case("lc_br_50_above", "LC bridge 50 Hz, choke 4x critical", "bridge", 230, 50, 230 / 30,
         sec=0.5, pri=15, kind="lc", choke_h=0.2, choke_ohms=2.0, uf=2200, esr=0.03, ohms=47),
    # 120 V : 2 x 250 V center tap, 2500 ohm (about 90 mA): L_crit 2.2 H, the choke 10 H (4.5 x).
    case("lc_ct_60_above", "LC center tap 60 Hz, valve-era, choke 4.5x critical", "center-tap",
         120, 60, 120 / 500, sec=120, pri=4, kind="lc", choke_h=10, choke_ohms=120, uf=40,
         esr=1.0, ohms=2500),
    # 230 V : 2 x 20 V center tap, 12 ohm (about 1.4 A): L_crit 12.7 mH, the choke 40 mH.
    case("lc_ct_50_above", "LC center tap 50 Hz, low voltage, choke 3x critical", "center-tap",
         230, 50, 230 / 40, sec=0.4, pri=6, kind="lc", choke_h=0.04, choke_ohms=0.25, uf=4700,
         esr=0.02, ohms=12),
    # 120 V : 24 V bridge, 220 ohm (about 0.13 A): L_crit 0.195 H, the choke 50 mH (0.26 x).
    case("lc_br_60_below", "LC bridge 60 Hz, choke 0.26x critical (current stops)", "bridge",
         120, 60, 5.0, sec=1.5, pri=6, kind="lc", choke_h=0.05, choke_ohms=1.5, uf=1000,
         esr=0.05, ohms=220),
    # 230 V : 2 x 300 V center tap, 12 kohm (about 30 mA): L_crit 12.7 H, the choke 5 H (0.4 x).
    case("lc_ct_50_below", "LC center tap 50 Hz, valve-era light load, choke 0.4x critical",
         "center-tap", 230, 50, 230 / 600, sec=150, pri=10, kind="lc", choke_h=5,
         choke_ohms=200, uf=33, esr=2.0, ohms=12000),
    # --- CLC pi filters.
    # 230 V : 2 x 300 V center tap, 47 uF, 10 H 150 ohm, 47 uF, 100 mA (current load).
    case("clc_ct_valve_50", "CLC valve-era 2 x 300 V, 100 mA current load", "center-tap", 230,
         50, 230 / 600, sec=180, pri=12, kind="clc", uf=47, esr=1.5, choke_h=10,
         choke_ohms=150, second_uf=47, amps=0.1),
    # 120 V 60 Hz, the same filter, the load as the resistance drawing about 100 mA.
    case("clc_ct_valve_60_r", "CLC valve-era 2 x 300 V, 3.6 kohm (about 100 mA)",
         "center-tap", 120, 60, 120 / 600, sec=180, pri=3, kind="clc", uf=47, esr=1.5,
         choke_h=10, choke_ohms=150, second_uf=47, ohms=3600),
    # 230 V : 15 V bridge, 4700 uF, 5 mH 0.15 ohm, 2200 uF, 12 ohm (about 1.5 A).
    case("clc_br_lv_50", "CLC low voltage 15 V bridge, 12 ohm", "bridge", 230, 50, 230 / 15,
         sec=0.25, pri=8, kind="clc", uf=4700, esr=0.02, choke_h=0.005, choke_ohms=0.15,
         second_uf=2200, ohms=12),
    # 120 V : 18 V bridge, 6800 uF, 3 mH 0.08 ohm, 3300 uF, 2 A current load.
    case("clc_br_lv_60", "CLC low voltage 18 V bridge, 2 A current load", "bridge", 120, 60,
         120 / 18, sec=0.15, pri=2.5, kind="clc", uf=6800, esr=0.015, choke_h=0.003,
         choke_ohms=0.08, second_uf=3300, amps=2.0),
    # --- Capacitor input with leakage; X at the line frequency / R referred to the secondary.
    case("leak_br_50", "bridge 50 Hz, X = 1.0 R", "bridge", 230, 50, 12.8, sec=0.6, pri=20,
         leak_mh=leak_for(1.0, 12.8, 0.6, 20, 50), uf=4700, esr=0.03, ohms=15),
    case("leak_ct_60", "center tap 60 Hz, X = 2.0 R", "center-tap", 120, 60, 120 / 36, sec=1.2,
         pri=4, leak_mh=leak_for(2.0, 120 / 36, 1.2, 4, 60), uf=3300, esr=0.03, amps=1.0),
    case("leak_hw_50", "half-wave 50 Hz, X = 0.3 R", "half-wave", 230, 50, 230 / 12, sec=1.5,
         pri=40, leak_mh=leak_for(0.3, 230 / 12, 1.5, 40, 50), uf=2200, esr=0.05, ohms=68),
    case("leak_dbl_60", "doubler 60 Hz, X = 0.6 R", "doubler", 120, 60, 1.0, sec=8, pri=3,
         leak_mh=leak_for(0.6, 1.0, 8, 3, 60), uf=220, esr=0.3, amps=0.08),
    case("leak_br_60_toroid", "bridge 60 Hz, X = 1.5 R, heavy current load", "bridge", 120, 60,
         4.0, sec=0.3, pri=1, leak_mh=leak_for(1.5, 4.0, 0.3, 1, 60), uf=10000, esr=0.01,
         amps=3.0),
    case("leak_ct_50_light", "center tap 50 Hz, X = 0.5 R, light load", "center-tap", 230, 50,
         230 / 48, sec=3.0, pri=30, leak_mh=leak_for(0.5, 230 / 48, 3.0, 30, 50), uf=1000,
         esr=0.08, ohms=220),
]


def toml_for(c):
    lines = ["format = 1", f'name = "inductor reference {c["name"]}"',
             f'notes = "ngspice reference case ({c["what"]}), invented; written by '
             'tests/reference/inductors.py"', "",
             "[mains]", f"vrms = {float(c['vrms'])}", f"hz = {float(c['hz'])}", "",
             "[transformer]", f"ratio = {c['ratio']:.6g}", f"secondary_ohms = {c['sec']}",
             f"primary_ohms = {c['pri']}"]
    if c["leak_mh"]:
        lines.append(f"leakage_mh = {c['leak_mh']}")
    lines += ["", "[rectifier]", f'topology = "{c["topology"]}"', 'diode = "silicon"', "",
              "[filter]", f'kind = "{c["kind"]}"', f"uf = {float(c['uf'])}",
              f"esr_ohms = {c['esr']}"]
    if c["kind"] in ("lc", "clc"):
        lines += [f"choke_h = {c['choke_h']}", f"choke_ohms = {c['choke_ohms']}"]
    if c["kind"] == "clc":
        lines.append(f"second_uf = {float(c['second_uf'])}")
    lines += ["", "[load]"]
    lines.append(f"amps = {c['amps']}" if c["amps"] is not None else f"ohms = {float(c['ohms'])}")
    return "\n".join(lines) + "\n"


def half(c):
    return 0.5 if c["topology"] == "center-tap" else 1.0


def winding_peak(c):
    """The open-circuit peak of the winding one diode path sees."""
    return c["vrms"] / c["ratio"] * math.sqrt(2) * half(c)


def critical_h(c):
    return c["ohms"] / (3 * 2 * math.pi * c["hz"]) if c["ohms"] else None


def start_voltage(c):
    """A guess at the output, for the transient's initial conditions (the settling check, not
    the guess, decides the stored figures)."""
    vm = winding_peak(c)
    if c.get("fault") == "choke-open":
        return 0.0
    if c["kind"] == "lc" and c.get("fault") != "choke-shorted":
        lc = critical_h(c)
        frac = 0.9 * 2 / math.pi if lc and c["choke_h"] >= lc else 0.8
        return frac * vm
    return (1.8 if c["topology"] == "doubler" else 0.9) * vm


def netlist(c, tstop, tstart, tmax, out_file, options):
    d = PRESETS["silicon"]
    f = c["hz"]
    ratio = c["ratio"]
    top = c["topology"]
    sec = max(c["sec"], 1e-6)
    leak = c["leak_mh"] * 1e-3
    lines = [f"* railcheck inductor reference {c['name']}",
             f".model DREF D(IS={d['is_a']} N={d['n']} RS={d['rs_ohms']})",
             f"VMAINS m 0 SIN(0 {c['vrms'] * math.sqrt(2)} {f})",
             f"RPRI m p {max(c['pri'], 1e-6)}"]
    if top == "center-tap":
        # Two half windings in series, the tap grounded; each has half the resistance and half
        # the leakage (field_population.py does the same), each sensed and reflected.
        lines += [f"EA a0 0 p 0 {0.5 / ratio}", "VSA a0 a1 0", f"FA p 0 VSA {0.5 / ratio}",
                  f"EB 0 b0 p 0 {0.5 / ratio}", "VSB b1 b0 0", f"FB p 0 VSB {0.5 / ratio}"]
        if leak > 0:
            lines += [f"RA a1 a2 {sec / 2}", f"LA a2 a {leak / 2}",
                      f"RB b2 b1 {sec / 2}", f"LB b b2 {leak / 2}"]
        else:
            lines += [f"RA a1 a {sec / 2}", f"RB b b1 {sec / 2}"]
    else:
        lines += [f"ES a0 b p 0 {1.0 / ratio}", "VSA a0 a1 0", f"FS p 0 VSA {1.0 / ratio}"]
        if leak > 0:
            lines += [f"RS a1 a2 {sec}", f"LS a2 a {leak}"]
        else:
            lines += [f"RS a1 a {sec}"]
        if top != "half-wave":
            # A floating winding needs a DC reference while every diode is off (microamps). No
            # capacitance across a leaky winding: with the leakage it rings at each turn-off
            # (field_population.py's note); generate.py's 1 nF stays on the others.
            lines += ["RFLOAT b 0 1e9"] + ([] if leak > 0 else ["CFLOAT a b 1n"])
    # D1 is the measured diode: from the winding's first end (a) to the rectifier's output.
    if top == "half-wave":
        lines += ["VB b 0 0", "D1 a d1 DREF", "VD1 d1 rect 0"]
    elif top == "center-tap":
        lines += ["D1 a d1 DREF", "VD1 d1 rect 0", "D2 b rect DREF"]
    elif top == "bridge":
        lines += ["D1 a d1 DREF", "VD1 d1 rect 0", "D2 0 a DREF", "D3 b rect DREF",
                  "D4 0 b DREF"]
    elif top == "doubler":
        # Winding between a and the capacitor junction b; D1 charges the top, D2 the bottom.
        lines += ["D1 a d1 DREF", "VD1 d1 rect 0", "D2 0 a DREF"]
    v0 = start_voltage(c)
    load_a = c["amps"] if c["amps"] is not None else v0 / c["ohms"]
    kind = c["kind"]
    ic = []
    if kind == "capacitor":
        out = "rect"
        ref = "b" if top == "doubler" else "0"
        lines += ["VCS rect cs 0", f"R1 cs cs_c {max(c['esr'], 1e-6)}", f"C1 cs_c {ref} {c['uf']}u"]
        if top == "doubler":
            lines += [f"R2 b b_c {max(c['esr'], 1e-6)}", f"C2 b_c 0 {c['uf']}u"]
            ic = [f"v(rect)={v0}", f"v(cs)={v0}", f"v(cs_c)={v0}", f"v(b)={v0 / 2}",
                  f"v(b_c)={v0 / 2}"]
        else:
            ic = [f"v(rect)={v0}", f"v(cs)={v0}", f"v(cs_c)={v0}"]
        choke = None
    elif kind == "lc":
        # The rectifier feeds the choke (with its resistance), the choke the capacitor; the
        # choke starts carrying the load's current.
        out = "out"
        lines += ["VL rect l1 0", f"RCH l1 l2 {c['choke_ohms']}", inductor(c, load_a),
                  "VCS out cs 0", f"R1 cs cs_c {max(c['esr'], 1e-6)}", f"C1 cs_c 0 {c['uf']}u"]
        ic = [f"v(out)={v0}", f"v(cs)={v0}", f"v(cs_c)={v0}"]
        choke = True
    else:
        # First capacitor (with the file's ESR) at the rectifier, the choke, the output one.
        out = "out"
        v1 = v0 + load_a * c["choke_ohms"]
        if c.get("fault") == "choke-open":
            # Nothing draws on the first capacitor: it sits near the peak.
            v1 = winding_peak(c) - (2 if top == "bridge" else 1) * 0.7
        lines += [f"R1 rect c1 {max(c['esr'], 1e-6)}", f"C1 c1 0 {c['uf']}u",
                  "VL rect l1 0", f"RCH l1 l2 {c['choke_ohms']}", inductor(c, load_a),
                  "VCS out cs 0", f"C2 cs 0 {c['second_uf']}u"]
        ic = [f"v(rect)={v1}", f"v(c1)={v1}", f"v(out)={v0}", f"v(cs)={v0}"]
        choke = True
    if c.get("fault") == "choke-open":
        # With the choke open every diode may be off: a DC path for the rectifier's node.
        lines.append("RLEAK rect 0 1e9")
    if c["amps"] is not None:
        lines.append(f"ILOAD {out} 0 DC {c['amps']}")
    else:
        lines.append(f"RLOAD {out} 0 {c['ohms']}")
    lines.append(".ic " + " ".join(ic))
    # Columns: output, D1's current, the winding's current, D1's reverse voltage, the output
    # capacitor's current, then the choke's current and the voltage across it (with its R).
    vectors = f"v({out}) i(VD1) i(VSA) v(rect)-v(a) i(VCS)"
    if choke:
        vectors += " i(VL) v(rect)-v(out)"
    if c.get("fault"):
        # The whole secondary's terminal voltage, for the diagnosis's secondary reading.
        vectors += " v(a)-v(b)"
    lines += [options, f".tran {tmax} {tstop} {tstart} {tmax} uic",
              ".control", "run", f"wrdata {out_file} {vectors}", "quit", ".endc", ".end"]
    return "\n".join(lines) + "\n"


def inductor(c, load_a):
    """The choke's inductor line: as drawn, shorted (a 0 V source: the inductance gone, the
    copper kept in RCH before it) or open (a comment: nothing after RCH)."""
    fault = c.get("fault")
    if fault == "choke-shorted":
        return "VLSHORT l2 out 0"
    if fault == "choke-open":
        return "* LCH open"
    return f"LCH l2 out {c['choke_h']} IC={load_a}"


def conduction_deg(seg, T):
    """Degrees of the period D1's current is above 1e-6 of its peak (crossings interpolated)."""
    peak = max(r[2] for r in seg)
    th = 1e-6 * peak
    on = 0.0
    for a, b in zip(seg, seg[1:]):
        ia, ib = a[2] - th, b[2] - th
        dt = b[0] - a[0]
        if ia >= 0 and ib >= 0:
            on += dt
        elif ia >= 0 > ib:
            on += dt * ia / (ia - ib)
        elif ib >= 0 > ia:
            on += dt * ib / (ib - ia)
    return 360.0 * on / T


def at(rows, t):
    """Every column linearly interpolated at time t between ngspice's points (t within a
    tenth of a microsecond past the last point, wrdata's rounding of tstop, takes the last
    point: ngspice's steps are microseconds)."""
    if rows[-1][0] < t <= rows[-1][0] + 1e-7:
        return [t] + rows[-1][1:]
    for a, b in zip(rows, rows[1:]):
        if a[0] <= t <= b[0]:
            u = 0.0 if b[0] == a[0] else (t - a[0]) / (b[0] - a[0])
            return [x + u * (y - x) for x, y in zip(a, b)]
    raise ValueError(f"time {t} outside the stored points")


def figures(rows, t0, t1, c):
    # The period's ends interpolated, so the integrals span exactly one period (selecting
    # ngspice's points inside it, as generate.py does, leaves out up to one step: 0.025 %).
    seg = [at(rows, t0)] + [r for r in rows if t0 < r[0] < t1] + [at(rows, t1)]
    T = seg[-1][0] - seg[0][0]

    def integ(fn):
        acc = 0.0
        for a, b in zip(seg, seg[1:]):
            acc += 0.5 * (fn(a) + fn(b)) * (b[0] - a[0])
        return acc / T

    dc = integ(lambda r: r[1])
    vmax = max(r[1] for r in seg)
    vmin = min(r[1] for r in seg)
    fig = dict(
        dc_v=dc, max_v=vmax, min_v=vmin, ripple_pp_v=vmax - vmin,
        ripple_rms_v=math.sqrt(integ(lambda r: (r[1] - dc) ** 2)),
        diode_peak_a=max(r[2] for r in seg),
        diode_avg_a=integ(lambda r: r[2]),
        diode_rms_a=math.sqrt(integ(lambda r: r[2] ** 2)),
        diode_piv_v=max(r[4] for r in seg),
        winding_rms_a=math.sqrt(integ(lambda r: r[3] ** 2)),
        cap_ripple_rms_a=math.sqrt(integ(lambda r: r[5] ** 2)),
        choke_rms_a=None, choke_peak_a=None, choke_dc_drop_v=None, choke_min_a=None,
        choke_avg_a=None,
        conduction_deg=conduction_deg(seg, T),
        # generate.py's rule; the line frequency or exactly twice it.
        ripple_hz=c["hz"] * (1 if dominant_ripple(seg, 1.0 / T) < 1.5 / T else 2),
        load_a=c["amps"] if c["amps"] is not None else dc / c["ohms"],
    )
    if len(seg[0]) > 8:
        fig["secondary_vac"] = math.sqrt(integ(lambda r: r[8] ** 2))
    if len(seg[0]) > 6:
        fig.update(choke_rms_a=math.sqrt(integ(lambda r: r[6] ** 2)),
                   choke_peak_a=max(r[6] for r in seg),
                   choke_min_a=min(r[6] for r in seg),
                   choke_avg_a=integ(lambda r: r[6]),
                   choke_dc_drop_v=integ(lambda r: r[7]))
    return fig


def ring_periods(c):
    """A quarter of the LC section's own ring period, in mains periods (at least 2)."""
    if c["kind"] == "capacitor":
        return 2
    cap = c["uf"] if c["kind"] == "lc" else c["second_uf"]
    ring_s = 2 * math.pi * math.sqrt(c["choke_h"] * cap * 1e-6)
    return max(2, round(0.25 * ring_s * c["hz"]))


def start_periods(c):
    """Enough periods for the slowest mode to forget the start: the load's RC, the choke's
    L/R and the LC's ring, several time constants each (a first try; run_case extends it)."""
    T = 1.0 / c["hz"]
    caps = c["uf"] + (c["second_uf"] or 0.0)
    taus = []
    if c["ohms"]:
        taus.append(c["ohms"] * caps * 1e-6)
    if c["choke_h"]:
        r = c["choke_ohms"] + (c["ohms"] or 0.0)
        taus.append(c["choke_h"] / max(c["choke_ohms"] + referred_ohms(c["ratio"], c["sec"],
                                                                         c["pri"]), 1e-3))
        taus.append(c["choke_h"] / r if r > 0 else 0.0)
    tau = max(taus) if taus else 0.0
    return min(max(60, int(4 * tau / T) + 20 + 4 * ring_periods(c)), 600)


def run_case(c, work):
    T = 1.0 / c["hz"]
    periods = start_periods(c)
    back = ring_periods(c)
    for attempt in range(3):
        tstop = periods * T
        tstart = tstop - (back + 2) * T
        out = os.path.join(work, f"{c['name']}.data")
        net = os.path.join(work, f"{c['name']}.cir")
        # ngspice now and then gives up on a circuit ("timestep too small"); another
        # integration method gets through (generate.py's option sets, in its order).
        for options in OPTION_SETS:
            with open(net, "w") as fh:
                fh.write(netlist(c, tstop, tstart, T / 4000, out, options))
            try:
                subprocess.run(["ngspice", "-b", net], check=True, capture_output=True,
                               timeout=ngspice_timeout_s(periods))
            except subprocess.TimeoutExpired:
                print(f"{c['name']}: no result in {ngspice_timeout_s(periods):.0f} s with "
                      f"{options!r}", file=sys.stderr)
                if os.path.exists(out):
                    os.remove(out)
            except subprocess.CalledProcessError:
                print(f"{c['name']}: ngspice failed with {options!r}", file=sys.stderr)
            if os.path.exists(out):
                break
        else:
            raise SystemExit(f"{c['name']}: ngspice failed with every option set")
        rows = read_wrdata(out)
        os.remove(out)
        last = figures(rows, tstop - T, tstop, c)
        before = figures(rows, tstop - 2 * T, tstop - T, c)
        earlier = figures(rows, tstop - (back + 1) * T, tstop - back * T, c)
        scale = max(abs(last["dc_v"]), 1e-9)
        drift = abs(last["dc_v"] - before["dc_v"]) / scale
        slow = abs(last["dc_v"] - earlier["dc_v"]) / scale / back
        if drift < 2e-5 and slow < 2e-5:
            return last, max(drift, slow), periods, options
        print(f"{c['name']}: drift {drift:.1e}/period ({slow:.1e} over {back} periods) after "
              f"{periods} periods; running longer", file=sys.stderr)
        periods *= 3
    raise SystemExit(f"{c['name']}: did not settle (drift {drift:.2e}, {slow:.2e} per period "
                     f"after {periods // 3} periods); no CSV written")


def diode_drop(i):
    d = PRESETS["silicon"]
    return d["n"] * VT_27C * math.log(i / d["is_a"]) + i * d["rs_ohms"]


def textbook_lc(c, fig):
    """The standard choke-input relations (docstring) for an LC case above critical."""
    w = 2 * math.pi * c["hz"]
    ct = c["topology"] == "center-tap"
    v_rms = c["vrms"] / c["ratio"] * half(c)
    # The winding referred to the path one diode pair (bridge) or one half (center tap) sees.
    r_wind = (c["sec"] / 2 + c["pri"] / (4 * c["ratio"] ** 2)) if ct else \
        referred_ohms(c["ratio"], c["sec"], c["pri"])
    # The load's current makes the drops; iterate the resistive load's DC once or twice.
    dc = 2 * math.sqrt(2) / math.pi * v_rms
    for _ in range(20):
        i = c["amps"] if c["amps"] is not None else dc / c["ohms"]
        dc = (2 * math.sqrt(2) / math.pi * v_rms - i * (r_wind + c["choke_ohms"])
              - (1 if ct else 2) * diode_drop(i))
    # The 2w term's amplitude is set by the winding's peak, not by the drops: the ripple factor
    # multiplies the ideal DC, 0.9 V_rms (multiplying the loaded DC would read 10-15 % low).
    ideal = 2 * math.sqrt(2) / math.pi * v_rms
    ripple = ideal * (math.sqrt(2) / 3) / ((2 * w) ** 2 * c["choke_h"] * c["uf"] * 1e-6)
    return dc, ripple


def textbook_pi(c, fig):
    """The pi section's ripple RMS (docstring), at ngspice's own DC load current."""
    w2 = 2 * 2 * math.pi * c["hz"]
    xc1 = 1 / (w2 * c["uf"] * 1e-6)
    xc2 = 1 / (w2 * c["second_uf"] * 1e-6)
    xl = w2 * c["choke_h"]
    return math.sqrt(2) * fig["load_a"] * xc1 * xc2 / xl, \
        math.sqrt(2) * fig["load_a"] * xc1 * xc2 / abs(xl - xc2)


COLUMNS = ["dc_v", "max_v", "min_v", "ripple_pp_v", "ripple_rms_v", "diode_peak_a",
           "diode_avg_a", "diode_rms_a", "diode_piv_v", "winding_rms_a", "cap_ripple_rms_a",
           "choke_rms_a", "choke_peak_a", "choke_dc_drop_v", "conduction_deg", "ripple_hz",
           "load_a"]


# Choke faults (--faults): (case, fault); "healthy" is the case as drawn, for the same readings.
FAULT_CASES = ["lc_br_50_above", "lc_ct_50_above", "lc_br_60_below", "clc_ct_valve_60_r",
               "clc_br_lv_50"]
CHOKE_FAULTS = ["healthy", "choke-shorted", "choke-open"]
FAULT_CSV = os.path.join(HERE, "ngspice_choke_faults.csv")
FAULT_COLUMNS = ["secondary_vac"] + COLUMNS


def fault_main(version, started):
    by_name = {c["name"]: c for c in CASES}
    rows = []
    with tempfile.TemporaryDirectory() as work:
        for name in FAULT_CASES:
            for fault in CHOKE_FAULTS:
                c = dict(by_name[name])
                c["fault"] = fault
                c["name"] = f"{name}_{fault}"
                t = time.monotonic()
                fig, drift, periods, options = run_case(c, work)
                print(f"{c['name']}: dc {fig['dc_v']:.5g} V, pp {fig['ripple_pp_v']:.4g} V, "
                      f"{fig['ripple_hz']} Hz, secondary {fig['secondary_vac']:.4f} V; drift "
                      f"{drift:.1e}/period after {periods} periods ({options}), "
                      f"{time.monotonic() - t:.0f} s", file=sys.stderr)
                rows.append((name, fault, fig))
    fmt = lambda v: "" if v is None else f"{v:.6g}"
    with open(FAULT_CSV, "w") as fh:
        fh.write(f"# {version}; written by tests/reference/inductors.py --faults; choke supplies "
                 "(files under tests/reference/inductors/) healthy, with the choke shorted (a 0 V "
                 "source for the inductor, its resistance kept) and open (the inductor removed); "
                 "figures over the last mains period, secondary_vac the whole winding's terminal "
                 "RMS\n")
        fh.write("case,fault," + ",".join(FAULT_COLUMNS) + "\n")
        for name, fault, fig in rows:
            fh.write(f"{name},{fault}," + ",".join(fmt(fig[k]) for k in FAULT_COLUMNS) + "\n")
    print(f"{len(rows)} faulted runs in {time.monotonic() - started:.0f} s", file=sys.stderr)


def main():
    started = time.monotonic()
    version = subprocess.run(["ngspice", "-v"], capture_output=True, text=True).stdout
    version = next((l.strip("* ").strip() for l in version.splitlines() if "ngspice-" in l),
                   "ngspice (unknown version)")
    if "--faults" in sys.argv[1:]:
        fault_main(version, started)
        return
    only = [a for a in sys.argv[1:] if not a.startswith("-")]
    os.makedirs(OUT_DIR, exist_ok=True)
    rows = []
    with tempfile.TemporaryDirectory() as work:
        for c in CASES:
            if only and c["name"] not in only:
                continue
            with open(os.path.join(OUT_DIR, f"{c['name']}.toml"), "w") as fh:
                fh.write(toml_for(c))
            t = time.monotonic()
            fig, drift, periods, options = run_case(c, work)
            note = ""
            if c["choke_h"]:
                note = (f", choke {fig['choke_avg_a']:.4g} A avg, min {fig['choke_min_a']:.4g} A")
            print(f"{c['name']}: dc {fig['dc_v']:.4f} V, pp {fig['ripple_pp_v']:.4g} V, "
                  f"conduction {fig['conduction_deg']:.1f} deg{note}; drift {drift:.1e}/period "
                  f"after {periods} periods ({options}), {time.monotonic() - t:.0f} s",
                  file=sys.stderr)
            if c["kind"] == "lc":
                lc = critical_h(c)
                print(f"  L = {c['choke_h']} H, L_crit = R/(3w) = {lc:.4g} H "
                      f"(L/L_crit {c['choke_h'] / lc:.2f})", file=sys.stderr)
                if c["choke_h"] >= lc:
                    dc, ripple = textbook_lc(c, fig)
                    print(f"  textbook DC {dc:.4f} V vs ngspice {fig['dc_v']:.4f} V "
                          f"({100 * (fig['dc_v'] / dc - 1):+.2f} %); ripple RMS "
                          f"{ripple:.5g} V vs {fig['ripple_rms_v']:.5g} V "
                          f"({100 * (fig['ripple_rms_v'] / ripple - 1):+.1f} %)",
                          file=sys.stderr)
            elif c["kind"] == "clc":
                ripple, divider = textbook_pi(c, fig)
                print(f"  pi-section ripple RMS {ripple:.5g} V vs ngspice "
                      f"{fig['ripple_rms_v']:.5g} V "
                      f"({100 * (fig['ripple_rms_v'] / ripple - 1):+.1f} %); X_L / X_C2 at 2f "
                      f"{(2 * 2 * math.pi * c['hz']) ** 2 * c['choke_h'] * c['second_uf'] * 1e-6:.1f}"
                      f", with the divider X_C2 / (X_L - X_C2) {divider:.5g} V "
                      f"({100 * (fig['ripple_rms_v'] / divider - 1):+.1f} %)", file=sys.stderr)
            rows.append((c["name"], fig))
    if only:
        print("subset run: CSV not written", file=sys.stderr)
        return
    fmt = lambda v: "" if v is None else f"{v:.6g}"
    with open(CSV, "w") as fh:
        fh.write(f"# {version}; written by tests/reference/inductors.py; supplies with chokes "
                 "and leakage (files under tests/reference/inductors/), figures over the last "
                 "mains period; conduction_deg: D1's current above 1e-6 of its peak\n")
        fh.write("case," + ",".join(COLUMNS) + "\n")
        for name, fig in rows:
            fh.write(name + "," + ",".join(fmt(fig[k]) for k in COLUMNS) + "\n")
    print(f"{len(rows)} cases in {time.monotonic() - started:.0f} s", file=sys.stderr)


if __name__ == "__main__":
    main()
