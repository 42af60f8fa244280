#!/usr/bin/python3
"""Second opinion from NumPy/SciPy (Debian python3-scipy) on generated designs.

Usage: scipy_cross_check.py LOOPSKETCH_CLI ANALYSIS_FUZZ_DRIVER COUNT [FIRST_SEED]

Takes the first COUNT seeds (from FIRST_SEED, default 1) whose generated design (`analysis_fuzz_driver --print`)
the CLI analyzes, runs `loopsketch sweep FILE --csv` on each, and recomputes the exact gain,
z_in, z_out and the return-ratio loop gain T at every sweep frequency with its own modified
nodal analysis: scipy.linalg.lu_factor/lu_solve on the complex matrix at s = j 2 pi f, the
gain block as a voltage source of gain(s) (v(in_p) - v(in_n)) evaluated as the rational
function itself (core realises its poles as internal states instead), c_in between the
inputs and c_cm from each input to ground, following the conventions of DESIGN.md
sections 4 and 5. The model (assemble()) is generic over the number type: mpmath_reference.py
builds the same one in 50 digits. A design the CLI refuses (exit 2) is skipped; any other
failure fails the check.

Tolerances: 1e-5 dB in magnitude and 1e-4 degree in phase (the CSV carries 10 significant
digits, about 1e-7 dB), at frequencies where the MNA matrix, its rows and columns scaled to
unit maximum, gives the value read off (a node voltage difference) to a relative error of
eps times cond * max|scaled solution| / |value| (normwise error bound of a backward-stable
solve, carried to the one value); that number must stay below 1e8 (this side good to ~2e-8).
The other points (round-off residues of a true zero, nearly singular matrices) are counted
and reported, not compared.
"""

import csv
import math
import os
import re
import subprocess
import sys
import tempfile
import json

import numpy as np
from scipy import linalg

TOL_DB = 1e-5
TOL_DEG = 1e-4
MAX_COND = 1e8


class FloatArithmetic:
    """The number type the nodal model is built in: here double-precision complex in NumPy
    arrays (mpmath_reference.py passes its 50-digit one)."""

    pi = math.pi

    @staticmethod
    def number(x):
        return float(x)

    @staticmethod
    def matrix(n):
        return np.zeros((n, n), dtype=complex)

    @staticmethod
    def vector(n):
        return np.zeros(n, dtype=complex)


class Mna:
    """Nodes and extra branch unknowns; Y x = b."""

    def __init__(self, nodes, extra, arithmetic=FloatArithmetic):
        self.index = {n: i for i, n in enumerate(nodes)}
        self.n = len(nodes) + extra
        self.Y = arithmetic.matrix(self.n)
        self.b = arithmetic.vector(self.n)

    def idx(self, node):
        return None if node == "0" else self.index[node]

    def admittance(self, a, b, y):
        ia, ib = self.idx(a), self.idx(b)
        if ia is not None:
            self.Y[ia, ia] += y
        if ib is not None:
            self.Y[ib, ib] += y
        if ia is not None and ib is not None:
            self.Y[ia, ib] -= y
            self.Y[ib, ia] -= y

    def current(self, into, out_of, value):
        if self.idx(into) is not None:
            self.b[self.idx(into)] += value
        if self.idx(out_of) is not None:
            self.b[self.idx(out_of)] -= value

    def voltage_source(self, row, pos, neg, coeffs, value):
        """Branch `row`: v(pos) - v(neg) - sum(c v(node)) = value; its current flows out of
        pos into the circuit."""
        for node, sign in ((pos, 1.0), (neg, -1.0)):
            i = self.idx(node)
            if i is not None:
                self.Y[i, row] -= sign  # current leaves pos through the source
                self.Y[row, i] += sign
        for node, c in coeffs:
            i = self.idx(node)
            if i is not None:
                self.Y[row, i] -= c
        self.b[row] += value

    def solve(self):
        d = np.max(np.abs(self.Y), axis=1)
        d[d == 0] = 1.0
        rows = self.Y / d[:, None]
        c = np.max(np.abs(rows), axis=0)
        c[c == 0] = 1.0
        scaled = rows / c[None, :]
        cond = np.linalg.cond(scaled)
        if not np.isfinite(cond) or cond > 1e15:
            return np.full(self.n, np.nan), math.inf
        y = linalg.lu_solve(linalg.lu_factor(scaled), self.b / d)
        self.ymax = np.max(np.abs(y))
        self.c = c
        return y / c, cond

    def v(self, x, node):
        i = self.idx(node)
        return 0.0 if i is None else x[i]


# Value text as core/README.md section 3 describes it ("10k", "4k7", "2.2 pF", "110dB", "1%"),
# read to the same double: the digits exactly, then the power of ten, then dB as 10^(x/20).
PREFIXES = {"f": -15, "p": -12, "n": -9, "u": -6, "\u00b5": -6, "m": -3, "k": 3, "K": 3,
            "M": 6, "G": 9, "T": 12}
UNITS = r"(?:\u03a9|\u2126|ohms?|Ohms?|F|H|Hz|V/V|V/A|A/V|A/A|V|A|s)"
PLAIN = re.compile(r"([+-]?)(\d*)(?:\.(\d*))?(?:[eE]([+-]?\d+))?\s*([fpnu\u00b5mkKMGT]?)\s*"
                   r"(dB|%|" + UNITS + r")?")
RKM = re.compile(r"([+-]?)(\d*)([Rfpnu\u00b5mkKMGT])(\d+)\s*(" + UNITS + r")?")


def parse_value(value):
    if not isinstance(value, str):
        return float(value)
    text = value.strip()
    m = RKM.fullmatch(text)
    if m:
        exponent = 0 if m.group(3) == "R" else PREFIXES[m.group(3)]
        return float(f"{m.group(1)}{m.group(2) or 0}.{m.group(4)}e{exponent}")
    m = PLAIN.fullmatch(text)
    if not m or not (m.group(2) or m.group(3)):
        raise ValueError(f"value text {value!r} not understood")
    sign, whole, fraction, exponent, prefix, unit = m.groups()
    exponent = int(exponent or 0) + PREFIXES.get(prefix, 0) - (2 if unit == "%" else 0)
    number = float(f"{sign}{whole or 0}.{fraction or 0}e{exponent}")
    return math.pow(10.0, number / 20.0) if unit == "dB" else number


def num(part, key, default=None):
    value = part.get(key, default)
    if value is None:
        return None
    return parse_value(value)


def gain_of(gb, s, arithmetic=FloatArithmetic):
    """gain(s) as the rational function itself; the gbw pole at gbw/|gain| in double, as the
    design file's reader computes it."""
    number = arithmetic.number
    g = num(gb, "gain")
    poles = [parse_value(p) for p in gb.get("poles_hz", [])]
    if "gbw" in gb:
        poles = [num(gb, "gbw") / abs(g)] + poles
    h = number(g)
    two_pi = 2 * arithmetic.pi
    for z in gb.get("zeros_hz", []):
        h *= 1 + s / (two_pi * number(parse_value(z)))
    for p in poles:
        h /= 1 + s / (two_pi * number(p))
    return h


def smallest_resistance(design):
    """The smallest positive resistance any part gives (the resistance-valued fields of
    core/README.md section 6.2), as core's accuracy check takes it (loopaccuracy.cpp); 0
    when there is none."""
    fields = {"resistor": ("value",), "load": ("r",), "gain_block": ("r_in", "r_out"),
              "vsource": ("r_series",), "isource": ("r_parallel",)}
    values = [num(p, f) for p in design["parts"] for f in fields.get(p["type"], ()) if f in p]
    values = [r for r in values if 0 < r < math.inf]
    return min(values) if values else 0.0


def sweep_frequencies(design):
    """The sweep grid as Sweep::frequencies() (core/src/design/design.cpp) computes it, the
    same double operations in the same order, so that each point is the CLI's to the bit
    (the CSV prints f_hz to 10 digits only)."""
    sweep = design["sweep"]
    f0, f1 = parse_value(sweep["start"]), parse_value(sweep["stop"])
    per_decade = int(sweep["points_per_decade"])
    decades = math.log10(f1 / f0)
    intervals = math.floor(decades * per_decade + 0.5)  # std::lround of a positive number
    if intervals <= 0:
        return [f0]
    log_start = math.log10(f0)
    step = decades / intervals
    f = [math.pow(10.0, log_start + step * i) for i in range(intervals + 1)]
    f[0], f[-1] = f0, f1
    return f


def assemble(design, s, mode, arithmetic=FloatArithmetic):
    """The nodal system of one mode at s, in the given number type. mode: 'gain' (source
    on), 'z_in' (source removed, 1 A test at its terminals), 'z_out' (source zeroed, load
    removed, 1 A test into load a), 'loop' (source zeroed, controlled source replaced by a
    unit test source). Returns (mna, a, b, factor): the quantity is factor (v(a) - v(b))."""
    number = arithmetic.number

    def value(part, key, default=None):
        v = num(part, key, default)
        return None if v is None else number(v)

    parts = design["parts"]
    src = next(p for p in parts if p["id"] == design["input"])
    gb = next(p for p in parts if p["type"] == "gain_block")
    load = next(p for p in parts if p["type"] == "load")
    voltage = src["type"] == "vsource"
    hot, cold = (src["pos"], src["neg"]) if voltage else (src["to"], src["from"])
    nodes = set()
    for p in parts:
        for key in ("a", "b", "pos", "neg", "to", "from", "in_p", "in_n", "out"):
            if key in p and p[key] != "0":
                nodes.add(p[key])
    r_series = num(src, "r_series", 0.0) if voltage else 0.0
    if voltage and r_series > 0:
        nodes.add("#src")
    r_out = num(gb, "r_out", 0.0)
    if r_out > 0:
        nodes.add("#e")
    inductors = [p for p in parts if p["type"] == "inductor"]
    nodes = sorted(nodes)
    extra = len(inductors) + 1 + (1 if voltage and mode in ("gain", "z_out", "loop") else 0)
    m = Mna(nodes, extra, arithmetic)
    row = len(nodes)
    for p in parts:
        if p["type"] == "resistor":
            m.admittance(p["a"], p["b"], 1 / value(p, "value"))
        elif p["type"] == "capacitor":
            m.admittance(p["a"], p["b"], s * value(p, "value"))
    for p in inductors:  # branch current I from b to a through it: v(a) - v(b) + sL I = 0
        m.voltage_source(row, p["a"], p["b"], [], 0.0)
        m.Y[row, row] = s * value(p, "value")
        row += 1
    if "r_in" in gb:
        m.admittance(gb["in_p"], gb["in_n"], 1 / value(gb, "r_in"))
    m.admittance(gb["in_p"], gb["in_n"], s * value(gb, "c_in", 0.0))
    for pin in ("in_p", "in_n"):  # c_cm from each input pin to ground (DESIGN.md section 4)
        m.admittance(gb[pin], "0", s * value(gb, "c_cm", 0.0))
    e_node = "#e" if r_out > 0 else gb["out"]
    if r_out > 0:
        m.admittance("#e", gb["out"], 1 / number(r_out))
    g = gain_of(gb, s, arithmetic)
    if mode == "loop":
        m.voltage_source(row, e_node, "0", [], 1.0)
    else:
        m.voltage_source(row, e_node, "0", [(gb["in_p"], g), (gb["in_n"], -g)], 0.0)
    row += 1
    load_y = 1 / value(load, "r") + s * value(load, "c", 0.0)
    if mode != "z_out":
        m.admittance(load["a"], load["b"], load_y)
    # The source: its own impedance stays unless it is removed (z_in).
    if voltage:
        if mode != "z_in":
            at = "#src" if r_series > 0 else hot
            if r_series > 0:
                m.admittance("#src", hot, 1 / number(r_series))
            m.voltage_source(row, at, cold, [], 1.0 if mode == "gain" else 0.0)
    else:
        if mode != "z_in":
            if "r_parallel" in src:
                m.admittance(hot, cold, 1 / value(src, "r_parallel"))
            m.admittance(hot, cold, s * value(src, "c_parallel", 0.0))
            if mode == "gain":
                m.current(src["to"], src["from"], 1.0)
    if mode == "z_in":
        m.current(hot, cold, 1.0)
    if mode == "z_out":
        m.current(load["a"], load["b"], 1.0)
    if mode == "gain":
        current = design.get("output", "voltage") != "voltage"
        return m, load["a"], load["b"], (load_y if current else 1)
    if mode == "z_in":
        return m, hot, cold, 1
    if mode == "z_out":
        return m, load["a"], load["b"], 1
    return m, gb["in_p"], gb["in_n"], -g


def solve(design, s, mode):
    """The quantity of `mode` (see assemble()) at s and the condition it is known to."""
    m, a, b, factor = assemble(design, s, mode)
    x, cond = m.solve()

    # v(a) - v(b) and the condition it is known to: a backward-stable solve of the scaled
    # system y = c x errs by about eps cond max|y| in each y, so by eps cond max|y| / c in
    # v(a) and v(b); relative to |v(a) - v(b)| that is eps times the returned number.
    d = m.v(x, a) - m.v(x, b)
    if not math.isfinite(cond) or not abs(d) > 0:
        return factor * d, math.inf
    scales = [m.c[m.idx(n)] for n in (a, b) if m.idx(n) is not None]
    return factor * d, cond * m.ymax / (min(scales) * abs(d))


def main():
    if len(sys.argv) not in (4, 5):
        raise SystemExit(__doc__)
    cli, driver, count = sys.argv[1], sys.argv[2], int(sys.argv[3])
    first = int(sys.argv[4]) if len(sys.argv) == 5 else 1
    failures = compared = skipped = designs = 0
    seed = first - 1
    with tempfile.TemporaryDirectory() as tmp:
        while designs < count:
            seed += 1
            if seed - first > 10 * count + 100:
                print(f"FAIL: fewer than {count} analyzable designs among the seeds tried")
                return 1
            text = subprocess.run([driver, "--seed", str(seed), "--count", "1", "--print"],
                                  check=True, capture_output=True, text=True).stdout
            path = os.path.join(tmp, f"seed-{seed}.loopsketch")
            out = os.path.join(tmp, f"seed-{seed}.csv")
            with open(path, "w", encoding="utf-8") as f:
                f.write(text)
            run = subprocess.run([cli, "sweep", path, "--csv", out], capture_output=True,
                                 text=True)
            if run.returncode == 2:
                continue
            designs += 1
            if run.returncode != 0:
                print(f"FAIL seed {seed}: loopsketch sweep exited {run.returncode}: "
                      f"{run.stderr.strip()}")
                failures += 1
                continue
            design = json.loads(text)
            with open(out, encoding="utf-8") as f:
                rows = list(csv.DictReader(f))
            worst = 0.0
            for r in rows:
                s = 2j * math.pi * float(r["f_hz"])
                for column, mode in (("gain_exact", "gain"), ("z_in", "z_in"),
                                     ("z_out", "z_out"), ("loop_gain", "loop")):
                    cli_db, cli_deg = r[column + "_db"], r[column + "_deg"]
                    ref, cond = solve(design, s, mode)
                    if cond > MAX_COND or not np.isfinite(ref) or abs(ref) == 0:
                        skipped += 1
                        continue
                    if cli_db in ("", "nan", "-nan") or cli_deg in ("", "nan", "-nan"):
                        print(f"FAIL seed {seed} {column} at {r['f_hz']} Hz: CLI gives no "
                              f"value, reference {ref:.6g}")
                        failures += 1
                        continue
                    compared += 1
                    ddb = abs(float(cli_db) - 20 * math.log10(abs(ref)))
                    ddeg = abs((float(cli_deg) - math.degrees(np.angle(ref)) + 180) % 360 - 180)
                    worst = max(worst, ddb)
                    if ddb > TOL_DB or ddeg > TOL_DEG:
                        failures += 1
                        if failures <= 20:
                            print(f"FAIL seed {seed} {column} at {r['f_hz']} Hz: CLI "
                                  f"{cli_db} dB {cli_deg} deg, reference "
                                  f"{20 * math.log10(abs(ref)):.10g} dB "
                                  f"{math.degrees(np.angle(ref)):.10g} deg (cond {cond:.2g})")
            print(f"seed {seed}: {len(rows)} frequencies, worst |dB difference| {worst:.2e}")
    print(f"{designs} designs, {compared} values compared, {skipped} not compared "
          f"(condition above {MAX_COND:g} or no finite value), {failures} failures")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
