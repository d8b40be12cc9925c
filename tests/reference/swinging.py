#!/usr/bin/env python3
"""ngspice references for choke-input supplies with a SWINGING choke (issue 12): a choke whose
inductance falls as its current rises, the way a choke-input supply keeps above its critical
inductance at light load without a heavy bleeder.

The choke is railcheck's swinging law (README, "The supply file"): `choke_light_h` up to a tenth
of `choke_rated_a`, falling in a straight line to `choke_h` at `choke_rated_a`, `choke_h`
beyond. ngspice has no such part, so it is built from ngspice's behavioural sources as the
standard current-dependent inductor: a node x whose voltage is the choke's current (a 1 F
capacitor charged by a source of V(choke) / L(V(x)), so dI/dt = V / L(I)) and a current source
of V(x) in the choke's place; L(I) is ngspice's pwl() of |I| through the law's corners.

Everything else (netlist, settling rule, figures) is tests/reference/inductors.py's, imported.
Writes tests/reference/swinging/<case>.toml and tests/reference/ngspice_swinging.csv (ngspice
version in its first line). Cases are invented (our own round numbers, no product's data):
  swing_ct_50_light  230 V : 2 x 350 V center tap, 20-5 H swinging choke rated 150 mA, 40 uF,
                     15 kohm (about 25 mA): L_crit = R / 3w = 15.9 H, which the choke's 18.9 H
                     there clears and its rated 5 H would not;
  swing_ct_50_heavy  the same at 2.5 kohm (about 0.13 A: the choke near its rated 5 H, 2.65 H
                     critical);
  swing_br_60_light  120 V : 40 V bridge, 0.6-0.15 H swinging choke rated 2 A, 2200 uF, 100 ohm
                     (about 0.35 A): L_crit 88 mH.
"""
import math
import os
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
import inductors  # noqa: E402
from inductors import case  # noqa: E402

OUT_DIR = os.path.join(HERE, "swinging")
CSV = os.path.join(HERE, "ngspice_swinging.csv")

CASES = [
    dict(case("swing_ct_50_light", "swinging choke input, 2 x 350 V center tap, light load",
              "center-tap", 230, 50, 230 / 700, sec=160, pri=12, kind="lc", choke_h=5,
              choke_ohms=120, uf=40, esr=1.5, ohms=15000), light_h=20, rated_a=0.15),
    dict(case("swing_ct_50_heavy", "swinging choke input, 2 x 350 V center tap, heavy load",
              "center-tap", 230, 50, 230 / 700, sec=160, pri=12, kind="lc", choke_h=5,
              choke_ohms=120, uf=40, esr=1.5, ohms=2500), light_h=20, rated_a=0.15),
    dict(case("swing_br_60_light", "swinging choke input, 40 V bridge, light load", "bridge",
              120, 60, 3.0, sec=0.8, pri=4, kind="lc", choke_h=0.15, choke_ohms=1.2,
              uf=2200, esr=0.04, ohms=100), light_h=0.6, rated_a=2.0),
]


def toml_for(c):
    text = inductors.toml_for(c).replace("tests/reference/inductors.py",
                                         "tests/reference/swinging.py")
    return text.replace(f"choke_ohms = {c['choke_ohms']}\n",
                        f"choke_ohms = {c['choke_ohms']}\nchoke_light_h = {c['light_h']}\n"
                        f"choke_rated_a = {c['rated_a']}\n")


PLAIN_NETLIST = inductors.netlist


def swinging_netlist(c):
    plain = PLAIN_NETLIST

    def netlist(c2, tstop, tstart, tmax, out_file, options):
        text = plain(c2, tstop, tstart, tmax, out_file, options)
        old = next(l for l in text.splitlines() if l.startswith("LCH "))
        i0 = float(old.split("IC=")[1])
        h, light, rated = c["choke_h"], c["light_h"], c["rated_a"]
        law = (f"pwl(abs(V(chx)), 0, {light}, {0.1 * rated}, {light}, {rated}, {h}, "
               f"{1000 * rated}, {h})")
        new = "\n".join([
            f"CCHX chx 0 1 IC={i0}",
            f"BCHX 0 chx I=V(l2,out)/({law})",
            "BCH l2 out I=V(chx)",
        ])
        return text.replace(old, new)
    return netlist


def main():
    started = time.monotonic()
    version = subprocess.run(["ngspice", "-v"], capture_output=True, text=True).stdout
    version = next((l.strip("* ").strip() for l in version.splitlines() if "ngspice-" in l),
                   "ngspice (unknown version)")
    os.makedirs(OUT_DIR, exist_ok=True)
    rows = []
    with tempfile.TemporaryDirectory() as work:
        for c in CASES:
            with open(os.path.join(OUT_DIR, f"{c['name']}.toml"), "w") as fh:
                fh.write(toml_for(c))
            inductors.netlist = swinging_netlist(c)
            t = time.monotonic()
            fig, drift, periods, options = inductors.run_case(c, work)
            print(f"{c['name']}: dc {fig['dc_v']:.4f} V, pp {fig['ripple_pp_v']:.4g} V, choke "
                  f"{fig['choke_avg_a']:.4g} A avg, min {fig['choke_min_a']:.4g} A, conduction "
                  f"{fig['conduction_deg']:.1f} deg; drift {drift:.1e} after {periods} periods "
                  f"({options}), {time.monotonic() - t:.0f} s", file=sys.stderr)
            rows.append((c["name"], fig))
    fmt = lambda v: "" if v is None else f"{v:.6g}"
    columns = inductors.COLUMNS + ["choke_min_a"]
    with open(CSV, "w") as fh:
        fh.write(f"# {version}; written by tests/reference/swinging.py; choke inputs with a "
                 "swinging choke (files under tests/reference/swinging/), figures over the last "
                 "mains period; conduction_deg: D1's current above 1e-6 of its peak\n")
        fh.write("case," + ",".join(columns) + "\n")
        for name, fig in rows:
            fh.write(name + "," + ",".join(fmt(fig[k]) for k in columns) + "\n")
    print(f"{len(rows)} cases in {time.monotonic() - started:.0f} s", file=sys.stderr)


if __name__ == "__main__":
    main()
