#!/usr/bin/python3
"""A 50-digit nodal reference (Debian python3-mpmath) for the CLI's sweep on generated designs.

Usage: mpmath_reference.py CLI DRIVER FIRST_SEED COUNT [--unwarned-only] [--save DIR]
       mpmath_reference.py CLI --file F [--file F ...] [--unwarned-only] [--save DIR]

CLI is `loopsketch`, DRIVER `analysis_fuzz_driver` (its `--seed S --count 1 --print` gives the
design of seed S). Seeds FIRST_SEED .. FIRST_SEED + COUNT - 1 are checked; a design the CLI
refuses (exit 2) is counted and skipped.

Method: modified nodal analysis (common practice; no source cited), built by
scipy_cross_check.py's own assemble() (its conventions: DESIGN.md sections 4 and 5, the gain
block as a voltage source of gain(s) (v(in_p) - v(in_n)) with gain(s) the rational function
itself) in mpmath's numbers at mp.dps = 50, and solved with mpmath.lu_solve (Gaussian
elimination with row pivoting, in the 50 digits plus mpmath's 10 guard digits) on the complex
matrix at s = j 2 pi f. Nothing is read from the CLI but the values it prints.

Compared, at every sweep point of `loopsketch sweep FILE --csv`: the exact closed-loop gain,
z_in, z_out and the return-ratio loop gain T (columns gain_exact, z_in, z_out, loop_gain), as
the complex relative error |cli - ref| / |ref|. The CSV prints dB and degrees to 10
significant digits (core/src/base/jsonnumber.h), which alone leaves up to about 6e-9 of
relative error: each value's own rounding allowance (half a unit of the last digit printed,
in magnitude and phase) is computed and an error counts against the 1e-8 promise only by
what it exceeds that allowance. The sweep frequencies are recomputed bit for bit as
Sweep::frequencies() does (the CSV's f_hz has 10 digits too; each recomputed one is checked
to print as the CSV's). Full precision comes from `analyze --json`: dc.exact gain, z_in,
z_out and dc.return_ratio.loop_gain at s = 0, and margins.loop_gain_near_crossover (T at
up to six frequencies), all printed with 17 digits; they are compared without allowance.

Points where the reference is an exact 0 (a gain or T that vanishes for every part value)
are counted, not compared. Impedance points whose true value is below 1e-6 of the design's smallest resistance (the
level below which core's accuracy check counts an impedance as zero,
core/src/feedback/loopaccuracy.cpp) are not errors; they are counted. A value is "warned"
when analyze --json `warnings` holds an accuracy warning naming its quantity ("the gain",
"z_in", "z_out", "the loop gain"), "range-warned" when the design carries only warnings of
values outside what real parts offer; both are reported apart from the unwarned values.
Each reported error above 1e-8 is solved again at 80 digits, and the reference is trusted
only where both agree to 1e-20; where they do not, the true value is an exact 0 (or an
infinite impedance) that both precisions only round, and the point is listed as
"unresolved", not as a miss.

Exit status: 1 when an unwarned value misses 1e-8 beyond its allowance, the CLI gives no
value where the reference has one, or the CLI fails (other than exit 2); 0 otherwise.
"""

import argparse
import csv
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile

import mpmath
from mpmath import mp

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import scipy_cross_check as nodal  # noqa: E402  (the shared nodal model)

PROMISE = 1e-8  # the product's relative accuracy for every unwarned value
DIGITS = 50
CONFIRM_DIGITS = 80
QUANTITIES = (("gain_exact", "gain", "the gain"), ("z_in", "z_in", "z_in"),
              ("z_out", "z_out", "z_out"), ("loop_gain", "loop", "the loop gain"))


class MpArithmetic:
    """mpmath numbers for scipy_cross_check.assemble(): each double of the design taken
    exactly, every operation after it in mp.dps digits."""

    pi = property(lambda self: mp.pi)

    @staticmethod
    def number(x):
        return mp.mpf(x)

    @staticmethod
    def matrix(n):
        return mp.matrix(n, n)

    @staticmethod
    def vector(n):
        return mp.matrix(n, 1)


MP = MpArithmetic()


def reference(design, f_hz, mode, digits=DIGITS):
    """The quantity of `mode` at f_hz (a double, taken exactly); None where the matrix is
    singular to mpmath."""
    with mp.workdps(digits):
        s = mp.mpc(0, 2) * mp.pi * mp.mpf(f_hz)
        m, a, b, factor = nodal.assemble(design, s, mode, MP)
        try:
            x = mp.lu_solve(m.Y, m.b)
        except (ZeroDivisionError, TypeError):
            # TypeError: mpmath's LU_decomp finds no pivot in a column of exact zeros (its
            # pivot index stays None), a matrix singular by structure.
            return None
        return mp.mpc(factor * (m.v(x, a) - m.v(x, b)))


def confirmed(design, f_hz, mode, ref):
    """Whether the reference agrees with itself at 80 digits to 1e-20."""
    again = reference(design, f_hz, mode, CONFIRM_DIGITS)
    return again is not None and abs(again - ref) <= 1e-20 * abs(again)


def csv_value(db_text, deg_text):
    """The complex value a CSV pair stands for and its rounding allowance (relative)."""
    if db_text in ("", "nan", "-nan") or deg_text in ("", "nan", "-nan"):
        return None, 0.0
    if db_text == "-inf":
        return mp.mpc(0), 0.0
    db, deg = float(db_text), float(deg_text)
    value = mp.mpf(10) ** (mp.mpf(db) / 20) * mp.expjpi(mp.mpf(deg) / 180)
    return value, math.log(10) / 20 * half_unit(db_text) + math.pi / 180 * half_unit(deg_text)


def half_unit(text):
    """Half a unit in the 10th significant digit of a number printed with %.10g (which drops
    trailing zeros, so the digits shown do not tell)."""
    x = abs(float(text))
    return 0.0 if x == 0 else 0.5 * 10.0 ** (math.floor(math.log10(x)) - 9)


def json_number(v):
    if v is None:
        return None
    if isinstance(v, str):
        return mp.inf if v == "inf" else -mp.inf
    return mp.mpf(v)


class Finding:
    def __init__(self, label, quantity, f_hz, error, allowance, cli, ref, warned):
        self.label, self.quantity, self.f_hz = label, quantity, f_hz
        self.error, self.allowance, self.cli, self.ref = error, allowance, cli, ref
        self.warned = warned

    def excess(self):
        return self.error - self.allowance

    def text(self):
        where = "DC" if self.f_hz == 0 else f"{self.f_hz:.10g} Hz"
        cli = "no value" if self.cli is None else mpmath.nstr(self.cli, 12)
        return (f"{self.label}: {self.quantity} at {where}: relative error {self.error:.3g} "
                f"(CSV rounding allowance {self.allowance:.2g}); CLI {cli}, reference "
                f"{mpmath.nstr(self.ref, 15)} [{self.warned}]")


def warning_classes(analysis):
    """{quantity column: 'warned'} for accuracy warnings, and the design-wide class."""
    warned = {}
    design_wide = "unwarned"
    for w in analysis.get("warnings", []):
        message = w.get("message", "")
        if message.startswith("accuracy cannot be assured: "):
            rest = message[len("accuracy cannot be assured: "):]
            for column, _, words in QUANTITIES:
                if rest.startswith(words + " at "):
                    warned[column] = "warned"
        elif "what real parts offer" in message and design_wide == "unwarned":
            design_wide = "range-warned"
    return warned, design_wide


def relative_error(cli, ref):
    return float(abs(cli - ref) / abs(ref))


def check_design(label, path, cli, tmp):
    """Returns (status, findings, summary): status 'refused', 'failed' or 'checked'."""
    out = os.path.join(tmp, "sweep.csv")
    sweep = subprocess.run([cli, "sweep", path, "--csv", out], capture_output=True, text=True)
    if sweep.returncode == 2:
        return "refused", [], sweep.stderr.strip()
    analyze = subprocess.run([cli, "analyze", path, "--json"], capture_output=True, text=True)
    if sweep.returncode != 0 or analyze.returncode != 0:
        return "failed", [], (f"sweep exited {sweep.returncode}, analyze exited "
                              f"{analyze.returncode}: {sweep.stderr.strip()} "
                              f"{analyze.stderr.strip()}")
    with open(path, encoding="utf-8") as f:
        design = json.load(f)
    analysis = json.loads(analyze.stdout)
    with open(out, encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    warned, design_wide = warning_classes(analysis)
    zero_level = 1e-6 * nodal.smallest_resistance(design)
    grid = nodal.sweep_frequencies(design)
    exact_grid = len(grid) == len(rows) and all(
        f"{f:.10g}" == r["f_hz"] for f, r in zip(grid, rows))
    if not exact_grid:
        grid = [float(r["f_hz"]) for r in rows]
    counts = {"compared": 0, "zero_level": 0, "true_zero": 0, "no_reference": 0,
              "full_precision": 0, "unresolved": 0}
    findings = []
    worst = {}  # class -> the finding with the largest excess over its allowance
    largest = {}  # class -> the largest error, allowance aside

    def compare(column, mode, f_hz, cli_value, allowance, ref):
        cls = warned.get(column, design_wide)
        if ref is None or not mpmath.isfinite(ref.real) or not mpmath.isfinite(ref.imag):
            counts["no_reference"] += 1
            return
        if abs(ref) == 0:
            counts["true_zero"] += 1
            return
        if mode in ("z_in", "z_out") and abs(ref) < zero_level:
            counts["zero_level"] += 1
            return
        if cli_value is None:
            finding = Finding(label, column, f_hz, math.inf, 0.0, None, ref, cls)
            if not confirmed(design, f_hz, mode, ref):
                finding.warned = "unresolved: the reference is rounding at 50 and 80 digits"
                counts["unresolved"] += 1
            findings.append(finding)
            return
        finding = Finding(label, column, f_hz, relative_error(cli_value, ref), allowance,
                          cli_value, ref, cls)
        if finding.excess() > PROMISE and not confirmed(design, f_hz, mode, ref):
            # The reference moves with the precision: its value is rounding, of a true 0 or
            # (inverted) of an infinite impedance; no relative error exists to report.
            finding.warned = "unresolved: the reference is rounding at 50 and 80 digits"
            counts["unresolved"] += 1
            findings.append(finding)
            return
        counts["compared"] += 1
        if cls not in worst or finding.excess() > worst[cls].excess():
            worst[cls] = finding
        if cls not in largest or finding.error > largest[cls].error:
            largest[cls] = finding
        if finding.excess() > PROMISE:
            findings.append(finding)

    for f_hz, r in zip(grid, rows):
        for column, mode, _ in QUANTITIES:
            value, allowance = csv_value(r[column + "_db"], r[column + "_deg"])
            compare(column, mode, f_hz, value, allowance, reference(design, f_hz, mode))
    dc = analysis["dc"]
    for column, mode, key in (("gain_exact", "gain", dc["exact"]["gain"]),
                              ("z_in", "z_in", dc["exact"]["z_in"]),
                              ("z_out", "z_out", dc["exact"]["z_out"]),
                              ("loop_gain", "loop", dc["return_ratio"]["loop_gain"])):
        value = json_number(key)
        if value is not None and not mpmath.isfinite(value):
            continue  # an infinite impedance: the reference's matrix is singular there
        counts["full_precision"] += 1
        compare(column, mode, 0.0, None if value is None else mp.mpc(value), 0.0,
                reference(design, 0.0, mode))
    for t in analysis["margins"].get("loop_gain_near_crossover", []):
        f_hz = float(t["frequency_hz"])
        value = mp.mpf(t["magnitude"]) * mp.expjpi(mp.mpf(t["phase_deg"]) / 180)
        counts["full_precision"] += 1
        compare("loop_gain", "loop", f_hz, value, 0.0, reference(design, f_hz, "loop"))
    parts = [f"{len(rows)} points{'' if exact_grid else ' (grid from the CSV: f_hz rounded)'}",
             f"{counts['compared']} values compared ({counts['full_precision']} at full "
             f"precision)", f"{counts['zero_level']} impedances below the zero level",
             f"{counts['true_zero']} true zeros of gain or T",
             f"{counts['no_reference']} with a singular reference matrix",
             f"{counts['unresolved']} unresolved (reference rounding at 50 and 80 digits)"]

    def at(w):
        where = "DC" if w.f_hz == 0 else f"{w.f_hz:.4g} Hz"
        return f"{w.error:.2g} (allowance {w.allowance:.1g}) in {w.quantity} at {where}"

    for cls in ("unwarned", "range-warned", "warned"):
        if cls in worst:
            parts.append(f"{cls}: worst beyond allowance {at(worst[cls])}, largest "
                         f"{at(largest[cls])}")
    return "checked", findings, "; ".join(parts)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("cli")
    ap.add_argument("driver", nargs="?")
    ap.add_argument("first_seed", nargs="?", type=int)
    ap.add_argument("count", nargs="?", type=int)
    ap.add_argument("--file", action="append", default=[])
    ap.add_argument("--unwarned-only", action="store_true",
                    help="print only the misses of unwarned values")
    ap.add_argument("--save", help="copy each design with an unwarned miss into this folder")
    args = ap.parse_args()
    if not args.file and args.count is None:
        ap.error("give DRIVER FIRST_SEED COUNT or --file")
    mp.dps = DIGITS
    failed = misses = checked = refused = 0
    with tempfile.TemporaryDirectory() as tmp:
        jobs = [(os.path.basename(f), f) for f in args.file]
        if args.count is not None:
            jobs += [(f"seed {s}", None) for s in range(args.first_seed,
                                                         args.first_seed + args.count)]
        for label, path in jobs:
            if path is None:
                seed = label.split()[1]
                text = subprocess.run([args.driver, "--seed", seed, "--count", "1", "--print"],
                                      check=True, capture_output=True, text=True).stdout
                path = os.path.join(tmp, f"seed-{seed}.loopsketch")
                with open(path, "w", encoding="utf-8") as f:
                    f.write(text)
            status, findings, summary = check_design(label, path, args.cli, tmp)
            if status == "refused":
                refused += 1
                print(f"{label}: refused by the CLI (exit 2): {summary}", flush=True)
                continue
            if status == "failed":
                failed += 1
                print(f"FAIL {label}: {summary}", flush=True)
                continue
            checked += 1
            print(f"{label}: {summary}", flush=True)
            unwarned = [f for f in findings if f.warned.startswith("unwarned")]
            shown = unwarned if args.unwarned_only else findings
            def kind(f):
                return ("MISS" if f in unwarned else
                        "unresolved" if f.warned.startswith("unresolved") else "warned miss")

            order = {"MISS": 0, "warned miss": 1, "unresolved": 2}
            for f in sorted(shown, key=lambda f: (order[kind(f)], -f.excess()))[:10]:
                print(f"  {kind(f)} {f.text()}", flush=True)
            if len(shown) > 10:
                print(f"  ... {len(shown) - 10} more", flush=True)
            if unwarned:
                misses += 1
                if args.save:
                    os.makedirs(args.save, exist_ok=True)
                    name = label.replace(" ", "-") if label.startswith("seed") else label
                    if not name.endswith(".loopsketch"):
                        name += ".loopsketch"
                    shutil.copyfile(path, os.path.join(args.save, name))
    print(f"{checked} designs checked, {refused} refused by the CLI, {failed} CLI failures, "
          f"{misses} with an unwarned value off by more than {PROMISE:g} beyond the CSV's "
          f"rounding", flush=True)
    return 1 if failed or misses else 0


if __name__ == "__main__":
    sys.exit(main())
