#!/usr/bin/env python3
"""Reference data for railcheck's steady-state engine, from ngspice.

For each supply of the matrix below this script
  1. writes the supply as a railcheck TOML file under tests/reference/supplies/,
  2. writes an ngspice netlist of the same circuit built from the simulator's own parts
     (an ideal transformer from controlled sources, with the primary resistance on the primary
     side, SPICE junction diodes, capacitors with a series ESR resistor, resistor or current
     source loads),
  3. runs a transient long enough to reach steady state, checks that the last periods agree,
  4. measures the figures over the last mains period and writes them to
     tests/reference/ngspice.csv, with the ngspice version in a comment line.

Run from the repository root:  python3 tests/reference/generate.py
Needs: ngspice (Debian package `ngspice`) and python3; no other package.
`cargo test` reads only the CSV and the TOML files, never ngspice.
"""

import math
import os
import subprocess
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
SUPPLIES = os.path.join(HERE, "supplies")

# Junction parameters of railcheck's diode presets (as documented in src/supply.rs).
PRESETS = {
    "silicon": dict(is_a=7.0e-9, n=1.8, rs_ohms=0.034),
    "fast": dict(is_a=1.0e-8, n=2.0, rs_ohms=0.06),
    "schottky": dict(is_a=1.0e-5, n=1.05, rs_ohms=0.05),
}


def case(name, topology, vrms, hz, ratio, *, sec=0.0, pri=0.0, diode="silicon", kind="capacitor",
         uf=None, esr=0.0, amps=None, ohms=None, crest=None, series_ohms=None, second_uf=None):
    return dict(name=name, topology=topology, vrms=vrms, hz=hz, ratio=ratio, sec=sec, pri=pri,
                diode=diode, kind=kind, uf=uf, esr=esr, amps=amps, ohms=ohms, crest=crest,
                series_ohms=series_ohms, second_uf=second_uf)


CUSTOM = dict(is_a=1.0e-9, n=1.6, rs_ohms=0.1)

MATRIX = [
    case("hw_r_50", "half-wave", 230, 50, 19.2, sec=1.2, pri=30, uf=1000, esr=0.1, ohms=100),
    case("hw_cc_60", "half-wave", 120, 60, 5.0, sec=0.8, uf=2200, esr=0.05, amps=0.3),
    case("hw_none_r", "half-wave", 230, 50, 12.0, sec=1.5, kind="none", ohms=47),
    case("hw_custom_60", "half-wave", 120, 60, 8.0, sec=0.6, diode=CUSTOM, uf=3300, ohms=22),
    case("ct_r_60", "center-tap", 120, 60, 4.0, sec=2.0, pri=8, uf=3300, esr=0.03, ohms=33),
    case("ct_cc_50_light", "center-tap", 230, 50, 7.7, sec=3.0, uf=470, amps=0.02),
    case("ct_none_r", "center-tap", 80, 60, 4.85, sec=1.0, kind="none", ohms=680),
    case("ct_schottky_50", "center-tap", 230, 50, 20.0, sec=0.4, diode="schottky", uf=10000,
         esr=0.02, amps=2.0),
    case("br_cc_50", "bridge", 230, 50, 9.58, sec=1.8, pri=42, uf=2200, esr=0.05, amps=0.35),
    case("br_r_60", "bridge", 120, 60, 7.5, sec=0.5, pri=2, uf=4700, esr=0.02, ohms=10),
    case("br_light_r", "bridge", 230, 50, 15.0, sec=4.0, uf=100, ohms=2200),
    case("br_very_light", "bridge", 230, 50, 15.0, sec=4.0, pri=60, uf=470, ohms=4700),
    case("br_none_r", "bridge", 120, 60, 10.0, sec=0.7, kind="none", ohms=100),
    case("br_schottky_60", "bridge", 120, 60, 15.0, sec=0.3, diode="schottky", uf=6800,
         esr=0.01, amps=1.5),
    case("br_flat_50", "bridge", 230, 50, 10.0, sec=1.0, uf=3300, esr=0.04, amps=0.5, crest=1.38),
    case("br_high_esr", "bridge", 230, 50, 12.0, sec=1.2, uf=1000, esr=1.5, amps=0.5),
    case("br_fast_60", "bridge", 120, 60, 6.0, sec=1.0, diode="fast", uf=2200, esr=0.05, ohms=27),
    case("dbl_r_50", "doubler", 230, 50, 2.0, sec=10.0, uf=100, esr=0.2, ohms=2200),
    case("dbl_cc_60", "doubler", 120, 60, 4.0, sec=2.0, pri=5, uf=470, esr=0.1, amps=0.1),
    case("sr_r_50", "split-rail", 230, 50, 6.4, sec=2.4, pri=20, uf=2200, esr=0.05, ohms=47),
    case("sr_cc_60", "split-rail", 120, 60, 3.3, sec=1.5, uf=4700, esr=0.03, amps=0.8),
    case("sr_none_r", "split-rail", 230, 50, 8.0, sec=2.0, kind="none", ohms=100),
    case("crc_br_50", "bridge", 230, 50, 9.0, sec=1.5, kind="crc", uf=1000, esr=0.05,
         series_ohms=22, second_uf=1000, ohms=100),
    case("crc_ct_60", "center-tap", 120, 60, 4.0, sec=1.5, kind="crc", uf=470, series_ohms=100,
         second_uf=470, amps=0.05),
    case("hw_flat_60", "half-wave", 120, 60, 6.0, sec=1.0, uf=2200, esr=0.05, amps=0.2,
         crest=1.36),
]


# --- the mains wave: a sine clipped to a crest factor, keeping 1 V RMS (src/circuit/waveform.rs)
def clipped_mean_square(k):
    a = math.asin(min(max(k, 0.0), 1.0))
    return (2 / math.pi) * (a / 2 - math.sin(2 * a) / 4 + k * k * (math.pi / 2 - a))


def clip_and_gain(crest):
    if crest is None or crest >= math.sqrt(2) - 1e-9:
        return 1.0, math.sqrt(2)
    lo, hi = 1e-6, 1.0
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        if mid / math.sqrt(clipped_mean_square(mid)) < crest:
            lo = mid
        else:
            hi = mid
    k = 0.5 * (lo + hi)
    return k, 1 / math.sqrt(clipped_mean_square(k))


def toml_for(c):
    lines = ["format = 1", f'name = "reference {c["name"]}"',
             'notes = "ngspice reference case, written by tests/reference/generate.py"', "",
             "[mains]", f"vrms = {float(c['vrms'])}", f"hz = {float(c['hz'])}"]
    if c["crest"]:
        lines.append(f"crest = {c['crest']}")
    lines += ["", "[transformer]", f"ratio = {c['ratio']}", f"secondary_ohms = {c['sec']}",
              f"primary_ohms = {c['pri']}", "", "[rectifier]", f'topology = "{c["topology"]}"']
    d = c["diode"]
    if isinstance(d, str):
        lines.append(f'diode = "{d}"')
    else:
        lines.append(f"diode = {{ is_a = {d['is_a']}, n = {d['n']}, rs_ohms = {d['rs_ohms']} }}")
    lines += ["", "[filter]", f'kind = "{c["kind"]}"']
    if c["kind"] != "none":
        lines += [f"uf = {float(c['uf'])}", f"esr_ohms = {c['esr']}"]
    if c["kind"] == "crc":
        lines += [f"series_ohms = {c['series_ohms']}", f"second_uf = {float(c['second_uf'])}"]
    lines += ["", "[load]"]
    lines.append(f"amps = {c['amps']}" if c["amps"] is not None else f"ohms = {float(c['ohms'])}")
    return "\n".join(lines) + "\n"


def diode_params(d):
    return PRESETS[d] if isinstance(d, str) else d


def netlist(c, tstop, tstart, tmax, out_file, options=".options reltol=1e-4 method=trap"):
    d = diode_params(c["diode"])
    f = c["hz"]
    vpk = c["vrms"] * math.sqrt(2)
    k, gain = clip_and_gain(c["crest"])
    lines = [f"* railcheck reference {c['name']}",
             f".model DREF D(IS={d['is_a']} N={d['n']} RS={d['rs_ohms']})"]
    if k >= 1.0:
        lines.append(f"VMAINS m 0 SIN(0 {vpk} {f})")
    else:
        # The clipped sine, written as the simulator's own behavioural source.
        amp = c["vrms"] * gain
        lines.append(f"BMAINS m 0 V = {amp} * max(-{k}, min({k}, sin({2 * math.pi * f} * time)))")
    lines.append(f"RPRI m p {max(c['pri'], 1e-6)}")
    ratio = c["ratio"]
    top = c["topology"]
    sec = max(c["sec"], 1e-6)
    load_node = "out"

    def cap(name, node, uf, esr, ref="0"):
        if esr > 0:
            return [f"R{name} {node} {node}_c {esr}", f"C{name} {node}_c {ref} {uf}u"]
        return [f"C{name} {node} {ref} {uf}u"]

    if top in ("center-tap", "split-rail"):
        # Two half windings in series, center tap grounded; each sensed and reflected.
        lines += [f"EA a0 0 p 0 {0.5 / ratio}", "VSA a0 a1 0", f"RA a1 a {sec / 2}",
                  f"FA p 0 VSA {0.5 / ratio}",
                  f"EB 0 b0 p 0 {0.5 / ratio}", "VSB b1 b0 0", f"RB b b1 {sec / 2}",
                  f"FB p 0 VSB {0.5 / ratio}"]
    else:
        lines += [f"ES a0 b p 0 {1.0 / ratio}", "VSA a0 a1 0", f"RS a1 a {sec}",
                  f"FS p 0 VSA {1.0 / ratio}"]
        if top != "half-wave":
            # A floating winding needs a DC reference while every diode is off, and a little
            # capacitance so its nodes do not jump at each diode's turn-off: 1 Gohm and 1 nF
            # draw microamps at the mains frequency, nothing a figure can see.
            lines += ["RFLOAT b 0 1e9", "CFLOAT a b 1n"]
    open_leg = c.get("open_leg", False)
    if top == "half-wave":
        lines += ["VB b 0 0", "D1 a d1 DREF", "VD1 d1 out 0"]
    elif top == "center-tap":
        lines += ["D1 a d1 DREF", "VD1 d1 out 0"] + ([] if open_leg else ["D2 b out DREF"])
    elif top == "bridge":
        # An open leg: the diode that carries the negative half cycle to the rail is missing.
        lines += ["D1 a d1 DREF", "VD1 d1 out 0", "D2 0 a DREF", "D4 0 b DREF"]
        lines += [] if open_leg else ["D3 b out DREF"]
    elif top == "doubler":
        # Winding between a and the capacitor junction b; D1 charges the top, D2 the bottom.
        lines += ["D1 a d1 DREF", "VD1 d1 out 0", "D2 0 a DREF"]
    elif top == "split-rail":
        lines += ["D1 a d1 DREF", "VD1 d1 out 0", "D2 b out DREF", "D3 neg a DREF",
                  "D4 neg b DREF"]
    # One capacitor's fault (--one-capacitor): the first capacitor the rectifier charges (a
    # CRC's first, a doubler's top one) at `first_factor` of its value, with `first_esr`, or
    # removed (`first_open`); the other capacitors keep theirs.
    uf1 = c["uf"] * c.get("first_factor", 1.0) if c["uf"] else None
    esr1 = c.get("first_esr", c["esr"])
    first_open = c.get("first_open", False)
    if c["kind"] != "none":
        if top == "doubler":
            lines += ["VCS out out_s 0"] + cap("1", "out_s", uf1, esr1, "b")
            lines += [f"R2 b b_c {max(c['esr'], 1e-6)}", f"C2 b_c 0 {c['uf']}u"]
        elif first_open:
            pass
        else:
            lines += ["VCS out out_s 0"] + cap("1", "out_s", uf1, esr1)
            if top == "split-rail":
                lines += cap("N", "neg", c["uf"], c["esr"])
        if c["kind"] == "crc":
            lines += [f"RCRC out rail {c['series_ohms']}", f"C3 rail 0 {c['second_uf']}u"]
            if top == "split-rail":
                # The - rail mirrors the + rail (railcheck's split rail is matched).
                lines += [f"RCRCN neg nrail {c['series_ohms']}", f"C3N nrail 0 {c['second_uf']}u"]
            load_node = "rail"
    neg_load = "nrail" if load_node == "rail" and top == "split-rail" else "neg"
    if c["amps"] is not None:
        lines.append(f"ILOAD {load_node} 0 DC {c['amps']}")
        if top == "split-rail":
            lines.append(f"ILOADN 0 {neg_load} DC {c['amps']}")
    else:
        lines.append(f"RLOAD {load_node} 0 {c['ohms']}")
        if top == "split-rail":
            lines.append(f"RLOADN 0 {neg_load} {c['ohms']}")
    # Start the capacitors near their working voltage so the run is short (the final state is
    # the simulator's own: the check below refuses an unsettled run).
    ic = []
    guess = c.get("start", 0.9) * (c["vrms"] / ratio * math.sqrt(2) * (0.5 if top in ("center-tap", "split-rail") else 1.0))
    if c["kind"] != "none":
        if top == "doubler":
            ic = [f"v(out)={2 * guess}", f"v(b)={guess}", f"v(out_s_c)={2 * guess}", f"v(b_c)={guess}"]
        elif first_open:
            ic = []
        else:
            ic = [f"v(out)={guess}", f"v(out_s)={guess}"]
            if esr1 > 0:
                ic.append(f"v(out_s_c)={guess}")
            if top == "split-rail":
                ic += [f"v(neg)={-guess}"]
                if c["esr"] > 0:
                    ic.append(f"v(neg_c)={-guess}")
            if c["kind"] == "crc":
                ic.append(f"v(rail)={guess * 0.9}")
                if top == "split-rail":
                    ic.append(f"v(nrail)={-guess * 0.9}")
    if ic:
        lines.append(".ic " + " ".join(ic))
    probe_out = "v(rail)" if load_node == "rail" else "v(out)"
    wind = "i(VSA)"
    # Columns: rail, one diode's current, winding current, reverse voltage on that diode, and
    # the first capacitor's current when there is one.
    vectors = f"{probe_out} i(VD1) {wind} v(out)-v(a) v(a)-v(b)"
    if c["kind"] != "none" and not first_open:
        vectors += " i(VCS)"
    lines += [options,
              f".tran {tmax} {tstop} {tstart} {tmax} uic",
              ".control", "run", f"wrdata {out_file} {vectors}",
              "quit", ".endc", ".end"]
    return "\n".join(lines) + "\n"


def read_wrdata(path):
    rows = []
    with open(path) as fh:
        for line in fh:
            parts = line.split()
            if not parts:
                continue
            vals = [float(x) for x in parts]
            # wrdata writes "t v1 t v2 t v3 ...": keep the time once.
            rows.append([vals[0]] + vals[1::2])
    return rows


def figures(rows, t0, t1, load_amps, load_ohms):
    seg = [r for r in rows if t0 - 1e-12 <= r[0] <= t1 + 1e-12]
    T = seg[-1][0] - seg[0][0]

    def integ(fn):
        acc = 0.0
        for a, b in zip(seg, seg[1:]):
            acc += 0.5 * (fn(a) + fn(b)) * (b[0] - a[0])
        return acc / T

    dc = integ(lambda r: r[1])
    v2 = integ(lambda r: (r[1] - dc) ** 2)
    vmax = max(r[1] for r in seg)
    vmin = min(r[1] for r in seg)
    return dict(
        dc_v=dc, max_v=vmax, min_v=vmin, ripple_pp_v=vmax - vmin, ripple_rms_v=math.sqrt(v2),
        diode_peak_a=max(r[2] for r in seg),
        diode_avg_a=integ(lambda r: r[2]),
        diode_rms_a=math.sqrt(integ(lambda r: r[2] ** 2)),
        winding_rms_a=math.sqrt(integ(lambda r: r[3] ** 2)),
        diode_piv_v=max(r[4] for r in seg),
        secondary_vac=math.sqrt(integ(lambda r: r[5] ** 2)),
        cap_ripple_rms_a=math.sqrt(integ(lambda r: r[6] ** 2)) if len(seg[0]) > 6 else 0.0,
        ripple_hz=dominant_ripple(seg, 1.0 / T),
        conduction_deg=conduction_deg(seg),
        load_a=load_amps if load_amps is not None else dc / load_ohms,
    )


# The diode counts as conducting while its current exceeds this share of its peak (the same
# threshold as the engine's conduction angle): a diode's exponential law leaves a trickle of
# current below any absolute threshold, so the edge is taken relative to the pulse.
CONDUCTION_THRESHOLD = 1e-3


def conduction_deg(seg):
    """Degrees of the period in which one diode's current exceeds CONDUCTION_THRESHOLD of its
    peak, with each crossing placed by straight-line interpolation between time points."""
    T = seg[-1][0] - seg[0][0]
    thr = CONDUCTION_THRESHOLD * max(r[2] for r in seg)
    on = 0.0
    for a, b in zip(seg, seg[1:]):
        da, db = a[2] - thr, b[2] - thr
        dt = b[0] - a[0]
        if da > 0 and db > 0:
            on += dt
        elif da > 0 or db > 0:
            frac = (da if da > 0 else db) / abs(da - db)
            on += frac * dt
    return 360.0 * on / T


OPTION_SETS = [".options reltol=1e-4 method=trap", ".options reltol=1e-4 method=gear",
               ".options reltol=2e-4 method=trap gmin=1e-10",
               ".options reltol=1e-4 method=trap rshunt=1e10",
               ".options reltol=3e-4 method=gear rshunt=1e9"]

def dominant_ripple(seg, f):
    """The stronger of the line-frequency and twice-line components of the rail."""
    t0 = seg[0][0]
    T = seg[-1][0] - t0
    def amp(k):
        re = im = 0.0
        for a, b in zip(seg, seg[1:]):
            t = 0.5 * (a[0] + b[0]) - t0
            v = 0.5 * (a[1] + b[1])
            w = 2 * math.pi * k * t / T
            re += v * math.cos(w) * (b[0] - a[0])
            im += v * math.sin(w) * (b[0] - a[0])
        return math.hypot(re, im)
    return f if amp(1) >= amp(2) else 2 * f


COLUMNS = ["dc_v", "max_v", "min_v", "ripple_pp_v", "ripple_rms_v", "diode_peak_a",
           "diode_avg_a", "diode_rms_a", "diode_piv_v", "winding_rms_a", "cap_ripple_rms_a",
           "load_a"]


# ngspice.csv carries the conduction angle as well; the other files keep their columns.
MATRIX_COLUMNS = COLUMNS + ["conduction_deg"]


def run_case(c, work):
    f = c["hz"]
    T = 1.0 / f
    periods = 60
    if c["kind"] != "none":
        # Light loads forget their start slowly: run for several load time constants too.
        r = c["ohms"] if c["ohms"] else None
        if r:
            periods = max(periods, int(3 * r * c["uf"] * 1e-6 / T) + 20)
        periods = min(periods, 1500)
    periods = c.get("periods", periods)
    for attempt in range(3):
        tstop = periods * T
        tstart = (periods - 3) * T
        out = os.path.join(work, f"{c['name']}.data")
        net = os.path.join(work, f"{c['name']}.cir")
        # ngspice now and then gives up on a floating winding at a diode's turn-off ("timestep
        # too small"); another integration method gets through the same circuit.
        for options in OPTION_SETS:
            with open(net, "w") as fh:
                fh.write(netlist(c, tstop, tstart, T / c.get("steps_per_period", 4000), out,
                                 options))
            subprocess.run(["ngspice", "-b", net], check=True, capture_output=True)
            if os.path.exists(out):
                break
        else:
            raise SystemExit(f"{c['name']}: ngspice failed with every option set")
        rows = read_wrdata(out)
        os.remove(out)
        last = figures(rows, tstop - T, tstop, c["amps"], c["ohms"])
        before = figures(rows, tstop - 2 * T, tstop - T, c["amps"], c["ohms"])
        drift = abs(last["dc_v"] - before["dc_v"]) / max(abs(last["dc_v"]), 1e-9)
        # An unfiltered rectifier has nothing to settle: what differs between its periods is
        # only the trapezoid rule on different time steps.
        if drift < (1e-3 if c["kind"] == "none" else 2e-5):
            return last, drift, periods
        periods *= 3
    raise SystemExit(f"{c['name']}: did not settle (drift {drift:.2e} per period)")


# Supplies whose tolerance box (mains +-10 %, capacitance +-20 %, the file defaults) is also
# simulated at its four corners, for the worst-case check.
CORNER_CASES = ["hw_r_50", "ct_r_60", "br_cc_50", "br_light_r", "dbl_cc_60", "sr_r_50",
                "crc_br_50"]
CORNERS = [(0.9, 0.8), (0.9, 1.2), (1.1, 0.8), (1.1, 1.2)]


def corner_rows(work):
    rows = []
    by_name = {c["name"]: c for c in MATRIX}
    for name in CORNER_CASES:
        for mains, cap in CORNERS:
            c = dict(by_name[name])
            c["vrms"] = c["vrms"] * mains
            c["uf"] = c["uf"] * cap
            if c.get("second_uf"):
                c["second_uf"] = c["second_uf"] * cap
            c["name"] = f"{name}_m{mains}_c{cap}"
            fig, drift, periods = run_case(c, work)
            print(f"{c['name']}: dc {fig['dc_v']:.4f} V", file=sys.stderr)
            rows.append((name, mains, cap, fig))
    return rows


# Faulted circuits for the diagnosis test: (base case, fault, parameter). The readings a
# technician would take come from the simulation; the mains is "read" except where the fault
# is the mains itself.
FAULTS = [
    ("br_cc_50", "capacitance-low", 0.35),
    ("br_cc_50", "capacitance-low", 0.5),
    ("br_cc_50", "esr-high", 2.5),
    ("br_cc_50", "capacitor-open", None),
    ("br_cc_50", "rectifier-leg-open", None),
    ("br_cc_50", "mains-low", 0.8),
    ("br_cc_50", "secondary-low", 1.25),
    ("br_cc_50", "load-heavy", 2.2),
    ("br_cc_50", "healthy-low-mains", 0.93),
    ("ct_r_60", "capacitance-low", 0.4),
    ("ct_r_60", "rectifier-leg-open", None),
    ("ct_r_60", "load-light", 0.3),
    ("ct_r_60", "mains-high", 1.2),
    ("hw_r_50", "capacitance-low", 0.3),
    ("hw_r_50", "esr-high", 4.0),
    ("hw_r_50", "load-heavy", 2.5),
    ("sr_r_50", "capacitance-low", 0.45),
    ("sr_r_50", "secondary-low", 1.3),
    ("dbl_cc_60", "capacitance-low", 0.4),
    ("dbl_cc_60", "load-heavy", 2.0),
]


def faulted(base, fault, x):
    c = dict(base)
    c["name"] = f"{base['name']}_{fault}_{x}"
    if fault == "capacitance-low":
        c["uf"] = c["uf"] * x
    elif fault == "esr-high":
        c["esr"] = x
    elif fault == "capacitor-open":
        c["kind"] = "none"
    elif fault == "rectifier-leg-open":
        c["open_leg"] = True
    elif fault in ("mains-low", "mains-high", "healthy-low-mains"):
        c["vrms"] = c["vrms"] * x
    elif fault == "secondary-low":
        c["ratio"] = c["ratio"] * x
    elif fault in ("load-heavy", "load-light"):
        if c["amps"] is not None:
            c["amps"] = c["amps"] * x
        else:
            c["ohms"] = c["ohms"] / x
    return c


def fault_rows(work):
    by_name = {c["name"]: c for c in MATRIX}
    rows = []
    for name, fault, x in FAULTS:
        base = by_name[name]
        c = faulted(base, fault, x)
        if c["kind"] == "none" and c["amps"] is not None:
            # A current source cannot feed an unfiltered rail in a simulator; the load that
            # draws that current at the working voltage stands in (a real load is a resistance
            # once starved).
            c["ohms"] = 0.9 * c["vrms"] / c["ratio"] * math.sqrt(2) / c["amps"]
            c["amps"] = None
        fig, drift, periods = run_case(c, work)
        mains = None if fault in ("mains-low", "mains-high") else c["vrms"]
        print(f"{c['name']}: dc {fig['dc_v']:.3f} V ripple {fig['ripple_pp_v']:.3f} V {fig['ripple_hz']} Hz",
              file=sys.stderr)
        rows.append((name, fault, x, mains, fig))
    return rows


# One capacitor of two failing (issue 10): the reservoir the rectifier charges changed, the
# other capacitor as drawn. (base case, what, parameter); written to ngspice_one_capacitor.csv.
ONE_CAPACITOR = [
    ("dbl_cc_60", "first_factor", 0.4),
    ("dbl_cc_60", "first_esr", 3.0),
    ("crc_br_50", "first_factor", 0.3),
    ("crc_br_50", "first_esr", 2.0),
    ("crc_br_50", "first_open", True),
    ("crc_ct_60", "first_open", True),
]


def one_capacitor_main(version):
    by_name = {c["name"]: c for c in MATRIX}
    rows = []
    with tempfile.TemporaryDirectory() as work:
        for name, what, x in ONE_CAPACITOR:
            c = dict(by_name[name])
            c[what] = x
            c["name"] = f"{name}_{what}_{x}"
            fig, drift, periods = run_case(c, work)
            print(f"{c['name']}: dc {fig['dc_v']:.4f} V pp {fig['ripple_pp_v']:.4f} V "
                  f"{fig['ripple_hz']} Hz, drift {drift:.1e}/period after {periods} periods",
                  file=sys.stderr)
            rows.append((name, what, x, fig))
    with open(os.path.join(HERE, "ngspice_one_capacitor.csv"), "w") as fh:
        fh.write(f"# {version}; written by tests/reference/generate.py --one-capacitor; "
                 "one capacitor of two changed\n")
        fh.write("case/change=parameter," + ",".join(COLUMNS) + ",ripple_hz\n")
        for name, what, x, fig in rows:
            cells = [f"{name}/{what}={'1' if x is True else x}"]
            cells += [f"{fig[k]:.6g}" for k in COLUMNS] + [f"{fig['ripple_hz']:.6g}"]
            fh.write(",".join(cells) + "\n")


# Stiff supplies (issue 9): a CRC whose second capacitor's time constant is microseconds or
# nanoseconds against the period. Their files are written by hand under tests/reference/stiff/
# (the first in the nameplate form); the netlist takes the winding they imply: ratio =
# primary / (secondary * (1 + regulation)), and with no measured ohms the whole series
# resistance secondary^2 * regulation / VA in the secondary (src/supply.rs, `winding`). The
# loads are so light (RC of days) that a run from zero would never settle: the capacitors
# start a little below the winding's peak, where the light load leaves them (`start`), and the
# run is accepted once its DC drifts less than 2e-5 a period (the check in run_case). From
# below, the last tenths of a volt take minutes of circuit time (each e-fold of the diodes'
# excess current moves the rail by n Vt), far beyond a run, so the charge balance (diodes'
# average against the load) is printed, and tests/stiff.rs extrapolates by n Vt ln(balance).
# The stored CSV holds the 500 Hz case only: 60 periods of the 16 Hz one did not finish in
# 15 minutes on the project's loaded 2-core machine.
CT_RATIO = 376.3 / (571.7 * 1.0001)
CT_SEC = 571.7 ** 2 * 0.0001 / 8.19
STIFF = [
    dict(case("ct_crc_16hz_stiff", "center-tap", 627.8, 16, CT_RATIO, sec=CT_SEC, kind="crc",
              uf=13811, series_ohms=2468, second_uf=0.00059, ohms=153.5e6, crest=1.1),
         start=0.99 * 1.1 / math.sqrt(2), periods=60, steps_per_period=1000),
    dict(case("sr_crc_500hz_stiff", "split-rail", 230, 500, 6.4, sec=2.4, pri=20, kind="crc",
              uf=2217, esr=0.05, series_ohms=1140, second_uf=5.7e-6, ohms=5.59e6),
         start=0.97, periods=2000, steps_per_period=400),
]


def stiff_main(version):
    """Simulates only the stiff supplies into ngspice_stiff.csv (the other CSVs untouched)."""
    rows = []
    # `--stiff NAME ...` simulates only those (the 16 Hz case takes ngspice longer than 15
    # minutes of a loaded 2-core machine for 60 periods: its 1.5 us node holds the steps down).
    only = [a for a in sys.argv[1:] if not a.startswith("--")]
    with tempfile.TemporaryDirectory() as work:
        for c in STIFF:
            if only and c["name"] not in only:
                continue
            fig, drift, periods = run_case(c, work)
            # Settled means the diodes deliver what the load takes: two pulses a period.
            balance = 2 * fig["diode_avg_a"] / fig["load_a"]
            print(f"{c['name']}: dc {fig['dc_v']:.6f} V, ripple {fig['ripple_pp_v']:.3e} V, "
                  f"drift {drift:.1e}/period after {periods} periods, diodes deliver "
                  f"{balance:.3f} of the load", file=sys.stderr)
            rows.append((c["name"], fig))
    with open(os.path.join(HERE, "ngspice_stiff.csv"), "w") as fh:
        fh.write(f"# {version}; written by tests/reference/generate.py --stiff; stiff CRC supplies "
                 "(files under tests/reference/stiff/), figures over the last mains period\n")
        fh.write("case," + ",".join(COLUMNS) + "\n")
        for name, fig in rows:
            fh.write(name + "," + ",".join(f"{fig[k]:.6g}" for k in COLUMNS) + "\n")


def main():
    version = subprocess.run(["ngspice", "-v"], capture_output=True, text=True).stdout
    version = next((l.strip("* ").strip() for l in version.splitlines() if "ngspice-" in l),
                   "ngspice (unknown version)")
    if "--stiff" in sys.argv[1:]:
        stiff_main(version)
        return
    if "--one-capacitor" in sys.argv[1:]:
        one_capacitor_main(version)
        return
    os.makedirs(SUPPLIES, exist_ok=True)
    rows = []
    with tempfile.TemporaryDirectory() as work:
        for c in MATRIX:
            with open(os.path.join(SUPPLIES, f"{c['name']}.toml"), "w") as fh:
                fh.write(toml_for(c))
            fig, drift, periods = run_case(c, work)
            print(f"{c['name']}: dc {fig['dc_v']:.4f} V, drift {drift:.1e}/period after {periods} periods",
                  file=sys.stderr)
            rows.append((c["name"], fig))
        corners = corner_rows(work)
        faults = fault_rows(work)
    with open(os.path.join(HERE, "ngspice_faults.csv"), "w") as fh:
        fh.write(f"# {version}; written by tests/reference/generate.py; faulted circuits and the readings they give\n")
        fh.write("case,fault,parameter,mains_vrms,secondary_vac,dc_v,ripple_pp_v,ripple_rms_v,ripple_hz,load_a\n")
        for name, fault, x, mains, fig in faults:
            cells = [name, fault, "" if x is None else str(x), "" if mains is None else f"{mains:.6g}"]
            cells += [f"{fig[k]:.6g}" for k in ("secondary_vac", "dc_v", "ripple_pp_v", "ripple_rms_v", "ripple_hz", "load_a")]
            fh.write(",".join(cells) + "\n")
    with open(os.path.join(HERE, "ngspice_corners.csv"), "w") as fh:
        fh.write(f"# {version}; written by tests/reference/generate.py; the tolerance-box corners\n")
        fh.write("case,mains_factor,cap_factor," + ",".join(COLUMNS) + "\n")
        for name, mains, cap, fig in corners:
            fh.write(f"{name},{mains},{cap}," + ",".join(f"{fig[k]:.6g}" for k in COLUMNS) + "\n")
    with open(os.path.join(HERE, "ngspice.csv"), "w") as fh:
        fh.write(f"# {version}; written by tests/reference/generate.py; figures over the last mains period\n")
        fh.write("case," + ",".join(MATRIX_COLUMNS) + "\n")
        for name, fig in rows:
            fh.write(name + "," + ",".join(f"{fig[k]:.6g}" for k in MATRIX_COLUMNS) + "\n")


if __name__ == "__main__":
    main()
