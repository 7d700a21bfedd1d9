#!/usr/bin/python3
"""Runs spread over MPI ranks give the file one process gives: `mpirun -n 2` and
`mpirun -n 3` (with threads inside the ranks) write results files whose every dataset,
every summary row and every attribute equal those of a single-process run bit for bit
(wall-clock times and the start time excepted); bad input exits 2 from the job with one
line from driftmark; SIGTERM to mpirun leaves a valid file of the completed runs, and
`mpirun ... --resume FILE`, from that file or from a partly complete one, finishes it
bit-identically; a save point holds the runs running on every rank, so a job killed
outright continues from it.

Skips (exit 0, saying so) when the driftmark given was built without MPI or no mpirun
is on PATH.

usage: check_mpi.py PATH/TO/driftmark
"""
import os
import shutil
import signal
import subprocess
import sys
import tempfile
import time

import h5py
import numpy as np

EXE = sys.argv[1]
failures = []

# One long adaptive run (kepler at rtol 1e-10, 2 to 3 s) is handed out first and is
# still running a second after the start whatever the number of ranks. Explicit Euler
# at 8 steps per period diverges, so a status and a reason other than "ok" travel
# between ranks too.
SUITE = """\
name: mpi-check
output: {out}
horizon: {{periods: {periods}}}
samples: 300
problems:
  - {{problem: pendulum, amplitude: [1.0, 2.5]}}
  - {{problem: kepler, eccentricity: 0.5}}
  - {{problem: harmonic}}
methods:
  - {{method: verlet, steps_per_period: [16, 32, 64]}}
  - {{method: yoshida4, steps_per_period: 40}}
  - {{method: euler, steps_per_period: 8}}
  - {{method: cvode-adams, rtol: [1.0e-6, 1.0e-10]}}
"""
N_RUNS = 4 * 7

# Wall-clock figures and the start time differ between any two runs, even of one process.
TIMING = {"wall_seconds", "ns_per_step", "start_time_utc", "times_continued"}


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def mpi_env():
    env = dict(os.environ)
    env.update({
        # OpenMPI refuses root without these; CI runs as root
        "OMPI_ALLOW_RUN_AS_ROOT": "1", "OMPI_ALLOW_RUN_AS_ROOT_CONFIRM": "1",
        # containers often forbid the cross-memory attach of the shared-memory transport
        "OMPI_MCA_btl_vader_single_copy_mechanism": "none",
        "OMPI_MCA_rmaps_base_oversubscribe": "1",
    })
    # In a sanitizer build, OpenMPI's plugins (loaded at MPI_Init, unloaded at
    # MPI_Finalize) leave allocations LeakSanitizer can neither attribute nor suppress:
    # leaks are checked in the one-process runs here and in test_result_pack, not under
    # mpirun. Every other AddressSanitizer and UBSan check stays on (the last option wins).
    if "ASAN_OPTIONS" in env:
        env["ASAN_OPTIONS"] += ":detect_leaks=0"
    return env


def mpirun(n, args):
    # --bind-to none: OpenMPI binds each rank to one core by default, which would pin
    # a rank's --jobs threads to that core
    return [MPIRUN, "--allow-run-as-root", "--oversubscribe", "--bind-to", "none", "-n", str(n),
            EXE, "run"] + args


def run_mpi(n, args):
    return subprocess.run(mpirun(n, args), capture_output=True, text=True, env=mpi_env(),
                          timeout=120)


def own_lines(stderr):
    """driftmark's own lines (mpirun adds a banner of its own on a non-zero exit)."""
    return [l for l in stderr.splitlines() if l.startswith("driftmark:")]


def same_value(a, b):
    if isinstance(a, str) or isinstance(b, str):
        return a == b
    a, b = np.asarray(a), np.asarray(b)
    return a.dtype == b.dtype and a.tobytes() == b.tobytes()  # NaN equals NaN, bit for bit


def compare_attrs(oa, ob, where, label):
    keys_a, keys_b = sorted(oa.attrs.keys()), sorted(ob.attrs.keys())
    check(keys_a == keys_b, f"{label}: {where} has the same attributes")
    for k in keys_a:
        if k in TIMING or k not in ob.attrs:
            continue
        check(same_value(oa.attrs[k], ob.attrs[k]), f"{label}: {where} attribute {k} identical")


def identical(a, b, label, restarted=()):
    """Every object, dataset byte and attribute of file a equals b's, timing aside; the
    runs in `restarted` (CVODE runs continued from a checkpoint: restarted at the saved
    state, results/README.md) only as far as their status, and their sweeps not at all."""
    def skipped(name):
        parts = name.split("/")
        if parts[0] == "runs" and len(parts) > 1:
            return parts[1] in restarted
        # a sweep's runs are its name and "-" and the step (which may hold a "-" itself)
        return parts[0] == "sweeps" and len(parts) > 1 and \
            any(r.startswith(parts[1] + "-") for r in restarted)
    with h5py.File(a, "r") as fa, h5py.File(b, "r") as fb:
        names_a, names_b = [], []
        fa.visit(names_a.append)
        fb.visit(names_b.append)
        check(names_a == names_b, f"{label}: same groups and datasets in the same order")
        compare_attrs(fa, fb, "/", label)
        sa, sb = fa["summary"][()], fb["summary"][()]
        if restarted and len(sa) == len(sb):
            for rows in (sa, sb):
                check([text(r["status"]) for r in rows if text(r["run_id"]) in restarted]
                      == [text(r["status"]) for r in sa if text(r["run_id"]) in restarted],
                      f"{label}: restarted runs end with the same status")
            keep = [text(r["run_id"]) not in restarted for r in sa]
            sa, sb = sa[keep], sb[keep]
        check(sa.dtype == sb.dtype and len(sa) == len(sb), f"{label}: /summary same type, rows")
        if sa.dtype == sb.dtype and len(sa) == len(sb):
            for field in sa.dtype.names:
                if field not in TIMING:
                    check(sa[field].tobytes() == sb[field].tobytes(),
                          f"{label}: /summary field {field} identical in every row")
        for name in names_a:
            if name not in fb or name == "summary" or skipped(name):
                continue
            oa, ob = fa[name], fb[name]
            compare_attrs(oa, ob, name, label)
            if isinstance(oa, h5py.Dataset):
                check(oa.dtype == ob.dtype and oa.shape == ob.shape and
                      oa[()].tobytes() == ob[()].tobytes(), f"{label}: {name} bit-identical")


def statuses(path):
    with h5py.File(path, "r") as f:
        return {text(r["run_id"]): text(r["status"]) for r in f["summary"][()]}


# Fixed-step runs only, 6 of them, long enough (a second or two each on a loaded 2-core
# machine) to be running when the first one ends.
CONTINUED = """\
name: mpi-continued
output: {out}
horizon: {{periods: 150000}}
samples: 200
problems:
  - {{problem: pendulum, amplitude: [1.0, 2.0, 2.5]}}
methods:
  - {{method: verlet, steps_per_period: 64}}
  - {{method: yoshida4, steps_per_period: 64}}
"""


def check_resume_continues_on_any_rank(tmp):
    """--resume under mpirun continues each interrupted run from its checkpoint on
    whatever rank it lands (rank 0 sends the checkpoint with the run): the resumed file
    equals the uninterrupted one bit for bit. That the checkpoint is used there, and the
    run not started again, shows in a copy whose checkpoints claim a larger |dE| so far
    (word o + 5 of the record for d degrees of freedom, o = 16 + 2 d in layout 3, 15 + 2 d
    in layout 2, results/README.md): the claim is carried to the end."""
    suite = os.path.join(tmp, "continued.yaml")
    with open(suite, "w") as f:
        f.write(CONTINUED.format(out=os.path.join(tmp, "continued.h5")))
    ref = os.path.join(tmp, "continued-one.h5")
    p = subprocess.run([EXE, "run", suite, "-o", ref, "-j", "2"], capture_output=True, text=True)
    check(p.returncode == 0, f"continued: one process: exit {p.returncode} {p.stderr.strip()}")
    # every run starts at once (3 ranks of 2 threads); a signal once the first ends
    part = os.path.join(tmp, "continued-part.h5")
    proc = subprocess.Popen(mpirun(3, [suite, "-o", part, "-j", "2"]), stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=mpi_env())
    line = proc.stderr.readline()
    while line and " done: " not in line:
        line = proc.stderr.readline()
    proc.send_signal(signal.SIGUSR1)
    proc.communicate(timeout=120)
    st = statuses(part) if os.path.exists(part) else {}
    stopped = sorted(r for r, v in st.items() if v == "interrupted")
    check(len(stopped) >= 2, f"continued: runs interrupted by the signal: {st}")
    raised = os.path.join(tmp, "continued-raised.h5")
    shutil.copy(part, raised)
    with h5py.File(raised, "r+") as f:
        for rid in stopped:
            ck = f["runs"][rid]["checkpoint"]
            dof = int(ck[1])
            o = (16 if int(ck[0]) >= 3 else 15) + 2 * dof
            ck[o + 5] = np.array([0.25]).view("<u8")[0]
    # resumed over 3 ranks of one thread: rank 0's thread takes one run, the others go
    # to ranks 1 and 2 with their checkpoints
    p = run_mpi(3, ["--resume", part, "-j", "1"])
    check(p.returncode == 0, f"continued: resume: exit {p.returncode} {p.stderr.strip()}")
    check(f"({len(stopped)} continued from their checkpoints)" in p.stderr and
          "went to them with their checkpoints" in p.stderr,
          f"continued: runs continued on other ranks: {own_lines(p.stderr)}")
    identical(ref, part, "continued over 3 ranks")
    p = run_mpi(3, ["--resume", raised, "-j", "1"])
    check(p.returncode == 0, f"continued: resume of the raised copy: {p.stderr.strip()}")
    with h5py.File(raised, "r") as f:
        for rid in stopped:
            got = float(f["runs"][rid].attrs["max_energy_error"])
            check(got == 0.25, f"continued: {rid} carried its checkpoint's max |dE| 0.25: {got}")


def check_save_point_over_ranks(tmp):
    """A save point under mpirun holds the runs running on every rank: rank 0 sends each
    rank a SAVE and their runs answer with snapshots. Three ranks of one thread run three
    runs at once; the file at NAME is read until a save point holds two of them (rank 0
    runs one at a time) as interrupted, then the whole job is killed (SIGKILL to mpirun and its ranks, one
    process group), and `--resume` under two ranks ends it as the one-process file
    (check_resume_continues_on_any_rank made it), times_continued aside."""
    ref = os.path.join(tmp, "continued-one.h5")
    suite = os.path.join(tmp, "continued.yaml")  # the reference's suite, its text too
    out = os.path.join(tmp, "saved.h5")
    proc = subprocess.Popen(mpirun(3, [suite, "-o", out, "-j", "1", "--save-every", "0.5"]),
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            env=mpi_env(), start_new_session=True)
    st, end = {}, time.time() + 60
    while time.time() < end and proc.poll() is None:
        try:
            st = statuses(out)
        except (OSError, KeyError):
            st = {}
        if sum(v == "interrupted" for v in st.values()) >= 2:
            break
        time.sleep(0.1)
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    stopped = sum(v == "interrupted" for v in st.values())
    # rank 0 runs one run at a time (-j 1): a second comes from another rank
    check(stopped >= 2, f"save point over ranks: runs of other ranks are in it: {st}")
    p = run_mpi(2, ["--resume", out, "-j", "1"])
    check(p.returncode == 0, f"save point over ranks: resume: {p.returncode} {p.stderr.strip()}")
    check(f"({stopped} continued from their checkpoints)" in p.stderr,
          f"save point over ranks: the interrupted runs continued: {own_lines(p.stderr)}")
    identical(ref, out, "save point over ranks, resumed")


def main():
    with tempfile.TemporaryDirectory() as tmp:
        suite = os.path.join(tmp, "suite.yaml")
        with open(suite, "w") as f:
            f.write(SUITE.format(out=os.path.join(tmp, "default.h5"), periods=1500))
        # the same runs ten times longer: still running when a late signal comes
        slow = os.path.join(tmp, "slow.yaml")
        with open(slow, "w") as f:
            f.write(SUITE.format(out=os.path.join(tmp, "slow.h5"), periods=15000))
        ref = os.path.join(tmp, "one.h5")
        t = time.time()
        p = subprocess.run([EXE, "run", suite, "-o", ref, "-j", "2"], capture_output=True,
                           text=True)
        print(f"one process, 2 threads: {time.time() - t:.1f} s")
        check(p.returncode == 0, f"single-process run: exit {p.returncode} {p.stderr.strip()}")
        st = statuses(ref)
        check(len(st) == N_RUNS, f"{N_RUNS} runs, got {len(st)}")
        check("diverged" in st.values(), "the suite has a diverged run")

        # the same suite over 1, 2 and 3 ranks, threads inside the ranks for 3
        for n, jobs in ((1, 2), (2, 1), (3, 2)):
            out = os.path.join(tmp, f"n{n}.h5")
            t = time.time()
            p = run_mpi(n, [suite, "-o", out, "-j", str(jobs)])
            print(f"mpirun -n {n}, {jobs} threads a rank: {time.time() - t:.1f} s; "
                  + " ".join(own_lines(p.stderr)))
            check(p.returncode == 0, f"-n {n}: exit {p.returncode} {p.stderr.strip()}")
            check(p.stdout.count("results: ") == 1, f"-n {n}: one summary table (rank 0's)")
            if n > 1:
                check(f"{n} ranks" in p.stderr, f"-n {n}: the runs were spread over {n} ranks")
            identical(ref, out, f"-n {n}")

        # bad input: every rank refuses, one line, exit 2 from the job
        bad = os.path.join(tmp, "bad.yaml")
        with open(bad, "w") as f:
            f.write("name: bad\nproblems:\n  - {problem: pendulam}\nmethods:\n"
                    "  - {method: verlet, h: 0.1}\n")
        p = run_mpi(2, [bad, "-o", os.path.join(tmp, "bad.h5")])
        lines = own_lines(p.stderr)
        check(p.returncode == 2 and len(lines) == 1 and "bad.yaml:3:" in lines[0],
              f"bad suite under mpirun: exit 2 and one line: {p.returncode} {lines}")
        before = open(ref, "rb").read()
        p = run_mpi(3, [suite, "-o", ref])
        lines = own_lines(p.stderr)
        check(p.returncode == 2 and len(lines) == 1 and "already exists" in lines[0],
              f"existing file refused under mpirun: {p.returncode} {lines}")
        check(open(ref, "rb").read() == before, "the refused job leaves the file untouched")
        p = run_mpi(2, ["--jobs", "0", suite])
        check(p.returncode == 2 and len(own_lines(p.stderr)) == 1,
              f"bad option under mpirun: one line, exit 2: {p.returncode} {own_lines(p.stderr)}")

        # a partly complete file (one run marked interrupted, one missing): resumed over
        # 3 ranks it becomes the single-process file
        part = os.path.join(tmp, "part.h5")
        shutil.copy(ref, part)
        with h5py.File(part, "r+") as f:
            rows = f["summary"][()]
            victim, gone = text(rows[5]["run_id"]), text(rows[11]["run_id"])
            rows[5]["status"] = b"interrupted"
            keep = [i for i in range(len(rows)) if i != 11]
            del f["summary"]
            f.create_dataset("summary", data=rows[keep])
            f["runs"][victim].attrs["status"] = "interrupted"
            del f["runs"][gone]
        p = run_mpi(3, ["--resume", part, "-j", "1"])
        check(p.returncode == 0, f"resume over 3 ranks: exit {p.returncode} {p.stderr.strip()}")
        check(f"keeping {N_RUNS - 2} completed runs, running 2" in p.stderr,
              f"resume keeps all but 2: {own_lines(p.stderr)}")
        identical(ref, part, "resumed over 3 ranks")

        # Signals to mpirun. SIGUSR1 it forwards to the ranks as it is; SIGTERM (and
        # SIGINT) it turns into SIGCONT, SIGTERM a second later and SIGKILL a second after
        # that. Either way rank 0 writes a valid file of the completed runs.
        for signum, suite_file, resume in ((signal.SIGUSR1, suite, True),
                                           (signal.SIGTERM, slow, False)):
            name = signal.Signals(signum).name
            sig = os.path.join(tmp, f"{name}.h5")
            proc = subprocess.Popen(mpirun(2, [suite_file, "-o", sig, "-j", "1"]),
                                    stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                                    env=mpi_env())
            # signal once rank 0 reports its first finished run (not after a fixed wait:
            # on a loaded machine the ranks may not have started by then)
            first = proc.stderr.readline()
            while first and " done: " not in first:
                first = proc.stderr.readline()
            t = time.time()
            proc.send_signal(signum)
            out, err = proc.communicate(timeout=120)
            err = first + err
            print(f"{name}: the job ended {time.time() - t:.1f} s after the signal")
            # after SIGUSR1 mpirun passes on the ranks' 128 + signal; after SIGTERM it
            # exits 1 whatever the ranks say
            want = 128 + int(signum) if signum == signal.SIGUSR1 else 1
            check(proc.returncode == want, f"{name}: job exit {proc.returncode}, want {want}")
            check(f"stopped by signal {int(signum)}" in err,
                  f"{name}: rank 0 says it stopped: {own_lines(err)}")
            st = statuses(sig) if os.path.exists(sig) else {}
            check("interrupted" in st.values(), f"{name}: a valid file with interrupted runs: {st}")
            check(not [x for x in os.listdir(tmp) if ".tmp-" in x], f"{name}: no temporary file left")
            if resume:
                # the interrupted CVODE runs are continued from their checkpoints too:
                # restarted at the saved state, so not bit for bit
                restarted = {r for r, v in st.items() if v == "interrupted" and "cvode" in r}
                p = run_mpi(2, ["--resume", sig, "-j", "1"])
                check(p.returncode == 0, f"resume after {name}: exit {p.returncode} {p.stderr.strip()}")
                identical(ref, sig, f"resumed after {name}", restarted)

        check_resume_continues_on_any_rank(tmp)
        check_save_point_over_ranks(tmp)

    if failures:
        print(f"0 passed, {len(failures)} failed")
        sys.exit(1)
    print("mpi: 1 passed, 0 failed")


if __name__ == "__main__":
    EXE = sys.argv[1]
    MPIRUN = shutil.which("mpirun")
    helptext = subprocess.run([EXE, "run", "--help"], capture_output=True, text=True).stdout
    if "mpirun" not in helptext:
        print("mpi: skipped (this driftmark was built without MPI)")
        sys.exit(0)
    if MPIRUN is None:
        print("mpi: skipped (no mpirun on PATH: install the Debian package 'openmpi-bin')")
        sys.exit(0)
    main()
