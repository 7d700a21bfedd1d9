#!/usr/bin/python3
"""`show` prints the sweep table `run` prints (issue 12), read back from /sweeps/<name>:

  - the text of `show` ends with the same sweep table `run` printed, left-out runs and
    their reasons included;
  - `show --sweeps --format csv` and `--format json` give every sweep's orders, point
    counts and each run's codes, checked against the file as h5py reads it;
  - a hostile /sweeps (an array where one value belongs, an unknown code, a dataset of
    the wrong length, a sweep that is not a group) or a deleted /sweeps is one line on
    stderr, exit 2, nothing on stdout (a deleted /sweeps for choose, compare and
    run --resume alike);
  - a suite without sweeps leaves an empty /sweeps, and `show --sweeps` says so in one
    line.

usage: check_show_sweeps.py PATH/TO/driftmark     (CTest passes the built executable)
"""
import csv
import io
import json
import math
import os
import shutil
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from checklib import check, finish, run  # noqa: E402

EXE = os.path.abspath(sys.argv[1])

# steps_per_period 2 diverges: a run each verlet fit leaves out
SUITE = """name: sweeps
horizon: {periods: 20}
samples: 8
problems:
  - {problem: harmonic}
  - {problem: pendulum, amplitude: 2.5}
methods:
  - {method: verlet, steps_per_period: [2, 16, 32, 64]}
  - {method: rk4, steps_per_period: [16, 32]}
"""


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def number(cell):
    """A CSV cell as a number: empty is not a number."""
    return math.nan if cell == "" else float(cell)


def same(a, b):
    """Equal, or both not a number (JSON writes NaN as null)."""
    a, b = (math.nan if v is None else v for v in (a, b))
    return (math.isnan(a) and math.isnan(b)) or a == b


def refused(tmp, args, label, needle):
    r = run(EXE, args, cwd=tmp)
    check(r.returncode == 2, f"{label}: exit {r.returncode} (expected 2): {r.stderr!r}")
    check(r.stderr.count("\n") == 1 and r.stderr.endswith("\n"),
          f"{label}: not one line: {r.stderr!r}")
    check(r.stdout == "", f"{label}: something printed before the refusal: {r.stdout!r}")
    check(needle in r.stderr, f"{label}: {needle!r} not in {r.stderr!r}")


def main():
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "s.yaml"), "w") as f:
            f.write(SUITE)
        r = run(EXE, ["run", "s.yaml", "-o", "a.h5"], cwd=tmp)
        if not check(r.returncode == 0, f"the suite runs: {r.stderr}"):
            return
        ran = r.stdout
        at = ran.index("\nsweep ")
        run_table = ran[at + 1:ran.index("\nresults: ")].rstrip("\n") + "\n"
        check("left out: harmonic.verlet-n2: energy diverged, phase diverged" in run_table,
              f"run's sweep table lists the diverged run: {run_table!r}")

        # text: the same table, after the summary
        r = run(EXE, ["show", "a.h5"], cwd=tmp)
        check(r.returncode == 0, f"show: exit {r.returncode}: {r.stderr}")
        check(r.stdout.endswith("\n" + run_table),
              f"show's text does not end with run's sweep table:\n{r.stdout}\n---\n{run_table}")

        # the file as h5py reads it
        want = {}
        with h5py.File(os.path.join(tmp, "a.h5"), "r") as f:
            for name, g in f["sweeps"].items():
                want[name] = dict(
                    energy_order=float(g.attrs["energy_order"]),
                    phase_order=float(g.attrs["phase_order"]),
                    n_points_energy=int(g.attrs["n_points_energy"]),
                    n_points_phase=int(g.attrs["n_points_phase"]),
                    energy_order_trend=int(g.attrs["energy_order_trend"]),
                    phase_order_trend=int(g.attrs["phase_order_trend"]),
                    runs=[(text(a), text(b), text(c)) for a, b, c in
                          zip(g["run_id"][()], g["energy_fit"][()], g["phase_fit"][()])])
        check(len(want) == 4, f"four sweeps in the file: {sorted(want)}")

        r = run(EXE, ["show", "a.h5", "--sweeps", "--format", "json"], cwd=tmp)
        check(r.returncode == 0, f"show --sweeps json: exit {r.returncode}: {r.stderr}")
        got = json.loads(r.stdout)
        check(sorted(s["sweep"] for s in got) == sorted(want), "json: the sweeps")
        check([s["sweep"] for s in got] == [line.split()[0] for line in
                                            run_table.splitlines()[1:]
                                            if not line.startswith(" ")],
              "json: the sweeps in run's order")
        for s in got:
            w = want.get(s["sweep"])
            if w is None:
                continue
            for key in ("energy_order", "phase_order"):
                check(same(s[key], w[key]), f"json {s['sweep']} {key}: {s[key]} vs {w[key]}")
            for key in ("n_points_energy", "n_points_phase", "energy_order_trend",
                        "phase_order_trend"):
                check(s[key] == w[key], f"json {s['sweep']} {key}: {s[key]} vs {w[key]}")
            check([(x["run_id"], x["energy_fit"], x["phase_fit"]) for x in s["runs"]] ==
                  w["runs"], f"json {s['sweep']} runs: {s['runs']} vs {w['runs']}")

        r = run(EXE, ["show", "a.h5", "--sweeps", "--format", "csv"], cwd=tmp)
        check(r.returncode == 0, f"show --sweeps csv: exit {r.returncode}: {r.stderr}")
        rows = list(csv.DictReader(io.StringIO(r.stdout)))
        check(len(rows) == sum(len(w["runs"]) for w in want.values()),
              f"csv: one row per run of a sweep, got {len(rows)}")
        for row in rows:
            w = want.get(row["sweep"])
            if not check(w is not None, f"csv: unknown sweep {row['sweep']}"):
                continue
            check(same(number(row["energy_order"]), w["energy_order"]), f"csv {row}")
            check(same(number(row["phase_order"]), w["phase_order"]), f"csv {row}")
            for key in ("energy_order_trend", "phase_order_trend"):
                check(int(row[key]) == w[key], f"csv {row}")
            check(int(row["n_points_energy"]) == w["n_points_energy"], f"csv {row}")
            check(int(row["n_points_phase"]) == w["n_points_phase"], f"csv {row}")
            check((row["run_id"], row["energy_fit"], row["phase_fit"]) in w["runs"],
                  f"csv {row}")

        r = run(EXE, ["show", "a.h5", "--sweeps"], cwd=tmp)
        check(r.stdout == run_table, f"show --sweeps: only the sweep table: {r.stdout!r}")

        # hostile sweeps
        def hostile(name, edit):
            path = os.path.join(tmp, name)
            shutil.copy(os.path.join(tmp, "a.h5"), path)
            with h5py.File(path, "r+") as f:
                edit(f["sweeps"]["harmonic.verlet"], f)
            return name

        def attr(name, value):
            def edit(g, f):
                del g.attrs[name]
                g.attrs[name] = value
            return edit

        def dataset(name, value):
            def edit(g, f):
                del g[name]
                g[name] = value
            return edit

        def not_group(g, f):
            f["sweeps"]["plain"] = np.zeros(3)

        cases = [
            ("order-array.h5", attr("energy_order", np.zeros(4096)), "energy_order"),
            ("order-text.h5", attr("phase_order", "two"), "phase_order"),
            ("points-real.h5", attr("n_points_energy", 2.5), "n_points_energy"),
            ("runs-huge.h5", attr("n_runs", np.uint64(1 << 62)), "n_runs"),
            ("points-over.h5", attr("n_points_phase", np.uint64(99)), "more points"),
            ("trend-two.h5", attr("phase_order_trend", np.int8(2)), "trend"),
            ("code-unknown.h5", dataset("energy_fit", np.array([b"used", b"sure", b"used",
                                                                b"used"])), "energy_fit"),
            ("code-short.h5", dataset("phase_fit", np.array([b"used"])), "phase_fit"),
            ("ids-numbers.h5", dataset("run_id", np.arange(4.0)), "run_id"),
            ("id-long.h5", dataset("run_id", np.array([b"x" * 5000] * 4)), "run_id"),
            ("not-group.h5", not_group, "plain: it is not a group"),
        ]
        for name, edit, needle in cases:
            hostile(name, edit)
            for fmt in ("table", "json"):
                refused(tmp, ["show", name, "--format", fmt], f"show {name} {fmt}", needle)
        # variable-length texts are texts too
        def vlen_ids(g, f):
            ids = [text(x) for x in g["run_id"][()]]
            del g["run_id"]
            g.create_dataset("run_id", data=ids, dtype=h5py.string_dtype())
        hostile("ids-vlen.h5", vlen_ids)
        r = run(EXE, ["show", "ids-vlen.h5", "--sweeps"], cwd=tmp)
        check(r.returncode == 0 and r.stdout == run_table,
              f"variable-length run ids: {r.returncode} {r.stdout!r} {r.stderr!r}")
        # a file whose /sweeps was deleted is damaged (every file has one, empty when its
        # suite has no sweeps): one line, exit 2
        hostile("no-sweeps.h5", lambda g, f: f.__delitem__("sweeps"))
        for args in (["--sweeps"], ["--sweeps", "--format", "json"], []):
            refused(tmp, ["show", "no-sweeps.h5", *args], f"no /sweeps {args}", "/sweeps")
        # ... for every reader alike, the file untouched by --resume
        before = open(os.path.join(tmp, "no-sweeps.h5"), "rb").read()
        for args in (["choose", "no-sweeps.h5", "--energy-error", "1e-3"],
                     ["compare", "no-sweeps.h5", "a.h5"], ["compare", "a.h5", "no-sweeps.h5"],
                     ["run", "--resume", "no-sweeps.h5"],
                     ["run", "--resume", "no-sweeps.h5", "--plan"]):
            refused(tmp, args, f"no /sweeps: {' '.join(args)}", "/sweeps")
        check(open(os.path.join(tmp, "no-sweeps.h5"), "rb").read() == before,
              "no /sweeps: --resume left the file as it was")
        # a suite without sweeps: an empty /sweeps, and `show --sweeps` says so in one line
        with open(os.path.join(tmp, "flat.yaml"), "w") as f:
            f.write(SUITE.replace("[2, 16, 32, 64]", "16").replace("[16, 32]", "16"))
        r = run(EXE, ["run", "flat.yaml", "-o", "flat.h5"], cwd=tmp)
        check(r.returncode == 0, f"a suite without sweeps runs: {r.stderr}")
        with h5py.File(os.path.join(tmp, "flat.h5"), "r") as f:
            check(len(f["sweeps"]) == 0, "a suite without sweeps: an empty /sweeps")
        r = run(EXE, ["show", "flat.h5", "--sweeps"], cwd=tmp)
        check(r.returncode == 0 and r.stdout.count("\n") == 1
              and r.stdout.startswith("flat.h5 has no sweeps"),
              f"no sweeps: one line: {r.returncode} {r.stdout!r} {r.stderr!r}")
        r = run(EXE, ["show", "flat.h5", "--sweeps", "--format", "json"], cwd=tmp)
        check(r.returncode == 0 and json.loads(r.stdout) == [],
              f"no sweeps: an empty list in JSON: {r.returncode} {r.stdout!r} {r.stderr!r}")


main()
finish("check_show_sweeps")
