#!/usr/bin/python3
"""Second opinion from SciPy/NumPy (Debian python3-scipy) on the feedback engine.

Usage: scipy_second_opinion.py LOOPSKETCH_CLI DESIGN_FILE

The design must be a unity-gain follower around a gain block with ideal terminals (no
r_in, r_out = 0) and no zeros, so its loop gain is the rational function
    T(s) = a0 / prod_k (1 + s / w_k)
and the closed loop is T / (1 + T). The script reads a0 and the poles from the design file,
runs `loopsketch analyze FILE --json` and checks, with SciPy's and NumPy's own routines:
  - crossover frequency |T(j w)| = 1 and phase margin (scipy.signal.freqs + scipy.optimize.brentq),
  - gain margin and phase-crossover frequency (same),
  - closed-loop poles: roots of the characteristic polynomial den(s) + num(s) (numpy.roots),
  - closed-loop -3 dB bandwidth (scipy.signal.freqs + brentq),
  - DC gain a0 / (1 + a0).
Exit code 0 when everything agrees within the stated tolerances, 1 otherwise.
"""

import json
import math
import subprocess
import sys

import numpy as np
from scipy import optimize, signal

# Tolerances (relative unless stated). The CLI refines crossings by bisection on its own
# model to ~1e-13 and JSON carries 17 digits; both sides are double precision, so 1e-9 is
# far above round-off yet tight enough to catch a grid read-off (grid step ~2.3 %).
TOL_FREQ = 1e-9
TOL_DEG = 1e-7
TOL_DB = 1e-7
TOL_POLE = 1e-8  # numpy.roots on a cubic with coefficients over ~20 decades
TOL_GAIN = 1e-12


def parse_number(text):
    """The few value forms the reference design uses: plain numbers, SI prefixes, dB."""
    if isinstance(text, (int, float)):
        return float(text)
    t = text.strip()
    if t.endswith("dB"):
        return 10.0 ** (float(t[:-2]) / 20.0)
    prefixes = {"p": 1e-12, "n": 1e-9, "u": 1e-6, "m": 1e-3, "k": 1e3, "M": 1e6, "G": 1e9}
    if t and t[-1] in prefixes:
        return float(t[:-1]) * prefixes[t[-1]]
    return float(t)


def loop_from_design(path):
    with open(path, encoding="utf-8") as f:
        design = json.load(f)
    blocks = [p for p in design["parts"] if p["type"] == "gain_block"]
    if len(blocks) != 1:
        raise SystemExit("expected one gain block")
    gb = blocks[0]
    if gb["in_n"] != gb["out"] or "r_in" in gb or parse_number(gb.get("r_out", 0)) != 0:
        raise SystemExit("the design is not an ideal-terminal follower")
    if gb.get("zeros_hz") or "gbw" in gb:
        raise SystemExit("zeros and gbw are not handled here")
    a0 = parse_number(gb["gain"])
    poles_rad = [2 * math.pi * parse_number(p) for p in gb["poles_hz"]]
    den = np.array([1.0])
    for w in poles_rad:
        den = np.polymul(den, [1.0 / w, 1.0])
    num = np.array([a0])
    return a0, num, den, design


def response(num, den, hz):
    _, h = signal.freqs(num, den, worN=[2 * math.pi * hz])
    return h[0]


def main():
    if len(sys.argv) != 3:
        raise SystemExit(__doc__)
    cli, design_path = sys.argv[1], sys.argv[2]
    a0, num, den, design = loop_from_design(design_path)
    out = subprocess.run([cli, "analyze", design_path, "--json"], check=True,
                         capture_output=True, text=True).stdout
    j = json.loads(out)
    failures = []

    def check(name, got, expected, tol, relative=True):
        err = abs(got - expected) / abs(expected) if relative else abs(got - expected)
        ok = err <= tol
        print(f"{'ok  ' if ok else 'FAIL'} {name}: loopsketch {got:.12g}, scipy {expected:.12g}, "
              f"{'rel' if relative else 'abs'} diff {err:.2e} (tol {tol:g})")
        if not ok:
            failures.append(name)

    start = parse_number(design["sweep"]["start"])
    stop = parse_number(design["sweep"]["stop"])

    # Crossover: |T| = 1. |T| falls monotonically for a pole-only loop.
    fc = optimize.brentq(lambda f: abs(response(num, den, f)) - 1.0, start, stop,
                         xtol=1e-300, rtol=1e-15, maxiter=500)
    pm = 180.0 + math.degrees(np.unwrap(np.angle(
        signal.freqs(num, den, worN=2 * math.pi * np.geomspace(start, fc, 2000))[1]))[-1])
    check("crossover_hz", j["margins"]["crossover_hz"], fc, TOL_FREQ)
    check("phase_margin_deg", j["margins"]["phase_margin_deg"], pm, TOL_DEG, relative=False)

    # Phase crossover: the phase sum of the poles reaches -180 degrees.
    def phase_offset(f):
        w = np.geomspace(start, f, 2000)
        return math.degrees(np.unwrap(np.angle(signal.freqs(num, den, worN=2 * math.pi * w)[1]))[-1]) + 180.0

    if len(den) - 1 >= 3:
        fpc = optimize.brentq(phase_offset, start, stop, xtol=1e-300, rtol=1e-15, maxiter=500)
        gm = -20.0 * math.log10(abs(response(num, den, fpc)))
        check("phase_crossover_hz", j["margins"]["phase_crossover_hz"], fpc, TOL_FREQ)
        check("gain_margin_db", j["margins"]["gain_margin_db"], gm, TOL_DB, relative=False)

    # Closed loop T/(1+T) = num / (den + num).
    den_cl = np.polyadd(den, num)
    poles = np.roots(den_cl)
    got = sorted((complex(p["re"], p["im"]) for p in j["closed_loop"]["poles"]),
                 key=lambda z: (round(z.real, 3), z.imag))
    want = sorted(poles, key=lambda z: (round(z.real, 3), z.imag))
    if len(got) != len(want):
        failures.append("pole count")
        print(f"FAIL pole count: loopsketch {len(got)}, numpy {len(want)}")
    else:
        for k, (g, w) in enumerate(zip(got, want)):
            err = abs(g - w) / abs(w)
            ok = err <= TOL_POLE
            print(f"{'ok  ' if ok else 'FAIL'} pole {k}: loopsketch {g:.10g}, numpy.roots {w:.10g}, "
                  f"rel diff {err:.2e} (tol {TOL_POLE:g})")
            if not ok:
                failures.append(f"pole {k}")

    dc = a0 / (1.0 + a0)
    check("dc gain", j["dc"]["exact"]["gain"], dc, TOL_GAIN)
    level = dc / math.sqrt(2.0)
    fb = optimize.brentq(lambda f: abs(response(num, den_cl, f)) - level, start, stop,
                         xtol=1e-300, rtol=1e-15, maxiter=500)
    check("bandwidth_hz", j["closed_loop"]["bandwidth_hz"], fb, TOL_FREQ)

    if failures:
        print("disagreements: " + ", ".join(failures))
        return 1
    print("scipy agrees with loopsketch on every checked quantity")
    return 0


if __name__ == "__main__":
    sys.exit(main())
