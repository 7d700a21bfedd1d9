#!/usr/bin/python3
"""Save points: while a suite runs, `run --save-every S` leaves a complete results file
at NAME every S seconds (the finished runs, the running ones as interrupted with a
checkpoint taken at their latest poll, the others left out), so that after a SIGKILL
`--resume NAME` continues; for fixed-step methods the resumed file equals an
uninterrupted run's, every dataset and attribute, but the wall-clock figures, the start
time and times_continued. No save point is taken when the runs end first; a file at NAME
that is not this run's is not replaced without --force.

The kills are not timed guesses: each waits for what it needs to have happened (a run's
progress line, NAME's modification after it), reading the program's own output.

usage: check_save_points.py PATH/TO/driftmark
"""
import os
import signal
import subprocess
import sys
import tempfile
import time

import h5py
import numpy as np

from checklib import check, finish, run

EXE = os.path.abspath(sys.argv[1])

# a long fixed-step run (154 million steps, about 5 s) and one 128 times shorter; run
# longest first
SUITE = """\
name: save-points
output: {out}
horizon: {{periods: 300000}}
samples: 256
problems:
  - {{problem: pendulum, amplitude: 1.0}}
methods:
  - {{method: verlet, steps_per_period: [512, 4]}}
"""
LONG, SHORT = "pendulum-amplitude1.verlet-n512", "pendulum-amplitude1.verlet-n4"

# how the run ran, not what it measured
SKIPPED = {"wall_seconds", "ns_per_step", "start_time_utc", "times_continued"}


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def statuses(path):
    with h5py.File(path, "r") as f:
        return {text(r["run_id"]): text(r["status"]) for r in f["summary"][()]}


def same_value(a, b):
    if isinstance(a, str) or isinstance(b, str):
        return a == b
    a, b = np.asarray(a), np.asarray(b)
    return a.dtype == b.dtype and a.tobytes() == b.tobytes()  # NaN equals NaN


def identical(a, b, label):
    """Every group, dataset byte and attribute of a equals b's, SKIPPED aside."""
    with h5py.File(a, "r") as fa, h5py.File(b, "r") as fb:
        names_a, names_b = [], []
        fa.visit(names_a.append)
        fb.visit(names_b.append)
        check(sorted(names_a) == sorted(names_b), f"{label}: the same groups and datasets")
        for name in [""] + names_a:
            if name and name not in fb:
                continue
            oa, ob = (fa, fb) if not name else (fa[name], fb[name])
            keys = sorted(k for k in oa.attrs.keys() if k not in SKIPPED)
            check(keys == sorted(k for k in ob.attrs.keys() if k not in SKIPPED),
                  f"{label}: /{name} has the same attributes")
            for k in keys:
                if k in ob.attrs:
                    check(same_value(oa.attrs[k], ob.attrs[k]), f"{label}: /{name} {k} identical")
            if isinstance(oa, h5py.Dataset):
                da, db = oa[()], ob[()]
                if da.dtype.names:
                    check(da.dtype == db.dtype and len(da) == len(db), f"{label}: /{name} same rows")
                    for field in da.dtype.names:
                        if field not in SKIPPED and da.dtype == db.dtype and len(da) == len(db):
                            check(da[field].tobytes() == db[field].tobytes(),
                                  f"{label}: /{name} field {field} identical")
                else:
                    check(da.tobytes() == db.tobytes(), f"{label}: /{name} identical")


def start(args, cwd):
    return subprocess.Popen([EXE, "run"] + args, cwd=cwd, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)


def wait_for_line(proc, what):
    line = proc.stderr.readline()
    while line and what not in line:
        line = proc.stderr.readline()
    return line


def wait_for_save_after(path, t, limit=60.0):
    """Until the file at `path` was put there after time t (a save point's rename)."""
    end = time.time() + limit
    while time.time() < end:
        try:
            if os.stat(path).st_mtime > t:
                return True
        except FileNotFoundError:
            pass
        time.sleep(0.02)
    return False


def killed_and_resumed(tmp, full, jobs, label):
    """A run killed (SIGKILL) after a save point: NAME is a valid file with the finished
    run ok, the running one interrupted with a checkpoint, and the one not started left
    out; --resume NAME ends it as the uninterrupted run. One job: the long run runs
    first, so the first save point (1 s) has it running and the short one not started.
    Two jobs: the short run's end is waited for, then the next save point."""
    out = os.path.join(tmp, f"killed-{jobs}.h5")
    t = time.time()
    proc = start(["s.yaml", "-o", out, "-j", str(jobs), "--save-every", "1"], tmp)
    if jobs == 2:
        line = wait_for_line(proc, " done: ")
        check(f"1/2 done: {SHORT}" in line, f"{label}: the short run ended first: {line!r}")
        t = time.time()
    saved = wait_for_save_after(out, t)
    check(saved, f"{label}: a save point")
    proc.send_signal(signal.SIGKILL)
    proc.communicate(timeout=60)
    check(proc.returncode == -signal.SIGKILL, f"{label}: killed: {proc.returncode}")
    if not saved:
        return
    st = statuses(out)
    want = {LONG: "interrupted"} if jobs == 1 else {LONG: "interrupted", SHORT: "ok"}
    check(st == want, f"{label}: the file holds {want}: {st}")
    with h5py.File(out, "r") as f:
        g = f["runs"][LONG]
        check("checkpoint" in g and int(g["checkpoint"][0]) == 3,
              f"{label}: the running run has a layout-3 checkpoint")
        check(int(g.attrs["times_continued"]) == 0, f"{label}: never continued yet")
        check(0 < len(g["time"]) < 256, f"{label}: it keeps its series so far: {len(g['time'])}")
    check(not [x for x in os.listdir(tmp) if ".save-" in x], f"{label}: no save copy left")
    # --plan of the killed file: what is left of the interrupted run, from its checkpoint
    with h5py.File(out, "r") as f:
        done = int(f["runs"][LONG].attrs["steps"])
    p = run(EXE, ["run", "--resume", out, "--plan"], cwd=tmp)
    planned = {l.split()[0]: l.split()[1] for l in p.stdout.splitlines()[1:]
               if l.split() and l.split()[0] in (LONG, SHORT)}
    check(p.returncode == 0 and planned.get(LONG) == str(512 * 300000 - done)
          and (SHORT in planned) == (jobs == 1),
          f"{label}: --plan lists what is left: {planned} ({done} steps done) {p.stderr!r}")
    base = os.path.basename(out)
    left = [x for x in os.listdir(tmp) if x.startswith(f".{base}.tmp-")]
    check(len(left) == 1, f"{label}: the killed process's temporary file is there: {left}")
    # ... and a save copy of a process killed inside a save point (a dead pid's name)
    with open(os.path.join(tmp, f".{base}.save-999999999"), "w") as f:
        f.write("half a copy")
    p = run(EXE, ["run", "--resume", out, "-j", str(jobs)], cwd=tmp)
    check(p.returncode == 0, f"{label}: resume: {p.returncode} {p.stderr.strip()}")
    check(not [x for x in os.listdir(tmp) if x.startswith(f".{base}.")],
          f"{label}: --resume removed the dead process's temporary files: {os.listdir(tmp)}")
    check("(1 continued from their checkpoints)" in p.stderr,
          f"{label}: the interrupted run continues: {p.stderr!r}")
    identical(full, out, f"{label}: resumed")
    with h5py.File(out, "r") as f:
        for r in f["summary"][()]:
            want = 1 if text(r["run_id"]) == LONG else 0
            check(int(r["times_continued"]) == want,
                  f"{label}: {text(r['run_id'])} times_continued {int(r['times_continued'])}")


# 1.5e8 steps (about 3 s) and a reference of about 1.4e6 quad-precision gradients (1 s)
REFERENCE_SUITE = """\
name: save-points-reference
output: never.h5
horizon: {periods: 100}
samples: 256
reference: true
reference_tolerance: 1e-10
reference_force_evals: 4e6
problems:
  - {problem: harmonic}
methods:
  - {method: symeuler-a, steps_per_period: 1500000}
"""


def reference_run_saved(tmp):
    """A run measured against a reference trajectory (compared after the run), killed
    after a save point: the save point's snapshot compared its buckets with the reference
    (a global error, not the zeros of buckets not compared yet, and the reference's error
    estimate), and --resume reads the run back and ends it as the uninterrupted run."""
    with open(os.path.join(tmp, "ref.yaml"), "w") as f:
        f.write(REFERENCE_SUITE)
    full = os.path.join(tmp, "ref-full.h5")
    p = run(EXE, ["run", "ref.yaml", "-o", full, "--save-every", "0"], cwd=tmp)
    check(p.returncode == 0, f"reference, uninterrupted: {p.returncode} {p.stderr.strip()}")
    out = os.path.join(tmp, "ref-killed.h5")
    t = time.time()
    proc = start(["ref.yaml", "-o", out, "--save-every", "1"], tmp)
    saved = wait_for_save_after(out, t)
    check(saved, "reference: a save point")
    proc.send_signal(signal.SIGKILL)
    proc.communicate(timeout=60)
    if not saved:
        return
    run_id = "harmonic.symeuler-a-n1.5e+06"
    with h5py.File(out, "r") as f, h5py.File(full, "r") as ff:
        g, gf = f["runs"][run_id], ff["runs"][run_id]
        n = len(g["time"])
        check(g.attrs["status"] == "interrupted" and 0 < n < 256,
              f"reference: interrupted with {n} buckets")
        check("reference_error" in g, "reference: the snapshot has the reference's error")
        if "reference_error" in g and n > 0:
            # the same numbers the uninterrupted run has in these buckets
            check(g["global_error"][()].tobytes() == gf["global_error"][:n].tobytes()
                  and g["reference_error"][()].tobytes() == gf["reference_error"][:n].tobytes(),
                  "reference: the snapshot's buckets are compared as the full run's")
            check(float(g.attrs["max_global_error"]) > 0.0,
                  f"reference: a global error, not 0: {g.attrs['max_global_error']}")
    p = run(EXE, ["run", "--resume", out], cwd=tmp)
    check(p.returncode == 0, f"reference: resume: {p.returncode} {p.stderr.strip()}")
    # how the reference ran: a continued run compares only its own buckets (the one
    # shorter step to each bucket end, on a copy), so it counts fewer evaluations
    how = {"reference_seconds", "reference_force_evals"}
    SKIPPED.update(how)
    identical(full, out, "reference: resumed")
    SKIPPED.difference_update(how)


def main():
    with tempfile.TemporaryDirectory() as tmp:
        with open(os.path.join(tmp, "s.yaml"), "w") as f:
            f.write(SUITE.format(out="never.h5"))
        full = os.path.join(tmp, "full.h5")
        p = run(EXE, ["run", "s.yaml", "-o", full, "-j", "2", "--save-every", "0"], cwd=tmp)
        check(p.returncode == 0, f"uninterrupted: {p.returncode} {p.stderr.strip()}")
        check("save point" not in p.stderr, f"--save-every 0: no save point: {p.stderr!r}")

        # a bad interval: one line naming it, exit 2, nothing written
        for bad in ("-1", "soon", "nan"):
            p = run(EXE, ["run", "s.yaml", "-o", "bad.h5", "--save-every", bad], cwd=tmp)
            check(p.returncode == 2 and p.stderr.count("\n") == 1 and "--save-every" in p.stderr
                  and not os.path.exists(os.path.join(tmp, "bad.h5")),
                  f"--save-every {bad}: {p.returncode} {p.stderr!r}")

        killed_and_resumed(tmp, full, 1, "one job")
        killed_and_resumed(tmp, full, 2, "two jobs")
        reference_run_saved(tmp)

        # runs ending before the first save point: none taken
        with open(os.path.join(tmp, "q.yaml"), "w") as f:
            f.write(SUITE.replace("300000", "2000").format(out="quick.h5"))
        p = run(EXE, ["run", "q.yaml", "--save-every", "600"], cwd=tmp)
        check(p.returncode == 0 and "save point" not in p.stderr,
              f"no save point before the end: {p.returncode} {p.stderr!r}")
        check(statuses(os.path.join(tmp, "quick.h5")) == {LONG: "ok", SHORT: "ok"},
              "the quick suite's file is complete")

        # a run that takes save points reports them (count, cost, size) and its file is
        # the uninterrupted one
        every = os.path.join(tmp, "every.h5")
        p = run(EXE, ["run", "s.yaml", "-o", every, "-j", "2", "--save-every", "0.2"], cwd=tmp)
        check(p.returncode == 0 and " save points to " in p.stderr,
              f"save points reported: {p.returncode} {p.stderr!r}")
        print("\n".join(l for l in p.stderr.splitlines() if "save points" in l))
        identical(full, every, "with save points")
        check(not [x for x in os.listdir(tmp) if ".save-" in x], "no save copy left")

        # a file that appears at NAME once the run has begun (its temporary file exists)
        # and before the first save point (1 s): not ours, so left as it is by the save
        # points (killed at 2.5 s); with --force the first save point replaces it
        # (a suite ten times as long: the run must outlast 2.5 s on a fast machine too)
        with open(os.path.join(tmp, "long.yaml"), "w") as f:
            f.write(SUITE.replace("300000", "3000000").format(out="never.h5"))
        for force in (False, True):
            name = os.path.join(tmp, f"foreign-{int(force)}.h5")
            t0 = time.time()
            proc = start(["long.yaml", "-o", name, "--save-every", "1"] +
                         (["--force"] if force else []), tmp)
            while time.time() < t0 + 30 and not [x for x in os.listdir(tmp) if
                                                 x.startswith(f".foreign-{int(force)}.h5.tmp-")]:
                time.sleep(0.005)
            with open(name, "w") as f:
                f.write("not a results file\n")
            t = time.time()
            if force:
                replaced = wait_for_save_after(name, t)
            else:
                time.sleep(max(0.0, t0 + 2.5 - time.time()))
                replaced = open(name, "rb").read() != b"not a results file\n"
            alive = proc.poll() is None
            proc.send_signal(signal.SIGKILL)
            proc.communicate(timeout=60)
            if force:
                check(replaced and h5py.is_hdf5(name), "--force: a save point replaces the file")
            else:
                check(alive, "the run was still running when killed")
                check(not replaced, "a file not ours at NAME is not replaced by a save point")

    finish("save points")


if __name__ == "__main__":
    main()
