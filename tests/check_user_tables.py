#!/usr/bin/python3
"""check_user_tables.py — a method typed as a table in the suite runs exactly as the
built-in method with the same coefficients: Yoshida's triple jump typed three ways
(kick and drift lists, a composition of Verlet, the first half of a symmetric table)
gives a results file identical to the built-in `yoshida4`'s, and the classical RK4
tableau typed in the suite one identical to `rk4`'s, apart from the wall-clock figures
and what names the method (its id, name, table, the run ids and hashes built from them).
Also: `list --table` prints a built-in table in suite form that reads back as the same
method, and /tables stores each table in full.

Usage: check_user_tables.py DRIFTMARK"""
import csv
import io
import json
import math
import os
import signal
import subprocess
import sys
import tempfile
import time

import h5py
import numpy

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from checklib import check, finish, run  # noqa: E402

EXE = sys.argv[1]

# Yoshida's triple jump (H. Yoshida, Phys. Lett. A 150 (1990) 262): x1 = 1 / (2 - 2^(1/3)),
# x0 = -2^(1/3) / (2 - 2^(1/3)), computed as integrators/yoshida.c computes them (the same
# IEEE operations on the same double of 2^(1/3)), printed with 17 digits.
CBRT2 = float("1.2599210498948731647672106072782")
X1 = 1.0 / (2.0 - CBRT2)
X0 = -CBRT2 / (2.0 - CBRT2)


def as_text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def num(x):
    return repr(float(x))


def numbers(xs):
    return "[" + ", ".join(num(x) for x in xs) + "]"


YOSHIDA_FORMS = {
    "composition": "{name: jump4, order: 4, compose: verlet, weights: %s}"
                   % numbers([X1, X0, X1]),
    "kick-drift": "{name: jump4, order: 4, kick: %s, drift: %s}"
                  % (numbers([X1 / 2, (X1 + X0) / 2, (X0 + X1) / 2, X1 / 2]),
                     numbers([X1, X0, X1])),
    "half": "{name: jump4, order: 4, mirror: true, first: kick, kick: %s, drift: %s}"
            % (numbers([X1 / 2, (X1 + X0) / 2]), numbers([X1, X0])),
}
# The classical RK4 (Kutta 1901; Hairer, Norsett, Wanner, Solving ODEs I, section II.1,
# from memory of the book).
RK4_TYPED = ("{name: kutta, order: 4, a: [[], [0.5], [0, 0.5], [0, 0, 1]], b: %s}"
             % numbers([1 / 6, 1 / 3, 1 / 3, 1 / 6]))

WALL = {"wall_seconds", "ns_per_step", "times_continued"}
NAMING_ROOT = {"start_time_utc", "suite_name", "suite_source", "suite_text"}
NAMING_RUN = {"run_id", "hash", "config", "method", "method_name", "method_table",
              "method_order_found", "sweep"}
NAMING_SUMMARY = {"run_id", "hash", "method", "order_found"}


def suite(path, out, method_line):
    with open(path, "w") as f:
        f.write(f"""name: tables-check
output: {out}
horizon: {{periods: 60}}
buckets: 50
problems:
  - {{problem: pendulum, amplitude: 2.5}}
  - {{problem: kepler, eccentricity: 0.3}}
  - {{problem: harmonic}}
methods:
  - {method_line}
    steps_per_period: [32, 64]
""")


# The comparisons report through `note`: `check` normally, a counter when a file is
# expected to differ (the comparison must be able to fail).
note = check


def same_value(a, b):
    a, b = numpy.asarray(a), numpy.asarray(b)
    if a.shape != b.shape or a.dtype != b.dtype:
        return False
    if a.dtype.kind == "f":
        return a.tobytes() == b.tobytes()  # bit for bit, NaN included
    return numpy.array_equal(a, b)


def compare_attrs(x, y, skip, where):
    keys = set(x.attrs) - skip
    note(keys == set(y.attrs) - skip - {"method_table", "method_order_found"},
          f"{where}: attributes differ: {sorted(keys ^ (set(y.attrs) - skip))}")
    for k in sorted(keys & set(y.attrs)):
        note(same_value(x.attrs[k], y.attrs[k]),
              f"{where}: attribute {k}: {x.attrs[k]!r} != {y.attrs[k]!r}")


def compare_group(x, y, where, skip_attrs, rename):
    compare_attrs(x, y, skip_attrs, where)
    for name, item in x.items():
        other = y.get(rename(name))
        if not note(other is not None, f"{where}/{name}: missing in the typed file"):
            continue
        if isinstance(item, h5py.Group):
            compare_group(item, other, f"{where}/{name}", skip_attrs, rename)
        elif name == "run_id":
            note([rename(v.decode()) for v in item[()]] == [v.decode() for v in other[()]],
                  f"{where}/run_id differs")
        else:
            note(same_value(item[()], other[()]), f"{where}/{name}: values differ")
            compare_attrs(item, other, set(), f"{where}/{name}")


def compare_files(builtin, typed, old_id, new_id):
    rename = lambda s: s.replace("." + old_id, "." + new_id)  # noqa: E731
    with h5py.File(builtin, "r") as a, h5py.File(typed, "r") as b:
        compare_attrs(a, b, NAMING_ROOT, "/")
        sa, sb = a["summary"][()], b["summary"][()]
        note(sa.dtype == sb.dtype and len(sa) == len(sb), "/summary: shapes differ")
        for f in sa.dtype.names:
            if f in NAMING_SUMMARY | WALL:
                continue
            note(same_value(sa[f], sb[f]), f"/summary field {f} differs")
        note([rename(r.decode()) for r in sa["run_id"]] == [r.decode() for r in sb["run_id"]],
              "/summary run ids differ beyond the method's name")
        for top in ("runs", "sweeps"):
            compare_group(a[top], b[top], "/" + top, NAMING_RUN | WALL, rename)
        if "tables" in a:  # both typed: the tables are the same too
            compare_group(a["tables"], b["tables"], "/tables", set(), rename)
        else:
            note("tables" in b, "/tables only in the typed file")
        return b["tables"][new_id].attrs["text"] if "tables" in b else ""


def main():
    with tempfile.TemporaryDirectory() as tmp:
        def run_suite(name, line):
            path, out = os.path.join(tmp, name + ".yaml"), os.path.join(tmp, name + ".h5")
            suite(path, out, line)
            r = run(EXE, ["run", path])
            if not check(r.returncode == 0, f"{name}: exit {r.returncode}: {r.stderr.strip()}"):
                finish("check_user_tables")
            return out

        builtin = run_suite("builtin-y4", "method: yoshida4")
        for form, table in YOSHIDA_FORMS.items():
            typed = run_suite("typed-y4-" + form, "table: " + table)
            text = compare_files(builtin, typed, "yoshida4", "jump4")
            with h5py.File(typed, "r") as f:
                g = f["tables/jump4"]
                check(g.attrs["order_found"] == 4 and g.attrs["symmetric"] == 1,
                      f"{form}: order {g.attrs['order_found']}, symmetric {g.attrs['symmetric']}")
                check(list(g["kick"][()]) == [X1 / 2, (X1 + X0) / 2, (X0 + X1) / 2, X1 / 2]
                      and list(g["drift"][()]) == [X1, X0, X1],
                      f"{form}: the table run is not the triple jump's")
            check(num(X0) in text, f"{form}: the stored text lacks the coefficients to 17 "
                                   f"digits: {text}")

        # one ulp off in the outer weights (the sum still 1 to the tolerance): the file
        # differs, so the comparison above can fail
        global note
        off = []
        note = lambda cond, what: off.append(what) if not cond else None  # noqa: E731
        nudged = "{name: jump4, order: 4, compose: verlet, weights: %s}" % numbers(
            [math.nextafter(X1, 2), X0, math.nextafter(X1, 2)])
        compare_files(builtin, run_suite("nudged-y4", "table: " + nudged), "yoshida4", "jump4")
        note = check
        check(len(off) > 0, "a table one ulp off gave the same file as yoshida4")

        builtin = run_suite("builtin-rk4", "method: rk4")
        typed = run_suite("typed-rk4", "table: " + RK4_TYPED)
        compare_files(builtin, typed, "rk4", "kutta")

        # list --table prints a table in suite form; read back it is the same method
        for method in ("yoshida4", "rk4"):
            r = run(EXE, ["list", "--table", method])
            check(r.returncode == 0 and r.stdout.startswith("- table: {name: my-"),
                  f"list --table {method}: {r.returncode} {r.stdout!r} {r.stderr!r}")
            line = r.stdout.splitlines()[0][2:]
            typed = run_suite("listed-" + method, line)
            compare_files(run_suite("listed-builtin-" + method, "method: " + method), typed,
                          method, "my-" + method)
        # an experimental table below its claim runs, and run and show print both orders
        bent = ("{name: bent4, order: 4, experimental: true, kick: %s, drift: %s}"
                % (numbers([X1 / 2, (X1 + X0) / 2 - 0.005, (X0 + X1) / 2 + 0.005, X1 / 2]),
                   numbers([X1, X0, X1])))
        out = run_suite("experimental", "table: " + bent)
        shown = run(EXE, ["show", out])
        line = [x for x in shown.stdout.splitlines() if x.startswith("bent4 ")]
        check(shown.returncode == 0 and len(line) == 1 and line[0].split()[2:4] == ["4", "1"]
              and "below its claim" in line[0],
              f"show does not print the claimed order 4 and the found 1: {shown.stdout!r}")
        with h5py.File(out, "r") as f:
            rows = f["summary"][()]
            check(all(r["order"] == 4 and r["order_found"] == 1 for r in rows),
                  "/summary does not hold both orders of the experimental table")
            held = dict(f["tables/bent4"].attrs)
        # show --tables in CSV and JSON: one record a table, the file's attributes
        as_csv = run(EXE, ["show", out, "--tables", "--format", "csv"])
        records = list(csv.DictReader(io.StringIO(as_csv.stdout)))
        as_json = run(EXE, ["show", out, "--tables", "--format", "json"])
        objects = json.loads(as_json.stdout) if as_json.returncode == 0 else []
        check(as_csv.returncode == 0 and len(records) == 1 and len(objects) == 1,
              f"show --tables: {as_csv.stdout!r} {as_json.stdout!r} {as_json.stderr!r}")
        for rec in (records[0], objects[0]):
            check(rec["table"] == "bent4" and int(rec["claimed_order"]) == 4
                  and int(rec["order_found"]) == int(held["order_found"]) == 1
                  and rec["form"] == as_text(held["form"]),
                  f"show --tables: orders and form as in /tables: {rec} {held}")
            for key in ("measured_order_harmonic", "error_constant_pendulum"):
                check(float(rec[key]) == float(held[key]),
                      f"show --tables: {key} {rec[key]} against /tables' {held[key]}")
        check_resume(tmp)
    finish("check_user_tables")


def check_resume(tmp):
    """A run of a typed table stopped part way and continued with --resume (the suite
    text read back from the file makes the same table) ends as the run never stopped."""
    path, out = os.path.join(tmp, "long.yaml"), os.path.join(tmp, "long.h5")
    with open(path, "w") as f:
        f.write(f"""name: long
output: {out}
horizon: {{periods: 400000}}
buckets: 64
problems:
  - {{problem: pendulum, amplitude: 2.0}}
methods:
  - table: {YOSHIDA_FORMS["composition"]}
    steps_per_period: 32
""")
    p = subprocess.Popen([EXE, "run", path], stdout=subprocess.DEVNULL,
                         stderr=subprocess.DEVNULL)
    time.sleep(0.8)
    p.send_signal(signal.SIGUSR1)
    check(p.wait() == 138, "the stopped run did not exit 138")
    with h5py.File(out, "r") as f:
        check(f["summary"][0]["status"] == b"interrupted", "the run was not interrupted")
    r = run(EXE, ["run", "--resume", out])
    check(r.returncode == 0, f"--resume: exit {r.returncode}: {r.stderr.strip()}")
    whole = os.path.join(tmp, "long-whole.h5")
    r = run(EXE, ["run", path, "-o", whole])
    check(r.returncode == 0, f"the whole run: exit {r.returncode}: {r.stderr.strip()}")
    compare_files(whole, out, "jump4", "jump4")


if __name__ == "__main__":
    main()
