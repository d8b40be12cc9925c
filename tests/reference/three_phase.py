#!/usr/bin/env python3
"""ngspice references for three-phase rectifiers, supplies straight off the line, constant-power
loads and 400 Hz units.

What it does. For each invented supply of CASES below (our own scenario: drive DC buses, a
400 Hz transformer-rectifier unit, small off-line converters; none is taken from any book,
lecture or product) this script
  1. writes the supply as a railcheck file under tests/reference/three_phase/<case>.toml with
     the keys this feature adds (railcheck does not read them yet; the lead implements them to
     this format):
       [mains] phases = 3       vrms is then the LINE-TO-LINE RMS (default phases = 1);
       [line] ohms, mh          series R and L of the line or a line reactor, PER PHASE, on the
                                line side (single-phase: the whole loop, one series R + L);
       [transformer] optional   left out: the rectifier runs straight off the line (ratio 1);
                                three-phase: a star-star transformer, ratio = primary
                                line-to-line : secondary line-to-line, primary_ohms per phase
                                (star equivalent) on the primary side, secondary_ohms and
                                leakage_mh per phase of the secondary;
       [rectifier] topology     "three-phase-bridge" (six-pulse), "three-phase-star"
                                (three-pulse: the upper diodes only, the secondary's star point
                                is the - rail), or the single-phase "bridge", "half-wave";
       [load] watts, cutoff_v   a constant-power load (law below);
  2. builds the same circuit as an ngspice netlist from ngspice's own parts (below);
  3. runs a transient from near the working point (the capacitor at about its working voltage,
     a choke and the phases feeding it at t = 0 carrying the load's current), 4000 steps a
     mains period at most, with ngspice's options of OPTIONS below (Gear, reltol 1e-4; then
     generate.py's sets), and inductors.py's settling rule (the DC of the last two mains
     periods within 2e-5, and within 2e-5 per period of the period a quarter of the slowest LC
     ring earlier; a run that has not settled is run three times as long, twice; then the
     script stops without writing the CSV);
  4. stores the figures of the last mains period in tests/reference/ngspice_three_phase.csv,
     the ngspice version in its first line.

Circuit conventions (the netlist; railcheck's engine must model the same circuit):
  - Phase EMFs are sines of phase RMS V_ph = V_LL / sqrt 3:
        v_a = sqrt 2 V_ph sin(wt),  v_b = sqrt 2 V_ph sin(wt - 120 deg),
        v_c = sqrt 2 V_ph sin(wt - 240 deg),
    joined at the source's star point N. N floats: it is not joined to the DC side; 1 Gohm and
    1 nF from N to ground give ngspice a DC path and keep N from jumping at a diode's turn-off
    (microamps). The DC - rail is ground. The one exception is a three-pulse star WITHOUT a
    transformer, whose - rail is N itself.
  - Each phase: [line] ohms and mh in series, then the transformer, then the diodes.
  - Transformer, per phase an ideal single-phase transformer (a voltage-controlled source for the
    secondary, a current-controlled one reflecting the secondary's current into the primary):
    primary_ohms in series on the primary side after the line, the primary winding from there
    to N (the primary's star point IS the source's star point: every phase is its own ideal
    transformer, so a three-pulse secondary's DC and triplen currents are reflected into the
    primary and returned through N; an ideal transformer passes DC, no core saturates);
    secondary phase EMF = primary phase voltage / ratio, between the secondary's star point S
    and the phase, then secondary_ohms and leakage_mh in series. S floats (1 Gohm and 1 nF to
    ground) for a six-pulse bridge; S is the - rail (ground) for a three-pulse star. In the
    netlist the line's inductance is referred to the secondary (mh / ratio^2, in one inductor
    with the leakage), its resistance stays on the primary: the same circuit for an ideal
    transformer, which ngspice solves where an inductor in series with the reflecting source
    stops it.
  - Six-pulse bridge: D1 (phase a to +), D3 (b to +), D5 (c to +), D4 (- to a), D6 (- to b),
    D2 (- to c). Three-pulse star: D1, D3, D5 only.
  - Single-phase off-line (phases = 1, no transformer): the mains EMF, then [line] ohms and mh
    (the whole loop) in series with the live side, into a bridge (the source's other end
    floating, 1 Gohm and 1 nF to ground) or a half-wave (the source's other end is the - rail).
  - Filter: "capacitor" = uf with esr_ohms in series, across the rectifier's output; "lc" =
    choke_h with choke_ohms in series from the rectifier's + to the capacitor (a drive's DC
    link choke); "none" = the load straight on the rectifier.
  - Load: ohms (a resistor), amps (a DC current source) or watts + cutoff_v (constant power P,
    cutoff Vc), an ngspice B-source drawing
        I(V) = P / max(V, Vc) * min(1, max(0, (V - 0.9 Vc) / (0.1 Vc))),
    i.e. P/V at V >= Vc, falling linearly from P/Vc at Vc to zero at 0.9 Vc, zero below:
    continuous everywhere (a converter's undervoltage stop).
  - Diodes: SPICE junctions (IS, N, RS, at ngspice's 27 C), railcheck's presets from
    generate.py, or an explicit table sized for the current (the drive and TRU cases).
  - A lost phase (fault "phase-lost", vfd_400_bus_phase_lost): phase c's line is open between
    the source and the rectifier (its R and L removed); phase c's rectifier input keeps only
    1 Gohm to ground, and its diodes D5 and D2 stay in the circuit. The bridge then runs off
    v_a - v_b alone. Its TOML file is the healthy unit's (the `file` column).

Columns of the CSV (all over the last mains period in steady state, the period's ends
interpolated between ngspice's points as inductors.py does):
  case, file      the case's name and the TOML it uses, relative to tests/reference/
                  (the lost phase uses the healthy unit's file);
  fault           "phase-lost" or empty;
  dc_v, max_v, min_v, ripple_pp_v, ripple_rms_v   the output (the load's node): average,
                  extremes, peak to peak, RMS of its AC part;
  line_rms_a, line_peak_a   phase a's current on the rectifier side of any transformer (the
                  secondary phase current; straight off the line, the line current; single
                  phase, the mains loop current): RMS, and the largest |i|;
  diode_peak_a, diode_avg_a, diode_rms_a   D1's current (phase a to the + rail);
  cap_ripple_rms_a   the bus (filter) capacitor's RMS current; empty for kind = "none";
  ripple_hz       the strongest of the output's 1f, 2f, 3f and 6f components (Fourier over the
                  last period), written as that frequency;
  load_a          the load's average current (measured through a 0 V source in series).

Analytic relations printed (stderr) beside ngspice's figures, not stored (standard rectifier
relations, quoted from memory as common practice; each follows from integrating the rectified
wave): with V_LL2 the secondary's line-to-line RMS (V_LL / ratio, or V_LL off the line),
  - six-pulse, current continuous (a DC choke, or no filter into a resistor): the bridge's
    output is the upper envelope minus the lower of the three phases, average
        (3 sqrt 2 / pi) V_LL2 = 1.3505 V_LL2,
    less the commutation drop (3 / pi) w Ls Id (Ls the per-phase inductance the current
    commutates through: leakage_mh + line mh / ratio^2), less 2 R_ph Id (two phases carry Id
    in series: R_ph = secondary_ohms + (primary_ohms + line ohms) / ratio^2), less the choke's
    choke_ohms Id, less two diode drops at Id (n Vt ln(Id / IS) + Id RS):
        Vd = (3 sqrt 2 / pi) V_LL2 - (3 / pi) w Ls Id - 2 R_ph Id - R_choke Id - 2 Vf(Id);
    case vfd_400_reactor_choke is built for this (1 mH line reactor, 20 mH choke into 4700 uF:
    near-constant Id); it is printed for every six-pulse case with a choke, no filter or some
    inductance in the phases (a capacitor bus behind a reactor draws nearly continuous
    current too, so its bus sits near this figure, below 1.35 V_LL2, not near the peak);
  - six-pulse into a capacitor: the bus sits below the line-to-line peak sqrt 2 V_LL2 (540 V
    straight off 400 V x 1.35 is the no-capacitor average, 566 V the peak);
  - three-pulse: average of the upper envelope (3 sqrt 6 / (2 pi)) V_ph2 = 1.1695 V_ph2, the
    peak sqrt 2 V_ph2 (V_ph2 = V_LL2 / sqrt 3);
  - ripple fundamentals: six-pulse 6f, three-pulse 3f, single-phase bridge and a six-pulse
    with a phase lost 2f, half-wave 1f;
  - charge balance: D1 carries its share of the load, load_a / 3 for six- and three-pulse,
    / 2 for a single-phase bridge and for a six-pulse with a phase lost, all of it half-wave.

Run from the repository root:  python3 tests/reference/three_phase.py   [CASE ...]
(naming cases runs only those and writes no CSV). Needs ngspice (Debian package `ngspice`;
ngspice-39 made the stored data) and python3. `cargo test` reads only the CSV and the TOML
files, never ngspice.
"""

import math
import os
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
# Importing the other scripts would leave a __pycache__ in the tree (no .gitignore entry).
sys.dont_write_bytecode = True
# Shared with the other reference scripts: the diode presets, the wrdata reader and the ngspice
# option sets (generate.py); the interpolation at a period's ends and the thermal voltage at
# ngspice's 27 C (inductors.py).
from generate import OPTION_SETS, PRESETS, read_wrdata  # noqa: E402
from inductors import VT_27C, at  # noqa: E402

OUT_DIR = os.path.join(HERE, "three_phase")
CSV = os.path.join(HERE, "ngspice_three_phase.csv")
SQ2, SQ3 = math.sqrt(2), math.sqrt(3)

# Junctions sized for the current (invented, round numbers): a drive's input bridge module of a
# few tens of amps, and a TRU's rectifier for about 40 A.
DRIVE_DIODE = dict(is_a=1e-8, n=1.5, rs_ohms=0.004)
TRU_DIODE = dict(is_a=2e-8, n=1.4, rs_ohms=0.003)


def case(name, what, *, phases, vrms, hz, topology, line_ohms=0.0, line_mh=0.0, ratio=None,
         sec=0.0, pri=0.0, leak_mh=0.0, diode="silicon", kind="capacitor", uf=None, esr=0.0,
         choke_h=None, choke_ohms=None, ohms=None, amps=None, watts=None, cutoff_v=None,
         fault=None, file=None):
    return dict(name=name, what=what, phases=phases, vrms=vrms, hz=hz, topology=topology,
                line_ohms=line_ohms, line_mh=line_mh, ratio=ratio, sec=sec, pri=pri,
                leak_mh=leak_mh, diode=diode, kind=kind, uf=uf, esr=esr, choke_h=choke_h,
                choke_ohms=choke_ohms, ohms=ohms, amps=amps, watts=watts, cutoff_v=cutoff_v,
                fault=fault, file=file or name)


VFD_400 = dict(phases=3, vrms=400, hz=50, topology="three-phase-bridge", diode=DRIVE_DIODE)
VFD_480 = dict(phases=3, vrms=480, hz=60, topology="three-phase-bridge", diode=DRIVE_DIODE)

CASES = [
    # 1. A 4 kW drive straight off 400 V 50 Hz, no reactor (0.1 ohm of supply and cable per
    #    phase), 1500 uF bus, the inverter as a constant-power load stopping under 400 V.
    case("vfd_400_bus", "six-pulse off 400 V, bus capacitor, no reactor, 4 kW constant power",
         **VFD_400, line_ohms=0.1, uf=1500, esr=0.06, watts=4000, cutoff_v=400),
    # 2. The same with a 2 mH line reactor (0.63 ohm: about 2 % of the phase voltage at
    #    this 6.9 A RMS).
    case("vfd_400_bus_reactor", "six-pulse off 400 V, 2 mH line reactor, 4 kW constant power",
         **VFD_400, line_ohms=0.15, line_mh=2.0, uf=1500, esr=0.06, watts=4000, cutoff_v=400),
    # 3. 480 V 60 Hz, 2200 uF, a 62 ohm load (about 7.2 kW), no reactor.
    case("vfd_480_bus", "six-pulse off 480 V 60 Hz, bus capacitor, no reactor, 62 ohm",
         **VFD_480, line_ohms=0.08, uf=2200, esr=0.04, ohms=62),
    # 4. The same with a 2.5 mH line reactor (0.94 ohm: about 3 % at 8.8 A RMS).
    case("vfd_480_bus_reactor", "six-pulse off 480 V 60 Hz, 2.5 mH line reactor, 62 ohm",
         **VFD_480, line_ohms=0.12, line_mh=2.5, uf=2200, esr=0.04, ohms=62),
    # 5. Six-pulse with no filter into 100 ohm (about 5.4 A).
    case("six_pulse_400_unfiltered", "six-pulse off 400 V, no filter, 100 ohm", **VFD_400,
         line_ohms=0.05, kind="none", ohms=100),
    # 6. A DC link choke (3 mH) ahead of a 1000 uF bus, 51 ohm (about 10 A: the choke's 300 Hz
    #    current, about 5.5 A peak, stays below it, so the current is continuous).
    case("vfd_400_dc_choke", "six-pulse off 400 V, 3 mH DC link choke, 1000 uF, 51 ohm",
         **VFD_400, line_ohms=0.1, kind="lc", choke_h=0.003, choke_ohms=0.05, uf=1000,
         esr=0.05, ohms=51),
    # 7. 1 mH line reactor AND a 20 mH choke into 4700 uF, 20 ohm (about 26 A): near-constant
    #    DC current, the case for the commutation drop (3/pi) w Ls Id (about 7.8 V here).
    case("vfd_400_reactor_choke", "six-pulse off 400 V, 1 mH reactor, 20 mH choke, 4700 uF, "
         "20 ohm", **VFD_400, line_ohms=0.05, line_mh=1.0, kind="lc", choke_h=0.02,
         choke_ohms=0.1, uf=4700, esr=0.02, ohms=20),
    # 8. Three-pulse star off a 400 V : 50 V star-star transformer, 4700 uF, 8 ohm.
    case("star_400_to_50", "three-pulse star, 400 V : 50 V transformer, 4700 uF, 8 ohm",
         phases=3, vrms=400, hz=50, topology="three-phase-star", ratio=8.0, sec=0.04, pri=1.5,
         uf=4700, esr=0.03, ohms=8),
    # 9. A 400 Hz transformer-rectifier unit: 200 V line-to-line, six-pulse off a star-star
    #    transformer, 28 V bus, 0.7 ohm (about 40 A).
    case("tru_400hz_28v", "400 Hz TRU, 200 V to 28 V DC, six-pulse, 0.7 ohm", phases=3,
         vrms=200, hz=400, topology="three-phase-bridge", ratio=8.7, sec=0.008, pri=0.15,
         leak_mh=0.004, diode=TRU_DIODE, uf=2000, esr=0.02, ohms=0.7),
    # 10. A single-phase off-line front end, 230 V 50 Hz, 220 uF, a 150 W converter stopping
    #     under 200 V.
    case("offline_230_cp150", "single-phase off-line bridge 230 V, 220 uF, 150 W constant "
         "power", phases=1, vrms=230, hz=50, topology="bridge", line_ohms=0.8, uf=220, esr=0.3,
         watts=150, cutoff_v=200),
    # 11. 120 V 60 Hz, 470 uF, 100 W stopping under 90 V, a little line inductance.
    case("offline_120_cp100", "single-phase off-line bridge 120 V 60 Hz, 470 uF, 100 W "
         "constant power", phases=1, vrms=120, hz=60, topology="bridge", line_ohms=0.4,
         line_mh=0.2, uf=470, esr=0.15, watts=100, cutoff_v=90),
    # 12. Case 1 with phase c's line open.
    case("vfd_400_bus_phase_lost", "case vfd_400_bus with phase c's line open", **VFD_400,
         line_ohms=0.1, uf=1500, esr=0.06, watts=4000, cutoff_v=400, fault="phase-lost",
         file="vfd_400_bus"),
    # 13. Three-pulse star with leakage: 480 V : 48 V at 60 Hz, a 8 A current load.
    case("star_480_60_leak", "three-pulse star, 480 V : 48 V 60 Hz with leakage, 8 A",
         phases=3, vrms=480, hz=60, topology="three-phase-star", ratio=10.0, sec=0.03, pri=1.0,
         leak_mh=0.1, uf=6800, esr=0.02, amps=8.0),
    # 14. Six-pulse off a 400 V : 100 V transformer behind a line with some inductance, a 20 A
    #     current load (a DC supply or charger front end): [line] and [transformer] together.
    case("six_pulse_xfmr_cc", "six-pulse, line then 400 V : 100 V transformer, 4700 uF, 20 A",
         phases=3, vrms=400, hz=50, topology="three-phase-bridge", line_ohms=0.05,
         line_mh=0.05, ratio=4.0, sec=0.05, pri=0.4, leak_mh=0.2, diode=DRIVE_DIODE, uf=4700,
         esr=0.03, amps=20.0),
    # 15. A half-wave off-line auxiliary supply, 230 V 50 Hz, 100 uF, 4.7 kohm.
    case("offline_hw_230", "single-phase off-line half-wave 230 V, 100 uF, 4.7 kohm",
         phases=1, vrms=230, hz=50, topology="half-wave", line_ohms=1.0, uf=100, esr=0.5,
         ohms=4700),
]


def num(x):
    """A TOML float that reads back as exactly the value the netlist uses."""
    return repr(float(x))


def toml_for(c):
    lines = ["format = 1", f'name = "three-phase reference {c["name"]}"',
             f'notes = "ngspice reference case ({c["what"]}), invented; written by '
             'tests/reference/three_phase.py"', "", "[mains]"]
    if c["phases"] != 1:
        lines.append(f"phases = {c['phases']}")
    lines += [f"vrms = {num(c['vrms'])}", f"hz = {num(c['hz'])}"]
    if c["line_ohms"] or c["line_mh"]:
        lines += ["", "[line]"]
        if c["line_ohms"]:
            lines.append(f"ohms = {num(c['line_ohms'])}")
        if c["line_mh"]:
            lines.append(f"mh = {num(c['line_mh'])}")
    if c["ratio"] is not None:
        lines += ["", "[transformer]", f"ratio = {num(c['ratio'])}",
                  f"secondary_ohms = {num(c['sec'])}", f"primary_ohms = {num(c['pri'])}"]
        if c["leak_mh"]:
            lines.append(f"leakage_mh = {num(c['leak_mh'])}")
    lines += ["", "[rectifier]", f'topology = "{c["topology"]}"']
    d = c["diode"]
    if isinstance(d, str):
        lines.append(f'diode = "{d}"')
    else:
        lines.append(f"diode = {{ is_a = {d['is_a']!r}, n = {d['n']!r}, "
                     f"rs_ohms = {d['rs_ohms']!r} }}")
    lines += ["", "[filter]", f'kind = "{c["kind"]}"']
    if c["kind"] != "none":
        lines += [f"uf = {num(c['uf'])}", f"esr_ohms = {num(c['esr'])}"]
    if c["kind"] == "lc":
        lines += [f"choke_h = {num(c['choke_h'])}", f"choke_ohms = {num(c['choke_ohms'])}"]
    lines += ["", "[load]"]
    if c["watts"] is not None:
        lines += [f"watts = {num(c['watts'])}", f"cutoff_v = {num(c['cutoff_v'])}"]
    elif c["amps"] is not None:
        lines.append(f"amps = {num(c['amps'])}")
    else:
        lines.append(f"ohms = {num(c['ohms'])}")
    return "\n".join(lines) + "\n"


def diode_params(d):
    return PRESETS[d] if isinstance(d, str) else d


def three_phase(c):
    return c["phases"] == 3


def six_pulse(c):
    return c["topology"] == "three-phase-bridge"


def secondary_ll(c):
    """The rectifier's line-to-line RMS EMF (single phase: the mains RMS)."""
    return c["vrms"] / (c["ratio"] or 1.0)


def load_current(c, v):
    if c["amps"] is not None:
        return c["amps"]
    if c["watts"] is not None:
        p, vc = c["watts"], c["cutoff_v"]
        return p / max(v, vc) * min(1.0, max(0.0, (v - 0.9 * vc) / (0.1 * vc)))
    return v / c["ohms"]


def start_voltage(c):
    """A guess at the output for the initial conditions (the settling check, not the guess,
    decides the stored figures)."""
    if three_phase(c):
        if c["fault"] == "phase-lost":
            return 0.9 * SQ2 * secondary_ll(c)
        if six_pulse(c):
            peak, average = SQ2 * secondary_ll(c), 3 * SQ2 / math.pi * secondary_ll(c)
        else:
            vph = secondary_ll(c) / SQ3
            peak, average = SQ2 * vph, 3 * math.sqrt(6) / (2 * math.pi) * vph
        return 0.97 * (average if c["kind"] == "lc" else peak)
    return 0.9 * SQ2 * c["vrms"]


def floating_star(node):
    """A floating star point (or a single-phase bridge's floating mains end): 1 Gohm to ground
    for a DC path, and 1 nF so the node does not jump at each diode's turn-off (generate.py's
    CFLOAT; without it ngspice's first three option sets stop at "timestep too small" on every
    six-pulse bridge). Both draw microamps at the mains' triplen harmonics, nothing a figure
    can see."""
    return [f"R{node.upper()}FLOAT {node} 0 1e9", f"C{node.upper()}FLOAT {node} 0 1n"]


def netlist(c, tstop, tstart, tmax, out_file, options):
    d = diode_params(c["diode"])
    f = c["hz"]
    lines = [f"* railcheck three-phase reference {c['name']}",
             f".model DREF D(IS={d['is_a']} N={d['n']} RS={d['rs_ohms']})"]
    r_line = max(c["line_ohms"], 1e-6)
    l_line = c["line_mh"] * 1e-3

    # A choke starts carrying the load's current (IC= below), so the inductors in the phases
    # that carry it at t = 0 start with it too: a consistent start, not a bridge asked to pass
    # the choke's current through inductors that carry none. At wt = 0 phase c is the highest
    # and b the lowest: the current enters at c and returns by b.
    i_choke = load_current(c, start_voltage(c)) if c["kind"] == "lc" else 0.0
    if i_choke and not (three_phase(c) and six_pulse(c)):
        raise SystemExit(f"{c['name']}: a choke's start is built for six-pulse bridges only")
    start_amps = {"a": 0.0, "b": 0.0 - i_choke, "c": i_choke}

    def series(tag, a, b, r, l_h, i0=0.0):
        """r (and l_h if any, starting at i0 from a to b) in series from node a to node b."""
        if l_h > 0:
            return [f"R{tag} {a} {tag}_m {r}", f"L{tag} {tag}_m {b} {l_h} IC={i0!r}"]
        return [f"R{tag} {a} {b} {r}"]

    if three_phase(c):
        star = c["topology"] == "three-phase-star"
        has_tx = c["ratio"] is not None
        # The source's star point: floating (1 Gohm for a DC path), except a three-pulse star
        # straight off the line, whose star point is the - rail.
        neutral = "0" if star and not has_tx else "n"
        if neutral != "0":
            lines += floating_star("n")
        vpk = SQ2 * c["vrms"] / SQ3
        phases = [("a", 0), ("b", -120), ("c", -240)]
        for p, deg in phases:
            lines.append(f"V{p} e{p} {neutral} SIN(0 {vpk!r} {f} 0 0 {deg})")
        if has_tx:
            # Secondary star point: floating for a bridge, the - rail for a star.
            sstar = "0" if star else "s"
            if sstar != "0":
                lines += floating_star("s")
        ratio = c["ratio"] or 1.0
        if c["fault"] == "phase-lost" and has_tx:
            raise SystemExit(f"{c['name']}: a lost phase is built without a transformer only")
        for p, _ in phases:
            if c["fault"] == "phase-lost" and p == "c":
                # The lost phase's line is open: the rectifier's input keeps only 1 Gohm to
                # ground, so ngspice has a DC path there.
                lines += [f"RLOST r{p} 0 1e9"]
                continue
            if not has_tx:
                lines += series(f"LN{p}", f"e{p}", f"m{p}", r_line, l_line, start_amps[p])
                lines.append(f"VS{p} m{p} r{p} 0")
                continue
            # With a transformer the line's inductance is referred to the secondary, in one
            # inductor with the leakage: (line mh / ratio^2 + leakage_mh). For an ideal
            # transformer whose primary phase has its own loop through N this is the same
            # circuit; an inductor on the primary, in series with the controlled source that
            # reflects the secondary's current, is a second state for one current, on which
            # ngspice stops ("timestep too small"). The resistances stay where they are.
            lines += [f"RLN{p} e{p} m{p} {r_line}",
                      f"RP{p} m{p} p{p} {max(c['pri'], 1e-6)}",
                      f"E{p} s{p}0 {sstar} p{p} {neutral} {1.0 / ratio!r}",
                      f"VS{p} s{p}0 s{p}1 0",
                      f"F{p} p{p} {neutral} VS{p} {1.0 / ratio!r}"]
            lines += series(f"SEC{p}", f"s{p}1", f"r{p}", max(c["sec"], 1e-6),
                            (c["leak_mh"] + c["line_mh"] / ratio ** 2) * 1e-3, start_amps[p])
        # D1 a->+, D3 b->+, D5 c->+ (D1 measured through VD1); D4, D6, D2 from the - rail.
        lines += ["D1 ra d1 DREF", "VD1 d1 rect 0", "D3 rb rect DREF", "D5 rc rect DREF"]
        if not star:
            lines += ["D4 0 ra DREF", "D6 0 rb DREF", "D2 0 rc DREF"]
    else:
        if c["ratio"] is not None:
            raise SystemExit(f"{c['name']}: single-phase with a transformer is generate.py's")
        # The mains EMF from n to ea, the whole loop's R + L on the live side; the meter VSa.
        half = c["topology"] == "half-wave"
        neutral = "0" if half else "n"
        lines.append(f"VMAINS ea {neutral} SIN(0 {SQ2 * c['vrms']!r} {f})")
        if not half:
            lines += floating_star("n")
        lines += series("LNa", "ea", "ma", r_line, l_line)
        lines += ["VSa ma ra 0", "D1 ra d1 DREF", "VD1 d1 rect 0"]
        if not half:
            lines += ["D2 0 ra DREF", "D3 n rect DREF", "D4 0 n DREF"]
    v0 = start_voltage(c)
    ic = []
    kind = c["kind"]
    if kind == "none":
        out = "rect"
    elif kind == "capacitor":
        out = "rect"
        lines += ["VCS rect cs 0", f"RESR cs cs_c {max(c['esr'], 1e-6)}",
                  f"C1 cs_c 0 {c['uf']}u"]
        ic = [f"v(rect)={v0}", f"v(cs)={v0}", f"v(cs_c)={v0}"]
    elif kind == "lc":
        # The bridge's + feeds the choke (its copper first), the choke the capacitor; the
        # choke starts carrying the load's current.
        out = "out"
        lines += [f"RCH rect l1 {c['choke_ohms']}",
                  f"LCH l1 out {c['choke_h']} IC={i_choke!r}",
                  "VCS out cs 0", f"RESR cs cs_c {max(c['esr'], 1e-6)}",
                  f"C1 cs_c 0 {c['uf']}u"]
        ic = [f"v(rect)={v0 + i_choke * c['choke_ohms']}", f"v(out)={v0}", f"v(cs)={v0}",
              f"v(cs_c)={v0}"]
    else:
        raise SystemExit(f"{c['name']}: filter kind {kind!r} is not built here")
    # The load behind a 0 V source that measures its current.
    lines.append(f"VLOAD {out} ld 0")
    if c["watts"] is not None:
        p, vc = c["watts"], c["cutoff_v"]
        lines.append(f"BLOAD ld 0 I = {p} / max(V(ld), {vc}) * "
                     f"min(1, max(0, (V(ld) - {0.9 * vc}) / {0.1 * vc}))")
    elif c["amps"] is not None:
        lines.append(f"ILOAD ld 0 DC {c['amps']}")
    else:
        lines.append(f"RLOAD ld 0 {c['ohms']}")
    if ic:
        lines.append(".ic " + " ".join(ic))
    # Columns: output, D1's current, phase a's current, the load's current, the capacitor's.
    vectors = f"v({out}) i(VD1) i(VSa) i(VLOAD)"
    if kind != "none":
        vectors += " i(VCS)"
    lines += [options, f".tran {tmax} {tstop} {tstart} {tmax} uic",
              ".control", "run", f"wrdata {out_file} {vectors}", "quit", ".endc", ".end"]
    return "\n".join(lines) + "\n"


RIPPLE_HARMONICS = (1, 2, 3, 6)


def harmonic_amp(seg, k):
    """Amplitude (up to a constant) of the k-th harmonic of the output over the segment."""
    t0 = seg[0][0]
    T = seg[-1][0] - t0
    re = im = 0.0
    for a, b in zip(seg, seg[1:]):
        t = 0.5 * (a[0] + b[0]) - t0
        v = 0.5 * (a[1] + b[1])
        w = 2 * math.pi * k * t / T
        re += v * math.cos(w) * (b[0] - a[0])
        im += v * math.sin(w) * (b[0] - a[0])
    return math.hypot(re, im)


def figures(rows, t0, t1, c):
    # The period's ends interpolated (inductors.py's `at`), so the integrals span one period.
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
    amps = {k: harmonic_amp(seg, k) for k in RIPPLE_HARMONICS}
    k_best = max(RIPPLE_HARMONICS, key=lambda k: amps[k])
    return dict(
        dc_v=dc, max_v=vmax, min_v=vmin, ripple_pp_v=vmax - vmin,
        ripple_rms_v=math.sqrt(integ(lambda r: (r[1] - dc) ** 2)),
        line_rms_a=math.sqrt(integ(lambda r: r[3] ** 2)),
        line_peak_a=max(abs(r[3]) for r in seg),
        diode_peak_a=max(r[2] for r in seg),
        diode_avg_a=integ(lambda r: r[2]),
        diode_rms_a=math.sqrt(integ(lambda r: r[2] ** 2)),
        cap_ripple_rms_a=math.sqrt(integ(lambda r: r[5] ** 2)) if len(seg[0]) > 5 else None,
        ripple_hz=k_best * c["hz"],
        load_a=integ(lambda r: r[4]),
        harmonics=amps,
        line_avg_a=integ(lambda r: r[3]),
    )


def ring_periods(c):
    """A quarter of the slowest LC ring's period, in mains periods (at least 2): the DC choke
    with the capacitor, or the line and leakage (two phases in series, referred to the
    secondary) with it."""
    if c["kind"] == "none":
        return 2
    ratio = c["ratio"] or 1.0
    n_series = 2 if (six_pulse(c) or c["topology"] == "bridge") else 1
    l_src = n_series * (c["line_mh"] / ratio ** 2 + c["leak_mh"]) * 1e-3
    l_tot = l_src + (c["choke_h"] or 0.0)
    if l_tot <= 0:
        return 2
    ring_s = 2 * math.pi * math.sqrt(l_tot * c["uf"] * 1e-6)
    return max(2, round(0.25 * ring_s * c["hz"]))


def start_periods(c):
    """Enough periods for the slowest mode to forget the start: the load's RC and the LC's
    decay, several time constants each (a first try; run_case extends it)."""
    T = 1.0 / c["hz"]
    if c["kind"] == "none":
        return 20
    v0 = start_voltage(c)
    cap = c["uf"] * 1e-6
    taus = []
    if c["ohms"]:
        taus.append(c["ohms"] * cap)
    elif c["watts"]:
        # The constant-power load's incremental resistance is -V^2/P: it does not damp; the
        # source's charging sets the pace. Use V^2/P as the scale anyway.
        taus.append(v0 ** 2 / c["watts"] * cap)
    if c["choke_h"]:
        ratio = c["ratio"] or 1.0
        r_series = c["choke_ohms"] + 2 * (c["sec"] + (c["pri"] + c["line_ohms"]) / ratio ** 2)
        alpha = r_series / (2 * c["choke_h"]) + (1 / (2 * c["ohms"] * cap) if c["ohms"] else 0)
        taus.append(1 / alpha)
    tau = max(taus) if taus else 0.0
    return min(max(60, int(4 * tau / T) + 20 + 4 * ring_periods(c)), 1500)


def ngspice_timeout_s(periods, steps):
    # A run many times slower than the slowest seen has lost its way (its time step
    # collapsed); the next option set gets through.
    return 60 + 2e-4 * periods * steps


STEPS_PER_PERIOD = 4000

# ngspice's options, in order of trial. Every bridge here has nodes that float while their
# diodes are off (a rectifier input behind a line reactor or leakage, the source's star point);
# generate.py's first option set (trapezoidal, reltol 1e-4) stops on most of them ("timestep
# too small"). The first set here gets through all the cases: Gear's method (it does not ring
# on those nodes as the trapezoidal rule does), 10 Gohm from every node to ground (rshunt: the
# off nodes get a defined voltage; nanoamps against amps), and absolute tolerances loosened from
# 1 pA / 1 uV to 1 nA / 10 uV, still far below the figures' sixth digit, at the same reltol 1e-4.
# Measured at 60 periods against generate.py's first set on the 9 cases that set gets through:
# DC within 1.1e-6, ripple p-p within 2.8e-4, line RMS within 3.1e-5, D1's peak within 1.5e-4
# (the 400 Hz TRU's); on a reactor case that only rshunt gets through, the trapezoidal rule
# reads D1's peak 0.1 % above Gear at 4000 and at 20000 steps a period alike, while Gear reads
# the same peak at both; and this set at 20000 steps a period against 4000 on four cases: DC
# within 9e-7, the rest within 5e-5. generate.py's sets follow, should a changed case need them.
OPTIONS = [".options reltol=1e-4 method=gear rshunt=1e10 abstol=1e-9 vntol=1e-5"] + OPTION_SETS


def run_case(c, work):
    """inductors.py's settling rule on this script's netlist and figures."""
    T = 1.0 / c["hz"]
    periods = start_periods(c)
    back = ring_periods(c)
    for attempt in range(3):
        tstop = periods * T
        tstart = tstop - (back + 2) * T
        out = os.path.join(work, f"{c['name']}.data")
        net = os.path.join(work, f"{c['name']}.cir")
        for options in OPTIONS:
            with open(net, "w") as fh:
                fh.write(netlist(c, tstop, tstart, T / STEPS_PER_PERIOD, out, options))
            limit = ngspice_timeout_s(periods, STEPS_PER_PERIOD)
            try:
                subprocess.run(["ngspice", "-b", net], check=True, capture_output=True,
                               timeout=limit)
            except subprocess.TimeoutExpired:
                print(f"{c['name']}: no result in {limit:.0f} s with {options!r}",
                      file=sys.stderr)
                if os.path.exists(out):
                    os.remove(out)
            except subprocess.CalledProcessError:
                print(f"{c['name']}: ngspice failed with {options!r}", file=sys.stderr)
                if os.path.exists(out):
                    os.remove(out)
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


def diode_drop(c, i):
    d = diode_params(c["diode"])
    return d["n"] * VT_27C * math.log(i / d["is_a"]) + i * d["rs_ohms"]


def d1_share(c):
    """How many diodes share the load's charge with D1 each period (docstring)."""
    if c["topology"] == "half-wave":
        return 1
    if c["topology"] == "bridge" or c["fault"] == "phase-lost":
        return 2
    return 3


def analytic(c, fig):
    """The standard relations of the docstring, for stderr beside ngspice's figures."""
    v2 = secondary_ll(c)
    share = d1_share(c) * fig["diode_avg_a"] / fig["load_a"]
    notes = [f"D1 avg x {d1_share(c)} / load = {share:.5f}"]
    if not three_phase(c):
        notes.append(f"mains peak sqrt 2 V = {SQ2 * v2:.2f} V")
    elif c["fault"] == "phase-lost":
        notes.append(f"line-to-line peak sqrt 2 V_LL = {SQ2 * v2:.2f} V (a single-phase bridge)")
    elif six_pulse(c):
        ideal = 3 * SQ2 / math.pi * v2
        notes.append(f"1.35 V_LL2 = {ideal:.3f} V, sqrt 2 V_LL2 = {SQ2 * v2:.3f} V")
        ratio = c["ratio"] or 1.0
        ls = (c["leak_mh"] + c["line_mh"] / ratio ** 2) * 1e-3
        if c["kind"] in ("lc", "none") or ls > 0:
            w = 2 * math.pi * c["hz"]
            r_ph = c["sec"] + (c["pri"] + c["line_ohms"]) / ratio ** 2
            i = fig["load_a"]
            comm = 3 / math.pi * w * ls * i
            vd = ideal - comm - 2 * r_ph * i - (c["choke_ohms"] or 0.0) * i \
                - 2 * diode_drop(c, i)
            notes.append(f"continuous current: (3/pi) w Ls Id = {comm:.3f} V, Vd = {vd:.3f} V "
                         f"vs ngspice {fig['dc_v']:.3f} V ({100 * (fig['dc_v'] / vd - 1):+.2f} %)")
    else:
        vph = v2 / SQ3
        notes.append(f"1.17 V_ph2 = {3 * math.sqrt(6) / (2 * math.pi) * vph:.3f} V, "
                     f"sqrt 2 V_ph2 = {SQ2 * vph:.3f} V")
    return "; ".join(notes)


COLUMNS = ["dc_v", "max_v", "min_v", "ripple_pp_v", "ripple_rms_v", "line_rms_a",
           "line_peak_a", "diode_peak_a", "diode_avg_a", "diode_rms_a", "cap_ripple_rms_a",
           "ripple_hz", "load_a"]


def main():
    started = time.monotonic()
    version = subprocess.run(["ngspice", "-v"], capture_output=True, text=True).stdout
    version = next((l.strip("* ").strip() for l in version.splitlines() if "ngspice-" in l),
                   "ngspice (unknown version)")
    only = [a for a in sys.argv[1:] if not a.startswith("-")]
    os.makedirs(OUT_DIR, exist_ok=True)
    rows = []
    with tempfile.TemporaryDirectory() as work:
        for c in CASES:
            if only and c["name"] not in only:
                continue
            if c["file"] == c["name"]:
                with open(os.path.join(OUT_DIR, f"{c['name']}.toml"), "w") as fh:
                    fh.write(toml_for(c))
            t = time.monotonic()
            fig, drift, periods, options = run_case(c, work)
            h = fig["harmonics"]
            top = max(h.values())
            print(f"{c['name']}: dc {fig['dc_v']:.4f} V, pp {fig['ripple_pp_v']:.4g} V, "
                  f"{fig['ripple_hz']:g} Hz (1f:2f:3f:6f = "
                  f"{':'.join(f'{h[k] / top:.3f}' for k in RIPPLE_HARMONICS)}), line "
                  f"{fig['line_rms_a']:.4g} A RMS (avg {fig['line_avg_a']:.3g} A), load "
                  f"{fig['load_a']:.4g} A; drift {drift:.1e}/period after {periods} periods "
                  f"({options}), {time.monotonic() - t:.0f} s", file=sys.stderr)
            print(f"  {analytic(c, fig)}", file=sys.stderr)
            rows.append((c, fig))
    if only:
        print("subset run: CSV not written", file=sys.stderr)
        return
    fmt = lambda v: "" if v is None else f"{v:.6g}"
    with open(CSV, "w") as fh:
        fh.write(f"# {version}; written by tests/reference/three_phase.py; three-phase, off-line "
                 "and constant-power supplies (files under tests/reference/three_phase/; `file` "
                 "relative to tests/reference/), figures over the last mains period; line_*: "
                 "phase a on the rectifier side; D1: phase a to +\n")
        fh.write("case,file,fault," + ",".join(COLUMNS) + "\n")
        for c, fig in rows:
            fh.write(f"{c['name']},three_phase/{c['file']}.toml,{c['fault'] or ''},"
                     + ",".join(fmt(fig[k]) for k in COLUMNS) + "\n")
    print(f"{len(rows)} cases in {time.monotonic() - started:.0f} s", file=sys.stderr)


if __name__ == "__main__":
    main()
