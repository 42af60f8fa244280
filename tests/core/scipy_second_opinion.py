#!/usr/bin/python3
"""Second opinion from SciPy/NumPy (Debian python3-scipy) on the feedback engine.

Usage: scipy_second_opinion.py LOOPSKETCH_CLI DESIGN_FILE

The design must be a unity-gain follower around a gain block with no r_in and no zeros,
driving a load R (optionally with C in parallel) through its r_out. This script builds its
own nodal model: the node equation at the output,
    (v_out - A(s) (v_in - v_out)) / r_out + v_out / R + s C v_out = 0,
gives the loop gain
    T(s) = A(s) R / (R + r_out (1 + s R C)),   A(s) = a0 / prod_k (1 + s / w_k)
(T = A when r_out = 0) and the closed loop T / (1 + T). It runs `loopsketch analyze FILE
--json` (never reading anything else of ours) and checks, with SciPy's and NumPy's own
routines:
  - crossover frequency |T(j w)| = 1 and phase margin (scipy.signal.freqs + scipy.optimize.brentq),
  - gain margin and phase-crossover frequency (same),
  - closed-loop poles: roots of the characteristic polynomial den(s) + num(s) (numpy.roots),
  - closed-loop -3 dB bandwidth (scipy.signal.freqs + brentq),
  - DC gain,
  - the unit-step response in closed form from the closed-loop poles and residues,
    y(t) = G(0) + sum_i num(p_i) / (p_i den'(p_i)) e^(p_i t), sampled on 200,001 points
    from 0 to 30 time constants of the slowest pole and refined by brentq: the step's
    final value, 10-90 % rise time, overshoot and settling time to the design's band
    (settling_band, default 1 %).
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
# The step metrics: the brief of the check is 1e-3 (relative; overshoot in percentage
# points), far below what a time grid of 2000 points over the plot could give.
TOL_STEP = 1e-3


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
    if gb["in_n"] != gb["out"] or "r_in" in gb or "c_in" in gb:
        raise SystemExit("the design is not a follower without r_in")
    if gb.get("zeros_hz") or "gbw" in gb:
        raise SystemExit("zeros and gbw are not handled here")
    a0 = parse_number(gb["gain"])
    poles_rad = [2 * math.pi * parse_number(p) for p in gb["poles_hz"]]
    den = np.array([1.0])
    for w in poles_rad:
        den = np.polymul(den, [1.0 / w, 1.0])
    r_out = parse_number(gb.get("r_out", 0))
    num = np.array([a0])
    if r_out > 0:
        loads = [p for p in design["parts"] if p["type"] == "load"]
        if len(loads) != 1 or {loads[0]["a"], loads[0]["b"]} != {gb["out"], "0"}:
            raise SystemExit("expected one load from the output to ground")
        r = parse_number(loads[0]["r"])
        c = parse_number(loads[0].get("c", 0))
        # T = A R / (R + r_out (1 + s R C)): numerator a0 R, denominator den * (...)
        num = np.array([a0 * r])
        den = np.polymul(den, [r_out * r * c, r + r_out])
    return a0, num, den, design


def response(num, den, hz):
    _, h = signal.freqs(num, den, worN=[2 * math.pi * hz])
    return h[0]


def check_step(j, design, num, den_cl, poles, dc, check):
    """The step response in closed form from the poles and residues of G(s)/s."""
    band = design.get("settling_band", 0.01)
    if isinstance(band, str):
        band = float(band[:-1]) / 100.0 if band.endswith("%") else float(band)
    d_den = np.polyder(den_cl)
    residues = [np.polyval(num, p) / (p * np.polyval(d_den, p)) for p in poles]

    def y(t):
        return dc + sum((r * np.exp(p * t)).real for r, p in zip(residues, poles))

    slowest = min(-p.real for p in poles)
    t = np.linspace(0.0, 30.0 / slowest, 200001)
    v = y(t)

    def first_crossing(level):
        i = int(np.argmax(v / dc >= level))
        return optimize.brentq(lambda x: y(x) / dc - level, t[i - 1], t[i], xtol=1e-300,
                               rtol=1e-15)

    rise = first_crossing(0.9) - first_crossing(0.1)
    outside = np.nonzero(np.abs(v / dc - 1.0) > band)[0]
    i = outside[-1]
    settling = optimize.brentq(lambda x: abs(y(x) / dc - 1.0) - band, t[i], t[i + 1],
                               xtol=1e-300, rtol=1e-15)
    k = int(np.argmax(v / dc))
    peak = v[k] / dc
    if 0 < k < len(t) - 1:
        res = optimize.minimize_scalar(lambda x: -y(x) / dc, bracket=(t[k - 1], t[k], t[k + 1]),
                                       tol=1e-14)
        peak = max(peak, -res.fun)
    overshoot = max(0.0, (peak - 1.0) * 100.0)
    step = j["closed_loop"]["step"]
    check("step final value", step["final_value"], dc, TOL_STEP)
    check("step final value at 1e-9", step["final_value"], dc, 1e-9)
    check("step rise_time_s", step["rise_time_s"], rise, TOL_STEP)
    check("step settling_time_s", step["settling_time_s"], settling, TOL_STEP)
    check("step overshoot_pct", step["overshoot_pct"], overshoot, TOL_STEP, relative=False)


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

    dc = num[-1] / (den[-1] + num[-1])
    check("dc gain", j["dc"]["exact"]["gain"], dc, TOL_GAIN)
    level = dc / math.sqrt(2.0)
    fb = optimize.brentq(lambda f: abs(response(num, den_cl, f)) - level, start, stop,
                         xtol=1e-300, rtol=1e-15, maxiter=500)
    check("bandwidth_hz", j["closed_loop"]["bandwidth_hz"], fb, TOL_FREQ)

    check_step(j, design, num, den_cl, poles, dc, check)

    if failures:
        print("disagreements: " + ", ".join(failures))
        return 1
    print("scipy agrees with loopsketch on every checked quantity")
    return 0


if __name__ == "__main__":
    sys.exit(main())
