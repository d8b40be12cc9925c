#!/usr/bin/env python3
"""ngspice references for valve (vacuum-diode) rectifiers: high-tension supplies whose
rectifier is a valve, each plate following the three-halves-power space-charge law
(Child-Langmuir).

The law, per plate, as railcheck's new rectifier key gives it:
    [rectifier] diode = { law = "valve", drop_v = V0, at_a = I0 }
    I = G * V^1.5 for V > 0 (plate above cathode), 0 for V <= 0,   G = I0 / V0^1.5,
so the plate drops V0 at I0 (the data-sheet point); no series resistance beyond the law. The
three drop points below stand for three valve classes (typical published figures, fact of the
trade, common practice): a high-drop directly heated kind (60 V at 125 mA), a medium one (45 V
at 225 mA) and a low-drop indirectly heated kind (17 V at 250 mA).

What it does. For each invented supply of CASES below (our own round numbers; none is taken
from any book, lecture or product) this script
  1. writes the supply as a railcheck file tests/reference/valves/<case>.toml: the format of
     tests/reference/inductors/ (inductors.py's toml_for, imported) with the diode line
     replaced by the valve law above;
  2. builds the same circuit as an ngspice netlist: inductors.py's netlist (imported: the
     controlled-source ideal transformer, ratio primary : whole secondary, a center tap's halves
     each 0.5 / ratio with half the winding resistance and half the leakage, the primary
     resistance on the primary side; ESR in series with the first capacitor; the choke with its
     resistance; `amps` a current sink, `ohms` a resistor) with each junction diode replaced
     by an ngspice behavioural current source
         B a k I = G * pow(max(v(a,k), 0), 1.5)
     and a zero-volt sense source in series with the first capacitor for its current;
  3. runs a transient with inductors.py's run_case (imported unchanged: its start from near
     the working point, its settling rule: the DC of the last two mains periods within 2e-5
     and, with a choke, within 2e-5 per period of the period a quarter of the LC's ring
     earlier; a run that has not settled is run three times as long, twice, then the script
     stops without writing the CSV), with generate.py's option sets reordered Gear first
     (reltol 1e-4, method=gear; the others follow if ngspice gives up);
  4. stores the figures of the last mains period in tests/reference/ngspice_valves.csv, the
     ngspice version in its first line.

Convergence aid: a conductance of 1e-10 S (10 Gohm, PLATE_SHUNT_S) from each plate to the
rail, outside D1's sense source (so diode_* are the law's current alone). Why: a plate that is
off is an exact open circuit, and with transformer leakage the node between the leakage
inductor and the plate then has no DC path at all; ngspice stopped there ("timestep too small;
trouble with node a") under reltol 1e-6 Gear, and under the trapezoidal rule it rang, moving
ci_ct_high_leak_50's diode_piv_v between 816 and 864 V with the shunt's value (Gear: 813.14 V
for 1e-9, 1e-10 and 1e-11 S alike). That is also why Gear comes first here. The shunt draws at
most 0.09 uA at the largest reverse voltage: against no shunt (Gear, every case of the set but
the leakage one, run while writing this script) every stored figure moved by under 1e-6
relative except the pp ripple of the 50 mV clc_ct_low_r_60 (2e-5, the same for 1e-9 S: the
time points' placement at its extremes) and the leakage case's conduction angle (5e-5); Gear
and the trapezoidal rule agreed to 1e-6 on the cases without leakage. The law itself has a
continuous slope at V = 0 (dI/dV = 1.5 G V^0.5 -> 0), so no smoothed max is used.

Columns (all over the last mains period in steady state; inductors.py's figures):
  case, file       the case's name; its file relative to tests/reference/;
  dc_v, max_v, min_v, ripple_pp_v, ripple_rms_v   the output (the load's node): its average,
                   extremes, peak to peak and the RMS of its AC part;
  diode_peak_a, diode_avg_a, diode_rms_a   ONE plate's current (the plate on the winding's
                   first end);
  diode_piv_v      the largest reverse voltage across that plate (cathode minus plate);
  winding_rms_a    the RMS current in the secondary (for a center tap, one half winding);
  cap_ripple_rms_a the FIRST capacitor's (the one at the rectifier, with the file's ESR) AC RMS
                   current: its RMS less its average (the average is the settled charge's
                   drift, near zero); NOTE: ngspice_inductors.csv's column of the same name is
                   the OUTPUT capacitor's; for capacitor input the two are the same capacitor;
  second_cap_rms_a the CLC's output capacitor's RMS current (inductors.py's cap_ripple_rms_a);
                   empty without a choke;
  choke_rms_a, choke_peak_a, choke_dc_drop_v   the choke's current and the average voltage
                   across it and its resistance; empty without a choke;
  conduction_deg   degrees of a period that plate conducts (current above 1e-6 of its peak);
  ripple_hz        the stronger of the line and twice-line components of the output
                   (generate.py's dominant_ripple);
  load_a           the load's average current.

Sanity check printed (not stored): G * V0^1.5 = I0 for each law (the data-sheet point), and for
each case the winding's open-circuit peak, the plate's drop at the case's peak current
((peak / G)^(2/3)) and the margin left to the DC.

Run from the repository root:  python3 tests/reference/valves.py [case ...]
(naming cases runs only those and writes no CSV.)
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
# The supply file, netlist, settling rule, figures and option sets are inductors.py's (which
# takes generate.py's option sets, wrdata reader and dominant-ripple rule).
import inductors  # noqa: E402
from inductors import case  # noqa: E402

OUT_DIR = os.path.join(HERE, "valves")
CSV = os.path.join(HERE, "ngspice_valves.csv")

# The three valve classes' data-sheet points (drop_v, at_a): typical published figures, fact of
# the trade, common practice.
HIGH = (60.0, 0.125)    # directly heated, high drop
MEDIUM = (45.0, 0.225)  # medium drop
LOW = (17.0, 0.25)      # indirectly heated, low drop


def valve(law, *args, **kw):
    c = case(*args, **kw)
    c["law"] = law
    return c


def g_of(law):
    """Perveance-like constant of the three-halves law through the data-sheet point."""
    drop, at = law
    return at / drop ** 1.5


# `sec` is the WHOLE secondary's resistance (inductors.py: a center tap's half gets half), so
# 100-160 ohm a half as valve-era high-tension windings; the stiff one 50 ohm a half.
CASES = [
    # --- Capacitor input, center tap, one per valve class. 230 V : 2 x 350 V (ratio 230/700).
    valve(HIGH, "ci_ct_high_50", "capacitor input, 2 x 350 V, high-drop valve, 100 mA",
          "center-tap", 230, 50, 230 / 700, sec=300, pri=12, uf=40, esr=2.0, amps=0.1),
    valve(MEDIUM, "ci_ct_medium_50", "capacitor input, 2 x 350 V, medium-drop valve, 120 mA",
          "center-tap", 230, 50, 230 / 700, sec=240, pri=10, uf=47, esr=1.5, amps=0.12),
    valve(LOW, "ci_ct_low_50", "capacitor input, 2 x 300 V, low-drop valve, 150 mA",
          "center-tap", 230, 50, 230 / 600, sec=200, pri=8, uf=50, esr=1.5, amps=0.15),
    # --- CLC pi filters, center tap.
    valve(HIGH, "clc_ct_high_50", "CLC 2 x 350 V, high-drop valve, 32 uF 10 H 32 uF, 80 mA",
          "center-tap", 230, 50, 230 / 700, sec=320, pri=12, kind="clc", uf=32, esr=2.5,
          choke_h=10, choke_ohms=180, second_uf=32, amps=0.08),
    valve(MEDIUM, "clc_ct_medium_50", "CLC 2 x 325 V, medium-drop valve, 40 uF 8 H 40 uF, 110 mA",
          "center-tap", 230, 50, 230 / 650, sec=260, pri=10, kind="clc", uf=40, esr=2.0,
          choke_h=8, choke_ohms=150, second_uf=40, amps=0.11),
    valve(LOW, "clc_ct_low_50", "CLC 2 x 300 V, low-drop valve, 50 uF 5 H 100 uF, 150 mA",
          "center-tap", 230, 50, 230 / 600, sec=180, pri=8, kind="clc", uf=50, esr=1.5,
          choke_h=5, choke_ohms=100, second_uf=100, amps=0.15),
    # --- A large first capacitor: short, tall plate pulses.
    # The low-drop valve on a stiff winding (50 ohm a half) and 220 uF: the tallest pulses.
    valve(LOW, "ci_ct_low_bigcap_50", "capacitor input, 2 x 300 V, low-drop valve, stiff "
          "winding, 220 uF, 120 mA", "center-tap", 230, 50, 230 / 600, sec=100, pri=4, uf=220,
          esr=0.3, amps=0.12),
    # The medium valve behind the 2 x 350 V winding of ci_ct_medium_50, 100 uF instead of 47.
    valve(MEDIUM, "ci_ct_medium_bigcap_50", "capacitor input, 2 x 350 V, medium-drop valve, "
          "100 uF, 120 mA", "center-tap", 230, 50, 230 / 700, sec=240, pri=10, uf=100, esr=0.8,
          amps=0.12),
    # --- 60 Hz, 120 V mains.
    valve(MEDIUM, "ci_ct_medium_60", "capacitor input 60 Hz, 2 x 325 V, medium-drop valve, 100 mA",
          "center-tap", 120, 60, 120 / 650, sec=250, pri=3, uf=40, esr=1.5, amps=0.1),
    # --- Leakage (X = 0.5 R referred at 50 Hz), resistive load.
    valve(HIGH, "ci_ct_high_leak_50", "capacitor input, 2 x 350 V, high-drop valve, "
          "leakage X = 0.5 R", "center-tap", 230, 50, 230 / 700, sec=300, pri=12,
          leak_mh=inductors.leak_for(0.5, 230 / 700, 300, 12, 50), uf=40, esr=2.0, amps=0.1),
    valve(LOW, "clc_ct_low_r_60", "CLC 60 Hz, 2 x 300 V, low-drop valve, 3.3 kohm (about 110 mA)",
          "center-tap", 120, 60, 120 / 600, sec=200, pri=3, kind="clc", uf=47, esr=1.5,
          choke_h=8, choke_ohms=150, second_uf=47, ohms=3300),
    valve(MEDIUM, "ci_ct_medium_r_50", "capacitor input, 2 x 350 V, medium-drop valve, "
          "3.9 kohm (about 100 mA)", "center-tap", 230, 50, 230 / 700, sec=240, pri=10, uf=47,
          esr=1.5, ohms=3900),
    # --- Half wave, one plate.
    valve(LOW, "ci_hw_low_50", "half-wave capacitor input, 250 V, low-drop valve, 50 mA",
          "half-wave", 230, 50, 230 / 250, sec=150, pri=10, uf=50, esr=2.0, amps=0.05),
]


def toml_for(c):
    drop, at = c["law"]
    text = inductors.toml_for(c)
    text = text.replace('name = "inductor reference', 'name = "valve reference')
    text = text.replace("tests/reference/inductors.py", "tests/reference/valves.py")
    old = 'diode = "silicon"\n'
    assert old in text
    return text.replace(old, f'diode = {{ law = "valve", drop_v = {drop}, at_a = {at} }}\n')


# The convergence aid (docstring): a conductance from each plate to the rail.
PLATE_SHUNT_S = 1e-10

# generate.py's option sets with its Gear set first (docstring: the trapezoidal rule rings on
# a leakage inductor's end while its plate is off, and moved the PIV by up to 6 %).
GEAR = ".options reltol=1e-4 method=gear"
assert GEAR in inductors.OPTION_SETS
inductors.OPTION_SETS = [GEAR] + [o for o in inductors.OPTION_SETS if o != GEAR]

PLAIN_NETLIST = inductors.netlist
PLAIN_FIGURES = inductors.figures


def valve_netlist(c):
    """inductors.py's netlist with each junction diode a three-halves-law plate, and the first
    capacitor's current sensed (VC1) as the last column."""
    g = g_of(c["law"])

    def netlist(c2, tstop, tstart, tmax, out_file, options):
        text = PLAIN_NETLIST(c2, tstop, tstart, tmax, out_file, options)
        out = []
        plates = 0
        cap_sensed = False
        for line in text.splitlines():
            parts = line.split()
            if parts and parts[0] in ("D1", "D2") and parts[-1] == "DREF":
                # Plate (anode) at parts[1], cathode at parts[2]; zero current at or below 0 V.
                a, k = parts[1], parts[2]
                out.append(f"B{parts[0]} {a} {k} I = {g!r} * pow(max(v({a},{k}), 0), 1.5)")
                if PLATE_SHUNT_S:
                    # Plate to the rail, outside D1's sense source: the measured plate current
                    # is the law's alone (the docstring's convergence aid).
                    out.append(f"RP{parts[0]} {a} rect {1 / PLATE_SHUNT_S:.6g}")
                plates += 1
                continue
            if parts and parts[0] in ("D3", "D4"):
                raise SystemExit(f"{c['name']}: a bridge is not part of this set")
            if parts and parts[0] == "R1" and not cap_sensed:
                # R1 is the first capacitor's ESR (capacitor input: cs -> cs_c; CLC: rect ->
                # c1): a 0 V source before it senses the first capacitor's current.
                out += [f"VC1 {parts[1]} c1sense 0", f"R1 c1sense {parts[2]} {parts[3]}"]
                cap_sensed = True
                continue
            if line.startswith("wrdata "):
                line += " i(VC1)"
            out.append(line)
        want = 1 if c["topology"] == "half-wave" else 2
        if plates != want or not cap_sensed:
            raise SystemExit(f"{c['name']}: netlist not as expected ({plates} plates, first "
                             f"capacitor sensed: {cap_sensed})")
        return "\n".join(out) + "\n"
    return netlist


def valve_figures(rows, t0, t1, c):
    """inductors.py's figures on the columns it knows, the first capacitor's AC RMS current
    from the last column (the period's ends interpolated with inductors.py's `at`)."""
    fig = PLAIN_FIGURES([r[:-1] for r in rows], t0, t1, c)
    seg = [inductors.at(rows, t0)] + [r for r in rows if t0 < r[0] < t1] + \
        [inductors.at(rows, t1)]
    T = seg[-1][0] - seg[0][0]

    def integ(fn):
        return sum(0.5 * (fn(a) + fn(b)) * (b[0] - a[0]) for a, b in zip(seg, seg[1:])) / T

    avg = integ(lambda r: r[-1])
    ms = integ(lambda r: r[-1] ** 2)
    fig["second_cap_rms_a"] = fig["cap_ripple_rms_a"] if c["kind"] == "clc" else None
    fig["cap_ripple_rms_a"] = math.sqrt(max(ms - avg * avg, 0.0))
    fig["cap1_avg_a"] = avg
    return fig


COLUMNS = ["dc_v", "max_v", "min_v", "ripple_pp_v", "ripple_rms_v", "diode_peak_a",
           "diode_avg_a", "diode_rms_a", "diode_piv_v", "winding_rms_a", "cap_ripple_rms_a",
           "second_cap_rms_a", "choke_rms_a", "choke_peak_a", "choke_dc_drop_v",
           "conduction_deg", "ripple_hz", "load_a"]


def law_check():
    """The law at its data-sheet point gives the drop: G * V0^1.5 == I0 (printed)."""
    ok = True
    for name, law in (("high", HIGH), ("medium", MEDIUM), ("low", LOW)):
        drop, at = law
        back = g_of(law) * drop ** 1.5
        good = abs(back / at - 1) < 1e-12
        ok &= good
        print(f"law {name}: G = {g_of(law):.6e} A/V^1.5; G * {drop}^1.5 = {back:.9g} A "
              f"(at_a {at}) {'ok' if good else 'MISMATCH'}", file=sys.stderr)
    if not ok:
        raise SystemExit("the valve law does not pass through its data-sheet point")


def main():
    started = time.monotonic()
    version = subprocess.run(["ngspice", "-v"], capture_output=True, text=True).stdout
    version = next((l.strip("* ").strip() for l in version.splitlines() if "ngspice-" in l),
                   "ngspice (unknown version)")
    law_check()
    only = [a for a in sys.argv[1:] if not a.startswith("-")]
    os.makedirs(OUT_DIR, exist_ok=True)
    rows = []
    inductors.figures = valve_figures
    with tempfile.TemporaryDirectory() as work:
        for c in CASES:
            if only and c["name"] not in only:
                continue
            with open(os.path.join(OUT_DIR, f"{c['name']}.toml"), "w") as fh:
                fh.write(toml_for(c))
            inductors.netlist = valve_netlist(c)
            t = time.monotonic()
            fig, drift, periods, options = inductors.run_case(c, work)
            g = g_of(c["law"])
            vm = inductors.winding_peak(c)
            plate_drop = (fig["diode_peak_a"] / g) ** (2 / 3)
            print(f"{c['name']}: dc {fig['dc_v']:.2f} V, pp {fig['ripple_pp_v']:.4g} V at "
                  f"{fig['ripple_hz']:g} Hz, plate peak {fig['diode_peak_a']:.4g} A avg "
                  f"{fig['diode_avg_a']:.4g} A, conduction {fig['conduction_deg']:.1f} deg; "
                  f"drift {drift:.1e} after {periods} periods ({options}), "
                  f"{time.monotonic() - t:.0f} s", file=sys.stderr)
            print(f"  winding peak {vm:.1f} V, plate drop at peak {plate_drop:.1f} V, "
                  f"peak - drop - dc = {vm - plate_drop - fig['dc_v']:.1f} V; first capacitor "
                  f"{fig['cap_ripple_rms_a']:.4g} A rms (avg {fig['cap1_avg_a']:.1e} A)",
                  file=sys.stderr)
            rows.append((c["name"], fig))
    if only:
        print("subset run: CSV not written", file=sys.stderr)
        return
    fmt = lambda v: "" if v is None else f"{v:.6g}"
    with open(CSV, "w") as fh:
        fh.write(f"# {version} ; written by tests/reference/valves.py; valve rectifiers, each "
                 "plate I = G V^1.5 (G = at_a / drop_v^1.5) as an ngspice behavioural source, "
                 f"convergence aid {PLATE_SHUNT_S:g} S from each plate to the rail (outside the "
                 "plate's sense; moves no figure by 1e-4), Gear first; files under tests/reference/valves/; figures over the "
                 "last mains period; diode_* = one plate; cap_ripple_rms_a = the FIRST "
                 "capacitor's AC RMS current; second_cap_rms_a = a CLC's output capacitor's; "
                 "choke columns empty without a choke; conduction_deg: the plate's current "
                 "above 1e-6 of its peak\n")
        fh.write("case,file," + ",".join(COLUMNS) + "\n")
        for name, fig in rows:
            fh.write(f"{name},valves/{name}.toml," + ",".join(fmt(fig[k]) for k in COLUMNS)
                     + "\n")
    print(f"{len(rows)} cases in {time.monotonic() - started:.0f} s", file=sys.stderr)


if __name__ == "__main__":
    main()
