#!/usr/bin/env python3
"""Are the accuracy warnings true? A by-hand measurement, not a ctest case.

Usage: accuracy_truth.py LOOPSKETCH_CLI ANALYSIS_FUZZ_DRIVER FIRST_SEED COUNT [POINTS] [--unwarned]

Needs mpmath (any Python 3 with it; Debian's python3-mpmath or pip). For each of COUNT
generated designs from FIRST_SEED that the CLI analyzes with an accuracy warning ("accuracy
cannot be assured: ... may be off by X"), recomputes the exact gain, z_in, z_out and the
return-ratio loop gain at POINTS sweep frequencies (default 9, spread over the sweep, its
ends included) with its own modified nodal analysis in 50-digit arithmetic (mpmath.lu_solve;
the part values are the file's doubles taken exactly, the gain block its rational function,
the conventions of DESIGN.md sections 4 and 5, as tests/fuzz/scipy_cross_check.py), and
prints per design the error the warnings state beside the largest error the CLI's numbers
actually have. With --unwarned it takes the designs without such a warning instead: any
error above 1e-8 there is a silent wrong number. The CLI's numbers are read from `sweep --csv` (10 significant digits of dB
and degrees); what that rounding can explain (half a unit in the last digit, per value) is
taken off each difference before it counts.
"""

import csv
import json
import math
import os
import re
import subprocess
import sys
import tempfile

import mpmath as mp

mp.mp.dps = 50


def value(part, key, default=None):
    v = part.get(key, default)
    return None if v is None else mp.mpf(float(v))


def block_gain(gb, s):
    g = value(gb, "gain")
    poles = [mp.mpf(float(p)) for p in gb.get("poles_hz", [])]
    if "gbw" in gb:
        poles = [value(gb, "gbw") / abs(g)] + poles
    h = mp.mpc(g)
    for z in gb.get("zeros_hz", []):
        h *= 1 + s / (2 * mp.pi * mp.mpf(float(z)))
    for p in poles:
        h /= 1 + s / (2 * mp.pi * p)
    return h


class Nodal:
    """Y x = b over named unknowns (node voltages, then branch currents)."""

    def __init__(self):
        self.names = {}
        self.entries = {}
        self.rhs = {}

    def unknown(self, name):
        if name == "0":
            return None
        return self.names.setdefault(name, len(self.names))

    def add(self, r, c, v):
        if r is not None and c is not None:
            self.entries[(r, c)] = self.entries.get((r, c), 0) + v

    def conductance(self, a, b, y):
        ia, ib = self.unknown(a), self.unknown(b)
        self.add(ia, ia, y)
        self.add(ib, ib, y)
        self.add(ia, ib, -y)
        self.add(ib, ia, -y)

    def inject(self, into, out_of, i):
        for node, sign in ((into, 1), (out_of, -1)):
            k = self.unknown(node)
            if k is not None:
                self.rhs[k] = self.rhs.get(k, 0) + sign * i

    def branch(self, name, pos, neg, controls, rhs, self_term=0):
        """v(pos) - v(neg) - sum(c v(node)) - self_term * I = rhs; I flows out of pos."""
        row = self.unknown(name)
        for node, sign in ((pos, 1), (neg, -1)):
            k = self.unknown(node)
            self.add(k, row, -sign)
            self.add(row, k, sign)
        for node, c in controls:
            self.add(row, self.unknown(node), -c)
        self.add(row, row, -self_term)
        self.rhs[row] = self.rhs.get(row, 0) + rhs

    def solve(self):
        n = len(self.names)
        m = mp.matrix(n, n)
        for (r, c), v in self.entries.items():
            m[r, c] = v
        b = mp.matrix(n, 1)
        for r, v in self.rhs.items():
            b[r] = v
        return mp.lu_solve(m, b)

    def v(self, x, node):
        k = self.unknown(node) if node in self.names or node == "0" else None
        return mp.mpc(0) if k is None else x[k]


def reference(design, s, mode):
    parts = design["parts"]
    src = next(p for p in parts if p["id"] == design["input"])
    gb = next(p for p in parts if p["type"] == "gain_block")
    load = next(p for p in parts if p["type"] == "load")
    voltage = src["type"] == "vsource"
    hot, cold = (src["pos"], src["neg"]) if voltage else (src["to"], src["from"])
    n = Nodal()
    for p in parts:
        if p["type"] == "resistor":
            n.conductance(p["a"], p["b"], 1 / value(p, "value"))
        elif p["type"] == "capacitor":
            n.conductance(p["a"], p["b"], s * value(p, "value"))
        elif p["type"] == "inductor":
            n.branch("L:" + p["id"], p["a"], p["b"], [], 0, -s * value(p, "value"))
    if "r_in" in gb:
        n.conductance(gb["in_p"], gb["in_n"], 1 / value(gb, "r_in"))
    n.conductance(gb["in_p"], gb["in_n"], s * value(gb, "c_in", 0.0))
    for pin in ("in_p", "in_n"):
        n.conductance(gb[pin], "0", s * value(gb, "c_cm", 0.0))
    r_out = value(gb, "r_out", 0.0)
    e = "#e" if r_out > 0 else gb["out"]
    if r_out > 0:
        n.conductance("#e", gb["out"], 1 / r_out)
    g = block_gain(gb, s)
    if mode == "loop":
        n.branch("E", e, "0", [], 1)
    else:
        n.branch("E", e, "0", [(gb["in_p"], g), (gb["in_n"], -g)], 0)
    y_load = 1 / value(load, "r") + s * value(load, "c", 0.0)
    if mode != "z_out":
        n.conductance(load["a"], load["b"], y_load)
    if mode != "z_in":
        if voltage:
            r_series = value(src, "r_series", 0.0)
            at = "#src" if r_series > 0 else hot
            if r_series > 0:
                n.conductance("#src", hot, 1 / r_series)
            n.branch("V", at, cold, [], 1 if mode == "gain" else 0)
        else:
            if "r_parallel" in src:
                n.conductance(hot, cold, 1 / value(src, "r_parallel"))
            n.conductance(hot, cold, s * value(src, "c_parallel", 0.0))
            if mode == "gain":
                n.inject(src["to"], src["from"], 1)
    if mode == "z_in":
        n.inject(hot, cold, 1)
    if mode == "z_out":
        n.inject(load["a"], load["b"], 1)
    try:
        x = n.solve()
    except ZeroDivisionError:
        return None
    across = lambda a, b: n.v(x, a) - n.v(x, b)
    if mode == "gain":
        d = across(load["a"], load["b"])
        return d if design.get("output", "voltage") == "voltage" else d * y_load
    if mode == "z_in":
        return across(hot, cold)
    if mode == "z_out":
        return across(load["a"], load["b"])
    return -g * across(gb["in_p"], gb["in_n"])


def half_digit(x, digits=10):
    """Half a unit in the last of `digits` significant digits of x (the CSV's rounding)."""
    if x == 0 or not math.isfinite(x):
        return 0.0
    return 0.5 * 10 ** (math.floor(math.log10(abs(x))) - digits + 1)


def cli_value(row, column):
    """The CLI's value and its relative resolution in the CSV (None when absent)."""
    db, deg = row.get(column + "_db", ""), row.get(column + "_deg", "")
    try:
        mag, ph = 10 ** (float(db) / 20), math.radians(float(deg))
    except ValueError:
        return None, 0.0
    if not (math.isfinite(mag) and math.isfinite(ph)):
        return None, 0.0
    resolution = math.log(10) / 20 * half_digit(float(db)) + math.radians(half_digit(float(deg)))
    return mp.mpc(mag * math.cos(ph), mag * math.sin(ph)), resolution


def main():
    args = [a for a in sys.argv[1:] if a != "--unwarned"]
    unwarned = len(args) + 1 != len(sys.argv)
    if len(args) not in (4, 5):
        raise SystemExit(__doc__)
    cli, driver, first, count = args[0], args[1], int(args[2]), int(args[3])
    points = int(args[4]) if len(args) == 5 else 9
    stated_re = re.compile(r"accuracy cannot be assured: (.*?) at .*? may be off by ([0-9.e+-]+)")
    true_warnings = false_warnings = designs = 0
    seed = first - 1
    with tempfile.TemporaryDirectory() as tmp:
        while designs < count and seed < first + 20 * count:
            seed += 1
            text = subprocess.run([driver, "--seed", str(seed), "--count", "1", "--print"],
                                  check=True, capture_output=True, text=True).stdout
            path = os.path.join(tmp, "d.loopsketch")
            with open(path, "w", encoding="utf-8") as f:
                f.write(text)
            run = subprocess.run([cli, "analyze", path, "--json"], capture_output=True,
                                 text=True)
            if run.returncode != 0:
                continue
            stated = [stated_re.search(w.get("message", ""))
                      for w in json.loads(run.stdout).get("warnings", [])]
            stated = [(m.group(1), float(m.group(2))) for m in stated if m]
            if bool(stated) == unwarned:
                continue
            out = os.path.join(tmp, "d.csv")
            subprocess.run([cli, "sweep", path, "--csv", out], check=True, capture_output=True)
            with open(out, encoding="utf-8") as f:
                rows = list(csv.DictReader(f))
            step = max(1, (len(rows) - 1) // max(1, points - 1))
            picked = rows[::step] + ([rows[-1]] if (len(rows) - 1) % step else [])
            design = json.loads(text)
            actual = {}
            for r in picked:
                s = mp.mpc(0, 2 * mp.pi * mp.mpf(r["f_hz"]))
                for column, mode in (("gain_exact", "gain"), ("z_in", "z_in"),
                                     ("z_out", "z_out"), ("loop_gain", "loop")):
                    (got, resolution), want = cli_value(r, column), reference(design, s, mode)
                    if got is None or want is None or want == 0:
                        continue
                    # What the CSV's rounding alone cannot explain.
                    err = max(0.0, float(abs(got - want) / abs(want)) - resolution)
                    actual[column] = max(actual.get(column, 0.0), err)
            designs += 1
            worst_stated = max((e for _, e in stated), default=0.0)
            worst_actual = max(actual.values(), default=0.0)
            true = worst_actual > 1e-8
            true_warnings += true
            false_warnings += not true
            print(f"seed {seed}: stated {worst_stated:.2g} ({', '.join(q for q, _ in stated)}); "
                  f"actual " + ", ".join(f"{k} {v:.2g}" for k, v in sorted(actual.items()))
                  + ("" if true else "  <- every value within 1e-8"))
            sys.stdout.flush()
    print(f"{designs} designs with stated errors: {true_warnings} with an actual error above "
          f"1e-8 at the points compared, {false_warnings} within 1e-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
