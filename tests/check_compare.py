#!/usr/bin/python3
"""`driftmark compare OLD NEW`: a file against itself is all the same; two runs of one
suite differ only in timings, within the timing tolerance; a larger error in one run
(written into a copy with h5py, as a changed coefficient of a method would make it) is
worse, with exit 4; a slower step beyond the timing tolerance is worse; runs in one
file only are listed; bad input is one line and exit 2.

usage: check_compare.py PATH/TO/driftmark
"""
import json
import os
import shutil
import sys
import tempfile

import checklib
from checklib import check

import h5py

EXE = sys.argv[1]


def run(args, cwd):
    return checklib.run(EXE, args, cwd)


def compare(a, b, cwd, *opts):
    p = run(["compare", a, b, "--format", "json", *opts], cwd)
    return p, (json.loads(p.stdout) if p.stdout.strip() else None)


def scale_summary(path, run_id, field, factor):
    with h5py.File(path, "r+") as f:
        rows = f["summary"][()]
        ids = [r.decode() for r in rows["run_id"]]
        rows[field][ids.index(run_id)] *= factor
        f["summary"][...] = rows


SUITE = """\
name: compare-check
output: {out}
horizon: {{periods: 50}}
samples: 64
problems:
  - {{problem: pendulum, amplitude: 2.0}}
{extra}methods:
  - {{method: verlet, steps_per_period: [32, 64]}}
  - {{method: rk4, steps_per_period: 32}}
"""

with tempfile.TemporaryDirectory() as tmp:
    def make(name, extra=""):
        suite = os.path.join(tmp, name + ".yaml")
        out = os.path.join(tmp, name + ".h5")
        with open(suite, "w") as f:
            f.write(SUITE.format(out=out, extra=extra))
        p = run(["run", suite, "--force", "-j", "1"], tmp)
        check(p.returncode == 0, f"run {name}: {p.stderr}")
        return out

    a = make("a")
    b = make("b")
    # 1. a file against itself
    p, d = compare(a, a, tmp)
    check(p.returncode == 0 and d["same"] == 3 and d["differences"] == [], f"itself: {d}")
    # 2. two runs of one suite: bit-identical numbers; timings differ (loosely bounded
    #    here, as the machine may be loaded)
    p, d = compare(a, b, tmp, "--time-tolerance", "1e6")  # runs of ~1e-4 s: any timing
    check(p.returncode == 0 and d["worse"] == 0 and d["better"] == 0,
          f"rerun: {p.returncode} {d}")
    check(all(x["figure"] == "ns_per_step" for x in d["differences"]),
          f"a rerun differs in timings only: {d['differences']}")
    # 3. a larger error in one run is worse, exit 4
    c = os.path.join(tmp, "c.h5")
    shutil.copyfile(a, c)
    run_id = "pendulum-amplitude2.verlet-n64"
    scale_summary(c, run_id, "max_energy_error", 1.5)
    p, d = compare(a, c, tmp)
    worse = [x for x in d["differences"] if x["change"] == "worse"]
    check(p.returncode == 4, f"worse error: exit {p.returncode}")
    check([(x["run_id"], x["figure"]) for x in worse] == [(run_id, "max_energy_error")],
          f"the worse figure is named: {worse}")
    check(abs(worse[0]["relative"] - 0.5) < 1e-12, "its relative change")
    # the same change the other way round is better, exit 0
    p, d = compare(c, a, tmp)
    check(p.returncode == 0 and d["better"] == 1, f"better: {p.returncode} {d}")
    # 4. timings judge only when asked (--time-tolerance): then 20 % slower passes and
    #    3 times slower is worse; by default a timing is listed but judges nothing
    t = os.path.join(tmp, "t.h5")
    shutil.copyfile(a, t)
    scale_summary(t, run_id, "ns_per_step", 1.2)
    p, d = compare(a, t, tmp, "--time-tolerance", "0.5")
    check(p.returncode == 0 and d["within"] == 1, f"timing within: {p.returncode} {d}")
    scale_summary(t, run_id, "ns_per_step", 2.5)
    p, d = compare(a, t, tmp, "--time-tolerance", "0.5")
    check(p.returncode == 4 and d["worse"] == 1, f"timing worse when asked: {p.returncode} {d}")
    p, d = compare(a, t, tmp)
    listed = [x for x in d["differences"] if x["figure"] == "ns_per_step"]
    check(p.returncode == 0 and d["worse"] == 0 and d["within"] == 1 and len(listed) == 1
          and listed[0]["change"] == "worse",
          f"by default a timing is listed and judges nothing: {p.returncode} {d}")
    # 5. runs in one file only
    e = make("e", "  - {problem: harmonic}\n")
    p, d = compare(a, e, tmp, "--time-tolerance", "1e6")  # timings of reruns: any
    check(d["only_new"] == 3 and d["only_old"] == 0 and p.returncode == 0, f"only new: {d}")
    # ... and the other way round: runs lost from the new file fail the gate
    p, d = compare(e, a, tmp, "--time-tolerance", "1e6")
    check(d["only_old"] == 3 and p.returncode == 4, f"runs lost: exit {p.returncode} {d}")
    # 6. every format; bad input
    for fmt in ("table", "csv"):
        p = run(["compare", a, c, "--format", fmt], tmp)
        check(p.returncode == 4 and "max_energy_error" in p.stdout, f"{fmt}: {p.returncode}")
    for args in (["compare", a], ["compare", a, os.path.join(tmp, "missing.h5")],
                 ["compare", a, b, "--tolerance", "x"], ["compare", a, b, "--format", "xml"]):
        p = run(args, tmp)
        check(p.returncode == 2 and p.stderr.count("\n") == 1, f"{args[1:]}: {p.returncode} {p.stderr!r}")

checklib.finish("compare")
