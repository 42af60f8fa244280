#!/usr/bin/python3
"""Second opinion from SciPy/NumPy (Debian python3-scipy) on the feedback engine.

Usage: scipy_second_opinion.py LOOPSKETCH_CLI DESIGN_FILE
       scipy_second_opinion.py --noise LOOPSKETCH_CLI DESIGN_FILE   (see noise_main below)

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
    for unit in ("Hz", "A", "F"):
        if t.endswith(unit) and len(t) > len(unit):
            t = t[: -len(unit)].strip()
            break
    prefixes = {"f": 1e-15, "p": 1e-12, "n": 1e-9, "u": 1e-6, "\u00b5": 1e-6, "m": 1e-3,
                "k": 1e3, "M": 1e6, "G": 1e9, "T": 1e12}
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


# ----- noise --------------------------------------------------------------------------------
#
# An independent nodal model of the design's noise, written from the part definitions in
# core/README.md section 6.2 and never reading Loopsketch's noise output: complex modified nodal
# analysis per frequency (numpy.linalg.solve), one forward solve per noise source (not the
# adjoint), the gain block as a voltage-controlled voltage source whose controlling voltage is
# v(in_p) + e_n - v(in_n) (e_n in series with the non-inverting input), r_in and c_in between
# the pins and c_cm from each pin to ground, r_in and r_out noiseless. Sources: 4kT/R of every
# resistor, of the source's own resistance and of the load; 2q|i_dc| of a current source;
# e_n and i_n with their 1/f corners (density^2 = white^2 (1 + f_c / f)). Constants: CODATA
# 2018 (scipy.constants), exact in the 2019 SI.

from scipy import constants, integrate  # noqa: E402


def temperature_of(design):
    t = design.get("temperature")
    if t is None:
        return 298.15
    if isinstance(t, (int, float)):
        return float(t)
    t = t.strip()
    if t.endswith("°C") or t.endswith("C"):
        return float(t.rstrip("°C ").strip()) + 273.15
    return float(t.rstrip("K ").strip())


class NoiseNodal:
    def __init__(self, design):
        if design["output"] != "voltage":
            raise SystemExit("the noise second opinion handles voltage outputs")
        self.temp = temperature_of(design)
        four_kt = 4.0 * constants.k * self.temp
        self.nodes = {}
        self.twoterm = []   # (kind, a, b, value)
        self.sources = []   # (name, kind, data, white psd, corner)
        self.vsources = []  # (pos, neg)
        self.gb = None
        src_id = design["input"]

        def node(name):
            if name == "0":
                return -1
            return self.nodes.setdefault(name, len(self.nodes))

        for p in design["parts"]:
            t = p["type"]
            num = lambda key, default=None: parse_number(p[key]) if key in p else default
            if t in ("resistor", "capacitor", "inductor"):
                a, b, v = node(p["a"]), node(p["b"]), parse_number(p["value"])
                self.twoterm.append((t, a, b, v))
                if t == "resistor":
                    self.sources.append((p["id"], "current", (a, b), four_kt / v, 0.0))
            elif t == "isource" and p["id"] == src_id:
                a, b = node(p["to"]), node(p["from"])
                self.signal = ("current", (a, b))
                if "r_parallel" in p:
                    rp = num("r_parallel")
                    self.twoterm.append(("resistor", a, b, rp))
                    self.sources.append((p["id"] + ":r_parallel", "current", (a, b),
                                         four_kt / rp, 0.0))
                if num("c_parallel", 0.0) > 0:
                    self.twoterm.append(("capacitor", a, b, num("c_parallel")))
                if num("i_dc", 0.0) != 0:
                    self.sources.append((p["id"] + ":shot", "current", (a, b),
                                         2.0 * constants.e * abs(num("i_dc")), 0.0))
            elif t == "vsource" and p["id"] == src_id:
                self.signal = ("voltage", len(self.vsources))
                rs = num("r_series", 0.0)
                if rs > 0:
                    inner = node(p["id"] + ":int")
                    self.vsources.append((inner, node(p["neg"])))
                    self.twoterm.append(("resistor", inner, node(p["pos"]), rs))
                    self.sources.append((p["id"] + ":r_series", "current",
                                         (inner, node(p["pos"])), four_kt / rs, 0.0))
                else:
                    self.vsources.append((node(p["pos"]), node(p["neg"])))
            elif t == "gain_block":
                a0 = parse_number(p["gain"])
                poles = ([num("gbw") / abs(a0)] if "gbw" in p else []) + \
                    [parse_number(x) for x in p.get("poles_hz", [])]
                zeros = [parse_number(x) for x in p.get("zeros_hz", [])]
                ip, inn, out = node(p["in_p"]), node(p["in_n"]), node(p["out"])
                rout = num("r_out", 0.0)
                e = node(p["id"] + ":e") if rout > 0 else out
                if rout > 0:
                    self.twoterm.append(("resistor", e, out, rout))  # noiseless
                if "r_in" in p:
                    self.twoterm.append(("resistor", ip, inn, num("r_in")))  # noiseless
                if num("c_in", 0.0) > 0:
                    self.twoterm.append(("capacitor", ip, inn, num("c_in")))
                for pin in (ip, inn):
                    if num("c_cm", 0.0) > 0 and pin >= 0:
                        self.twoterm.append(("capacitor", pin, -1, num("c_cm")))
                self.gb = (a0, poles, zeros, ip, inn, e)
                if num("en", 0.0) > 0:
                    self.sources.append((p["id"] + ":en", "en", None, num("en") ** 2,
                                         num("en_corner_hz", 0.0)))
                if num("in", 0.0) > 0:
                    for term, pin in (("in_p", ip), ("in_n", inn)):
                        if pin >= 0:
                            self.sources.append((p["id"] + ":in(" + term + ")", "current",
                                                 (pin, -1), num("in") ** 2,
                                                 num("in_corner_hz", 0.0)))
            elif t == "load":
                a, b, r = node(p["a"]), node(p["b"]), parse_number(p["r"])
                self.twoterm.append(("resistor", a, b, r))
                self.sources.append((p["id"], "current", (a, b), four_kt / r, 0.0))
                if "c" in p and parse_number(p["c"]) > 0:
                    self.twoterm.append(("capacitor", a, b, parse_number(p["c"])))
                self.out = (a, b)

    def psd(self, f):
        """Output power density of every source at frequency f (Hz), V^2/Hz."""
        return self._solve(f)[0]

    def _solve(self, f):
        """Every source's output power density at f (Hz) and the closed-loop gain."""
        s = 2j * math.pi * f
        n = len(self.nodes)
        size = n + len(self.vsources) + 1
        y = np.zeros((size, size), dtype=complex)

        def stamp(a, b, g):
            if a >= 0:
                y[a, a] += g
            if b >= 0:
                y[b, b] += g
            if a >= 0 and b >= 0:
                y[a, b] -= g
                y[b, a] -= g

        for kind, a, b, v in self.twoterm:
            stamp(a, b, 1.0 / v if kind == "resistor" else s * v if kind == "capacitor"
                  else 1.0 / (s * v))
        for k, (pos, neg) in enumerate(self.vsources):
            row = n + k
            for node_, sign in ((pos, 1.0), (neg, -1.0)):
                if node_ >= 0:
                    y[node_, row] += sign
                    y[row, node_] += sign
        a0, poles, zeros, ip, inn, e = self.gb
        gain = a0 * np.prod([1 + s / (2 * math.pi * z) for z in zeros]) / \
            np.prod([1 + s / (2 * math.pi * p) for p in poles])
        row = size - 1
        y[e, row] += 1.0        # the source's current leaves the KCL of node e
        y[row, e] += 1.0        # v(e) - a (v(in_p) - v(in_n)) = a e_n
        if ip >= 0:
            y[row, ip] -= gain
        if inn >= 0:
            y[row, inn] += gain
        rhs = np.zeros((size, len(self.sources) + 1), dtype=complex)
        kind, where = self.signal
        if kind == "current":
            if where[0] >= 0:
                rhs[where[0], -1] += 1.0
            if where[1] >= 0:
                rhs[where[1], -1] -= 1.0
        else:
            rhs[n + where, -1] = 1.0
        weights = np.zeros(len(self.sources))
        for k, (name, kind, where, white, corner) in enumerate(self.sources):
            if kind == "en":
                rhs[row, k] = gain
            else:
                a, b = where
                if a >= 0:
                    rhs[a, k] += 1.0
                if b >= 0:
                    rhs[b, k] -= 1.0
            weights[k] = white * (1.0 + corner / f)
        x = np.linalg.solve(y, rhs)
        a, b = self.out
        vout = (x[a] if a >= 0 else 0.0) - (x[b] if b >= 0 else 0.0)
        return np.abs(vout[:-1]) ** 2 * weights, vout[-1]

    def gain(self, f):
        """Closed-loop gain at f (Hz): output per unit source value, from the script's own
        solve with the source driven (a unit current into `to`, or a unit voltage)."""
        return self._solve(f)[1]

    def total(self, f):
        return float(np.sum(self.psd(f)))

    def integral(self, low, high):
        """Power over [low, high] Hz: scipy.integrate.quad in u = ln f of psd(f) f."""
        value, _ = integrate.quad(lambda u: self.total(math.exp(u)) * math.exp(u),
                                  math.log(low), math.log(high), limit=2000,
                                  epsabs=0.0, epsrel=1e-10)
        return value


def run_cli(cli, design, workdir, name):
    import os
    path = os.path.join(workdir, name + ".loopsketch")
    with open(path, "w", encoding="utf-8") as f:
        json.dump(design, f)
    csv_path = os.path.join(workdir, name + ".csv")
    subprocess.run([cli, "sweep", path, "--csv", csv_path], check=True, capture_output=True)
    analysis = json.loads(subprocess.run([cli, "analyze", path, "--json"], check=True,
                                         capture_output=True, text=True).stdout)
    with open(csv_path, encoding="utf-8") as f:
        rows = [line.strip().split(",") for line in f if line.strip()]
    header = rows[0]
    col = next(i for i, h in enumerate(header) if h.startswith("output_noise_"))
    grid = [(float(r[0]), float(r[col])) for r in rows[1:]]
    return analysis, grid


# Tolerances: both sides solve the same linear circuit in double precision, so the densities
# agree far below 1e-6 (the issue asks 1 %; the CSV carries 10 digits); the rms figures to the
# quadratures' accuracy (Loopsketch's adaptive Gauss-Kronrod aims at 1e-6 of the power).
TOL_DENSITY = 1e-6
TOL_RMS = 2e-5


def noise_main(cli, design_path):
    import copy
    import tempfile
    with open(design_path, encoding="utf-8") as f:
        base = json.load(f)
    failures = []

    def check(name, got, expected, tol):
        err = abs(got - expected) / abs(expected)
        ok = err <= tol
        print(f"{'ok  ' if ok else 'FAIL'} {name}: loopsketch {got:.10g}, scipy {expected:.10g}, "
              f"rel diff {err:.2e} (tol {tol:g})")
        if not ok:
            failures.append(name)

    gb = next(p for p in base["parts"] if p["type"] == "gain_block")
    variants = [("c_in " + gb.get("c_in", "0"), None), ("c_in 0", "0")]
    with tempfile.TemporaryDirectory() as work:
        for label, c_in in variants:
            design = copy.deepcopy(base)
            if c_in is not None:
                next(p for p in design["parts"] if p["type"] == "gain_block")["c_in"] = c_in
            model = NoiseNodal(design)
            analysis, grid = run_cli(cli, design, work, "variant")
            # densities at the sweep rows nearest these frequencies, at the row's frequency
            for want in (1.0, 1e3, 1e6, 1e8):
                f, density = min(grid, key=lambda r: abs(math.log(r[0] / want)))
                check(f"{label}: output density at {f:.6g} Hz", density,
                      math.sqrt(model.total(f)), TOL_DENSITY)
            noise = analysis["noise"]
            if "noise_band" in design:
                low, high = (parse_number(v) for v in design["noise_band"])
                if noise["band"]["kind"] != "noise_band" or \
                        abs(noise["band"]["low_hz"] - low) > 1e-12 * low or \
                        abs(noise["band"]["high_hz"] - high) > 1e-12 * high:
                    failures.append(f"{label}: band")
                    print(f"FAIL {label}: band {noise['band']} is not the design's noise_band")
                check(f"{label}: output rms over the noise_band", noise["output_rms"],
                      math.sqrt(model.integral(low, high)), TOL_RMS)
            # spot noise at the design's noise_spot_hz (issue 18), and the SNR of the
            # full-scale sine against the script's own rms and |gain| at the band's low end
            spot = noise["spot"]
            check(f"{label}: spot output density at {spot['at_hz']:.6g} Hz",
                  spot["output_density"], math.sqrt(model.total(spot["at_hz"])), TOL_DENSITY)
            if "signal_level" in design and "noise_band" in design:
                level = parse_number(design["signal_level"])
                gain_low = abs(model.gain(noise["input_rms_gain_at_hz"]))
                rms = math.sqrt(model.integral(low, high))
                check(f"{label}: SNR (dB)", noise["snr_db"],
                      20 * math.log10(level / math.sqrt(2) * gain_low / rms), 1e-5)
        # the default band: Loopsketch's converged band, checked on the same band, and the
        # power above it (to 10 THz) under 0.1 % of the whole
        design = copy.deepcopy(base)
        design.pop("noise_band", None)
        model = NoiseNodal(design)
        analysis, _ = run_cli(cli, design, work, "default-band")
        noise = analysis["noise"]
        low, high = noise["band"]["low_hz"], noise["band"]["high_hz"]
        print(f"     default band: {noise['band']['kind']}, {low:g} Hz to {high:g} Hz")
        if noise["band"]["kind"] != "converged":
            failures.append("default band kind")
        inside = model.integral(low, high)
        check("default band: output rms", noise["output_rms"], math.sqrt(inside), TOL_RMS)
        above = model.integral(high, 1e13)
        share = above / (inside + above)
        ok = share < 1e-3
        print(f"{'ok  ' if ok else 'FAIL'} default band: power above {high:g} Hz is "
              f"{100 * share:.3g} % of the whole (limit 0.1 %)")
        if not ok:
            failures.append("default band convergence")
    if failures:
        print("disagreements: " + ", ".join(failures))
        return 1
    print("scipy's nodal noise model agrees with loopsketch on every checked quantity")
    return 0


if __name__ == "__main__":
    if len(sys.argv) == 4 and sys.argv[1] == "--noise":
        sys.exit(noise_main(sys.argv[2], sys.argv[3]))
    sys.exit(main())
