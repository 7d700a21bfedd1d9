#!/usr/bin/python3
"""`driftmark compare OLD NEW`: a file against itself is all the same; two runs of one
suite differ only in timings, and their runs count as the same; a larger error in one run
(written into a copy with h5py, as a changed coefficient of a method would make it) is
worse, with exit 4; a slower step beyond the timing tolerance is worse; runs in one
file only are listed; bad input is one line and exit 2. Runs matched by id only say
so and what differs in their configurations: another horizon is not comparable (judged
nothing, exit 0); other buckets are judged but their sampled figures are noise, so the
gate passes, while a worse method under the same id still fails it; the drift figures of
bounded runs and drifts far below max |dE| are noise, a real drift is not.

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
horizon: {{periods: {periods}}}
samples: {samples}
problems:
  - {{problem: pendulum, amplitude: 2.0}}
{extra}methods:
  - {{method: verlet, steps_per_period: [32, 64]}}
  - {{method: rk4, steps_per_period: 32}}
{methods}"""

# one method typed as a table, under one name (so one id): Verlet, or the worse
# symplectic Euler
VERLET_TABLE = ("  - table: {name: mine, order: 1, kick: [0.5, 0.5], drift: [1]}\n"
                "    steps_per_period: 32\n")
EULER_TABLE = ("  - table: {name: mine, order: 1, kick: [1], drift: [1], first: kick}\n"
               "    steps_per_period: 32\n")


def set_summary(path, run_id, field, value):
    with h5py.File(path, "r+") as f:
        rows = f["summary"][()]
        ids = [r.decode() for r in rows["run_id"]]
        rows[field][ids.index(run_id)] = value
        f["summary"][...] = rows


def summary_value(path, run_id, field):
    with h5py.File(path, "r") as f:
        rows = f["summary"][()]
        ids = [r.decode() for r in rows["run_id"]]
        return rows[field][ids.index(run_id)]

with tempfile.TemporaryDirectory() as tmp:
    def make(name, extra="", periods=50, samples=64, methods=""):
        suite = os.path.join(tmp, name + ".yaml")
        out = os.path.join(tmp, name + ".h5")
        with open(suite, "w") as f:
            f.write(SUITE.format(out=out, extra=extra, periods=periods, samples=samples,
                                 methods=methods))
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
    # ... and without --time-tolerance its runs are the same (timings judge nothing)
    p, d = compare(a, b, tmp)
    check(p.returncode == 0 and d["same"] == 3 and d["within"] == 0,
          f"a rerun's runs are the same: {p.returncode} {d}")
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
    check(p.returncode == 0 and d["worse"] == 0 and d["same"] == 3 and len(listed) == 1
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
    # a run without its config text: the file is not as the contract says
    bare = os.path.join(tmp, "bare.h5")
    shutil.copyfile(a, bare)
    with h5py.File(bare, "r+") as f:
        del f["runs"]["pendulum-amplitude2.rk4-n32"].attrs["config"]
    p = run(["compare", a, bare], tmp)
    check(p.returncode == 2 and p.stderr.count("\n") == 1 and "rk4-n32" in p.stderr
          and "config" in p.stderr and p.stdout == "", f"no config: {p.returncode} {p.stderr!r}")
    for args in (["compare", a], ["compare", a, os.path.join(tmp, "missing.h5")],
                 ["compare", a, b, "--tolerance", "x"], ["compare", a, b, "--format", "xml"]):
        p = run(args, tmp)
        check(p.returncode == 2 and p.stderr.count("\n") == 1, f"{args[1:]}: {p.returncode} {p.stderr!r}")

    # 7. the same suite over another horizon: matched by id only, every pair says so and
    #    names t_end; not comparable, so judged nothing (exit 0, one line on stderr)
    long = make("long", periods=100)
    p, d = compare(a, long, tmp)
    configs = [x for x in d["differences"] if x["figure"] == "config"]
    check(p.returncode == 0 and d["not_comparable"] == 3 and d["worse"] == 0
          and d["same"] + d["within"] + d["better"] + d["changed"] == 0,
          f"another horizon is not comparable: {p.returncode} {d}")
    check(len(configs) == 3 and all(x["change"] == "not_comparable" and x["keys"] == "t_end"
                                    for x in configs), f"config lines name t_end: {configs}")
    check(len(d["differences"]) == 3, f"their figures are not compared: {d['differences']}")
    check(p.stderr.count("\n") == 1 and "not judged" in p.stderr, f"stderr: {p.stderr!r}")
    p = run(["compare", a, long], tmp)
    check("matched by id only" in p.stdout and "configurations differ in t_end" in p.stdout,
          f"the table says so: {p.stdout}")
    # 8. other buckets: matched by id, judged; what they sample is noise: the gate passes
    wide = make("wide", samples=128, methods=VERLET_TABLE)
    narrow = make("narrow", methods=VERLET_TABLE)
    p, d = compare(narrow, wide, tmp)
    configs = [x for x in d["differences"] if x["figure"] == "config"]
    check(p.returncode == 0 and d["by_id"] == 4 and d["worse"] == 0 and d["better"] == 0,
          f"other buckets pass: {p.returncode} {d}")
    check(all(x["change"] == "by_id" and x["keys"] == "samples" for x in configs),
          f"config lines name samples: {configs}")
    noise = {x["figure"] for x in d["differences"] if x["change"] == "noise"}
    check(noise and noise <= {"energy_drift_per_period", "drift_exponent", "max_global_error",
                              "period_measured", "period_rel_error", "phase_error_per_period",
                              "phase_error_final"}, f"sampled figures are noise: {noise}")
    # ... but a worse method under the same id, with other buckets, still fails
    euler = make("euler", samples=128, methods=EULER_TABLE)
    p, d = compare(narrow, euler, tmp)
    worse = {(x["run_id"], x["figure"]) for x in d["differences"] if x["change"] == "worse"}
    check(p.returncode == 4 and d["worse"] == 1
          and ("pendulum-amplitude2.mine-n32", "max_energy_error") in worse,
          f"a worse method fails: {p.returncode} {d}")
    configs = [x for x in d["differences"] if x["figure"] == "config"]
    check([x["keys"] for x in configs if x["run_id"].endswith("mine-n32")] == ["table,samples"],
          f"the table and the buckets differ: {configs}")
    # 9. noise under one configuration: the drift figures of a bounded run ...
    bounded, linear = "pendulum-amplitude2.verlet-n32", "pendulum-amplitude2.rk4-n32"
    check(summary_value(a, bounded, "drift_class") == b"bounded"
          and summary_value(a, linear, "drift_class") == b"linear", "the runs' classes")
    n = os.path.join(tmp, "n.h5")
    shutil.copyfile(a, n)
    scale_summary(n, bounded, "drift_exponent", 3.0)
    scale_summary(n, bounded, "energy_drift_per_period", -1.5)
    p, d = compare(a, n, tmp)
    changes = {x["figure"]: x["change"] for x in d["differences"]}
    check(p.returncode == 0 and changes == {"drift_exponent": "noise",
                                            "energy_drift_per_period": "noise"}
          and d["within"] == 1, f"a bounded run's drift is noise: {p.returncode} {d}")
    # ... not those of a linear drift
    shutil.copyfile(a, n)
    scale_summary(n, linear, "drift_exponent", 1.01)
    p, d = compare(a, n, tmp)
    check(p.returncode == 4 and d["worse"] == 1, f"a linear drift's exponent: {d}")
    # a drift whose whole over the run is under 1 % of max |dE| is noise, whatever its
    # class; one above it is judged
    periods = (summary_value(a, linear, "force_evals")
               / summary_value(a, linear, "force_evals_per_period"))
    floor = 0.01 * summary_value(a, linear, "max_energy_error") / periods
    for old, new, verdict, code in ((0.5 * floor, -0.9 * floor, "noise", 0),
                                    (0.5 * floor, 3.0 * floor, "worse", 4)):
        m = os.path.join(tmp, "m.h5")
        shutil.copyfile(a, m)
        set_summary(m, linear, "energy_drift_per_period", old)
        shutil.copyfile(a, n)
        set_summary(n, linear, "energy_drift_per_period", new)
        p, d = compare(m, n, tmp)
        changes = {x["figure"]: x["change"] for x in d["differences"]}
        check(p.returncode == code and changes == {"energy_drift_per_period": verdict},
              f"drift {old:.3g} -> {new:.3g}: {verdict} expected: {p.returncode} {changes}")
    # 10. the same configuration under another id (a suite whose names changed): matched
    # by its configuration and judged, and said (a renamed pair was matched unseen)
    r = os.path.join(tmp, "renamed.h5")
    shutil.copyfile(a, r)
    with h5py.File(r, "r+") as f:
        rows = f["summary"][()]
        ids = [x.decode() for x in rows["run_id"]]
        rows["run_id"][ids.index(bounded)] = b"swing-a2.verlet-n32"
        f["summary"][...] = rows
        f.move("runs/" + bounded, "runs/swing-a2.verlet-n32")
    p, d = compare(a, r, tmp)
    renamed = [x for x in d["differences"] if x["change"] == "renamed"]
    check(p.returncode == 0 and d["renamed"] == 1 and d["only_old"] == 0 and d["only_new"] == 0
          and d["same"] == d["runs_matched"]
          and renamed == [{"run_id": "swing-a2.verlet-n32", "figure": "run_id", "old": bounded,
                           "new": "swing-a2.verlet-n32", "relative": None,
                           "change": "renamed"}], f"a renamed pair: {p.returncode} {d}")
    p = run(["compare", a, r], tmp)
    check("matched by configuration under another id 1" in p.stdout
          and bounded in p.stdout, f"the table says so: {p.stdout}")
    p = run(["compare", a, r, "--format", "csv"], tmp)
    check(f"swing-a2.verlet-n32,run_id,{bounded},swing-a2.verlet-n32,,renamed," in p.stdout,
          f"csv: {p.stdout}")

checklib.finish("compare")
