#!/usr/bin/python3
"""Faults through the command line: what `driftmark run` does with bad input, bad
options, runs that go wrong and a results file that cannot be written.

  - a bad suite: one line on stderr "FILE:LINE:COLUMN: ...", status 2, and the output
    file is neither created nor touched (an existing one stays byte for byte, no
    temporary file is left), with or without --force; a typo in the last of 40 entries
    is refused before anything runs;
  - bad options to `run`: one line, status 2, no output file;
  - runs that go wrong are recorded, not fatal: a diverging run is `diverged` with its
    step and time, a CVODE failure is `failed` with CVODE's flag name, a non-converging
    implicit midpoint step is `failed`; the other runs still run and the file is
    written (status 0); the suite's energy_limit is the one the runs use;
  - a results file larger than the file-size limit (ulimit -f): one clear line,
    non-zero status, no file under the target name, an older file there untouched.

usage: check_faults.py PATH/TO/driftmark     (CTest passes the built executable)
"""
import math
import os
import re
import subprocess
import sys
import tempfile
import time

import h5py

EXE = os.path.abspath(sys.argv[1])
failures = []
passed = []


def check(cond, what):
    if not cond:
        failures.append(what)
        print("FAIL:", what)
    return cond


def text(v):
    return v.decode() if isinstance(v, bytes) else str(v)


def run(args, cwd, shell_prefix=None, timeout=120):
    if shell_prefix is None:
        cmd = [EXE] + args
    else:
        # bash -c 'ulimit ...; exec driftmark ...': the limit applies to driftmark only
        quoted = " ".join("'" + a.replace("'", "'\\''") + "'" for a in [EXE] + args)
        cmd = ["bash", "-c", shell_prefix + "; exec " + quoted]
    return subprocess.run(cmd, cwd=cwd, capture_output=True, text=True, timeout=timeout)


def one_line(stderr):
    """One error line, beside the progress lines of finished runs (stderr not a terminal:
    "driftmark: run: K/N done: RUN ...")."""
    lines = [l for l in stderr.splitlines(keepends=True) if " done: " not in l]
    return len(lines) == 1 and lines[0].endswith("\n")


def write(path, content):
    with open(path, "w") as f:
        f.write(content)


def read_bytes(path):
    with open(path, "rb") as f:
        return f.read()


GOOD_HEAD = """\
name: faults
horizon: {periods: 20}
samples: 32
problems:
  - {problem: harmonic}
methods:
"""

# Bad suites: (name, text, line, column, words the message must contain). Each class is
# also covered against the library in test_suite.c; here the point is the command line:
# the message on stderr, the status, and the files left alone.
BAD_SUITES = [
    ("yaml_syntax", "name: x\nhorizon: {periods: 10\nproblems: []\n", 3, 9,
     "YAML syntax error"),
    ("unknown_method", GOOD_HEAD + "  - {method: verlett, h: 0.1}\n", 7, 14,
     "did you mean 'verlet'"),
    ("bad_parameter_value", "horizon: {periods: 10}\nproblems:\n"
     "  - {problem: pendulum, amplitude: 4.0}\nmethods:\n  - {method: verlet, h: 0.1}\n",
     3, 5, "amplitude"),
    ("wrong_type", GOOD_HEAD + "  - {method: verlet, h: \"0.1\"}\n", 7, 25, "quoted string"),
]


def check_bad_suite_leaves_output_alone(tmp):
    out = os.path.join(tmp, "kept.h5")
    old = b"an older results file that must survive\n" * 10
    for force in (False, True):
        for name, suite_text, line, col, needle in BAD_SUITES:
            suite = os.path.join(tmp, name + ".yaml")
            write(suite, suite_text)
            with open(out, "wb") as f:
                f.write(old)
            before = sorted(os.listdir(tmp))
            args = ["run", suite, "-o", out] + (["--force"] if force else [])
            p = run(args, tmp)
            label = f"bad suite {name}{' --force' if force else ''}"
            check(p.returncode == 2, f"{label}: status {p.returncode}, expected 2")
            check(one_line(p.stderr), f"{label}: one line on stderr, got {p.stderr!r}")
            where = f"{suite}:{line}:{col}: "
            check(where in p.stderr, f"{label}: stderr names {where!r}: {p.stderr!r}")
            check(needle in p.stderr, f"{label}: stderr says {needle!r}: {p.stderr!r}")
            check(read_bytes(out) == old, f"{label}: existing output untouched byte for byte")
            check(sorted(os.listdir(tmp)) == before, f"{label}: no file created or left "
                  f"({sorted(set(os.listdir(tmp)) - set(before))})")
        # and with no file at the target: none is created
        os.unlink(out)
        name, suite_text, line, col, needle = BAD_SUITES[1]
        p = run(["run", os.path.join(tmp, name + ".yaml"), "-o", out], tmp)
        check(p.returncode == 2 and not os.path.exists(out),
              "bad suite with no output file: status 2 and no file created")
    passed.append("bad_suite_is_refused_in_one_located_line_and_leaves_output_untouched")


def check_typo_in_last_of_forty_entries_is_refused_before_running(tmp):
    # 40 method entries, each a real run of 2000 steps; the 40th has a typo. Nothing
    # may run: the refusal comes at once, names line and column of the 40th entry.
    lines = [GOOD_HEAD.replace("periods: 20", "periods: 100")]
    for k in range(39):
        lines.append(f"  - {{method: verlet, steps_per_period: {20 + k}}}\n")
    lines.append("  - {method: verlet, stepsperperiod: 60}\n")
    suite = os.path.join(tmp, "forty.yaml")
    write(suite, "".join(lines))
    out = os.path.join(tmp, "forty.h5")
    t0 = time.monotonic()
    p = run(["run", suite, "-o", out, "-j", "1"], tmp)
    elapsed = time.monotonic() - t0
    check(p.returncode == 2, f"typo in entry 40: status {p.returncode}")
    check(one_line(p.stderr) and f"{suite}:46:22: " in p.stderr and
          "steps_per_period" in p.stderr,
          f"typo in entry 40: located one-line error with a hint, got {p.stderr!r}")
    check(p.stdout == "", f"typo in entry 40: no run output, got {p.stdout[:200]!r}")
    check(not os.path.exists(out), "typo in entry 40: no output file")
    check(elapsed < 5, f"typo in entry 40: refused at once ({elapsed:.1f} s)")
    passed.append("typo_in_the_last_of_forty_entries_is_refused_before_anything_runs")


def check_bad_run_options(tmp):
    suite = os.path.join(tmp, "good.yaml")
    out = os.path.join(tmp, "never.h5")
    write(suite, GOOD_HEAD + "  - {method: verlet, h: 0.1}\n")
    base = ["run", suite, "-o", out]
    cases = [
        (base + ["-j", "0"], "--jobs takes a whole number from 1 to 1024, not '0'"),
        (base + ["-j", "abc"], "--jobs takes a whole number from 1 to 1024, not 'abc'"),
        (base + ["-j", "2.5"], "not '2.5'"),
        (base + ["--jobs=-1"], "not '-1'"),
        (base + ["--colour"], "unknown option '--colour'"),
        (base + ["-x"], "unknown option '-x'"),
        (base + ["-j"], "needs a value"),           # the option last: its value is missing
        (["run", suite, "-o"], "needs a value"),
        (base + [os.path.join(tmp, "other.yaml")], "at most one suite file, got 2"),
    ]
    for args, needle in cases:
        p = run(args, tmp)
        label = " ".join(a.replace(tmp + "/", "") for a in args)
        check(p.returncode == 2, f"{label}: status {p.returncode}, expected 2 ({p.stderr!r})")
        check(one_line(p.stderr) and needle in p.stderr,
              f"{label}: one line with {needle!r}, got {p.stderr!r}")
        check(not os.path.exists(out), f"{label}: no output file")
    missing = os.path.join(tmp, "no-such-suite.yaml")
    p = run(["run", missing, "-o", out], tmp)
    check(p.returncode == 2 and one_line(p.stderr) and missing in p.stderr and
          "No such file" in p.stderr,
          f"run with a missing suite file: status 2, one line naming it: {p.stderr!r}")
    check(not os.path.exists(out), "missing suite: no output file")
    p = run(["run", tmp, "-o", out], tmp)
    check(p.returncode == 2 and one_line(p.stderr) and tmp in p.stderr,
          f"run with a directory as the suite: status 2, one line: {p.stderr!r}")
    passed.append("bad_run_options_are_refused_in_one_line_with_status_2_and_no_file")


def runs_of(path):
    with h5py.File(path, "r") as f:
        rows = f["summary"][()]
        out = {}
        for row in rows:
            rid = text(row["run_id"])
            g = f["runs"][rid]
            out[rid] = {
                "status": text(row["status"]),
                "reason": text(g.attrs["reason"]),
                "steps": int(row["steps"]),
                "h": float(g.attrs["h"]),
                "t_reached": float(g.attrs["t_reached"]),
                "series": len(g["time"]),
                "max_energy_error": float(row["max_energy_error"]),
            }
        return out, int(f.attrs["n_runs_written"]), int(f.attrs["n_runs_planned"])


STEP_TIME = re.compile(r"at step (\d+), t = ([-+0-9.eE]+)")


def check_faulty_runs_are_recorded_and_the_suite_goes_on(tmp):
    # Divergence: symplectic Euler with 20 steps per period on a Kepler orbit of
    # eccentricity 0.9 (periapsis speed sqrt(19) times the mean motion) and Verlet with
    # h = 6.2, a step just under the periods of all three problems (6.283 for Kepler and
    # the oscillator, 6.700 for the pendulum); non-convergence: the implicit midpoint's
    # fixed-point iteration with two steps per period (h about 3.35, while it contracts
    # only for h |f'| < 2). The harmonic Verlet run between them must stay ok.
    suite = os.path.join(tmp, "numerics.yaml")
    out = os.path.join(tmp, "numerics.h5")
    write(suite, """\
name: numerics
horizon: {periods: 50}
samples: 64
problems:
  - {problem: kepler, eccentricity: 0.9}
  - {problem: pendulum, amplitude: 1.0}
  - {problem: harmonic}
methods:
  - {method: symeuler-a, steps_per_period: 20}
  - {method: verlet, h: 6.2}
  - {method: midpoint, steps_per_period: 2}
  - {method: verlet, steps_per_period: 64}
""")
    p = run(["run", suite, "-o", out, "-j", "2"], tmp)
    check(p.returncode == 0, f"suite with faulty runs: status {p.returncode}: {p.stderr!r}")
    check(os.path.exists(out), "suite with faulty runs: results file written")
    if not os.path.exists(out):
        return
    runs, written, planned = runs_of(out)
    check(written == planned == 12 and len(runs) == 12,
          f"every run recorded: written {written}, planned {planned}, rows {len(runs)}")

    div = runs.get("kepler-eccentricity0.9.symeuler-a-n20")
    if check(div is not None, "symeuler kepler run present"):
        check(div["status"] == "diverged", f"symeuler kepler e=0.9: diverged, got {div}")
        m = STEP_TIME.search(div["reason"])
        if check(m is not None, f"diverged reason names step and time: {div['reason']!r}"):
            step, t = int(m.group(1)), float(m.group(2))
            check(step == div["steps"] and step >= 1, f"reason's step {step} = steps taken")
            # fixed steps: the time of step k is k h (runner contract)
            check(t == step * div["h"], f"reason's time {t!r} = step * h = {step * div['h']!r}")
            check(t == div["t_reached"], f"reason's time = t_reached {div['t_reached']!r}")
        check("beyond the limit 1 " in div["reason"], f"names the limit: {div['reason']!r}")

    pend = runs.get("pendulum-amplitude1.verlet-h6.2")
    if check(pend is not None, "verlet pendulum h=6.2 run present"):
        check(pend["status"] == "diverged" and STEP_TIME.search(pend["reason"]) is not None,
              f"verlet with h just under the pendulum period: diverged at a step, got {pend}")

    mid = runs.get("pendulum-amplitude1.midpoint-n2")
    if check(mid is not None, "midpoint pendulum run present"):
        check(mid["status"] == "failed", f"midpoint n=2: failed, got {mid}")
        check("did not converge" in mid["reason"] and "step 1" in mid["reason"],
              f"midpoint reason says which step did not converge: {mid['reason']!r}")

    ok = runs.get("harmonic.verlet-n64")
    check(ok is not None and ok["status"] == "ok" and ok["series"] == 64 and ok["reason"] == "",
          f"harmonic.verlet-n64: ok with its whole series beside the faults: {ok}")
    # the progress lines say how each run that was not ok ended, and nothing after ok
    done = {l.split(" done: ")[1].split(" (")[0] for l in p.stderr.splitlines()
            if " done: " in l}
    check({"kepler-eccentricity0.9.symeuler-a-n20: diverged",
           "pendulum-amplitude1.midpoint-n2: failed", "harmonic.verlet-n64"} <= done,
          f"progress lines name how runs ended: {sorted(done)}")
    # the summary table printed at the end shows the faults too
    check("diverged" in p.stdout and "failed" in p.stdout,
          "summary table on stdout shows diverged and failed runs")
    passed.append("diverged_and_failed_runs_are_recorded_and_the_suite_still_writes_its_file")


def check_cvode_failure_names_its_flag(tmp):
    # Morse bonds next to dissociation under BDF with loose tolerances: the loose steps
    # push some of them over the edge of the well, where the Newton corrector stops
    # converging and CVODE gives up. Which of them fails is a detail of the arithmetic
    # (a change in the last digit of a period moves it), so several are run: at least
    # one must fail, and every failure must be recorded with CVODE's flag. energy_limit
    # is raised so that CVODE, not our divergence test, ends the runs.
    suite = os.path.join(tmp, "cvode.yaml")
    out = os.path.join(tmp, "cvode.h5")
    write(suite, """\
name: cvode-fault
horizon: {periods: 2}
samples: 8
energy_limit: 1.0e300
problems:
  - {problem: morse, energy: [0.99, 0.999, 0.9999, 0.99999]}
  - {problem: harmonic}
methods:
  - {method: cvode-bdf, rtol: [0.1, 0.08]}
  - {method: cvode-adams, rtol: 1.0e-8}
""")
    p = run(["run", suite, "-o", out, "-j", "1"], tmp)
    check(p.returncode == 0, f"suite with a CVODE failure: status {p.returncode}: {p.stderr!r}")
    if not check(os.path.exists(out), "suite with a CVODE failure: file written"):
        return
    runs, written, planned = runs_of(out)
    failed = {k: r for k, r in runs.items() if r["status"] == "failed"}
    check(len(failed) >= 1, f"at least one CVODE failure among {sorted(runs)}")
    for k, bad in failed.items():
        check(k.startswith("morse-") and ".cvode-bdf-" in k, f"only BDF on Morse fails: {k}")
        check(re.search(r"cvode-bdf: CVode returned CV_[A-Z_]+ at t = ", bad["reason"]) is not None,
              f"CVODE failure reason names CVODE's flag: {bad['reason']!r}")
    good = runs.get("harmonic.cvode-adams-rtol1e-08")
    check(good is not None and good["status"] == "ok", f"the next run is ok: {good}")
    check(written == planned == 15, f"all 15 runs written ({written} of {planned})")
    passed.append("cvode_failure_is_recorded_as_failed_with_cvodes_flag_name")


def check_suite_energy_limit_is_the_runs_limit(tmp):
    # Verlet on the harmonic oscillator with 32 steps per period keeps |dE| near
    # (h w)^2 / 8 = 0.0048 (modified-energy bound, common practice): ok under the
    # default limit 1, diverged under energy_limit 1e-4, at a step inside the first
    # period (the error reaches its bound within a quarter period).
    res = {}
    for limit in (None, 1e-4):
        suite = os.path.join(tmp, f"limit{limit}.yaml")
        out = os.path.join(tmp, f"limit{limit}.h5")
        head = GOOD_HEAD if limit is None else GOOD_HEAD.replace(
            "samples: 32\n", f"samples: 32\nenergy_limit: {limit}\n")
        write(suite, head + "  - {method: verlet, steps_per_period: 32}\n")
        p = run(["run", suite, "-o", out], tmp)
        check(p.returncode == 0, f"energy_limit {limit}: status {p.returncode} {p.stderr!r}")
        if os.path.exists(out):
            res[limit] = runs_of(out)[0]["harmonic.verlet-n32"]
    if None in res and 1e-4 in res:
        check(res[None]["status"] == "ok" and res[None]["max_energy_error"] > 1e-4,
              f"default limit: ok with max |dE| above 1e-4: {res[None]}")
        check(res[1e-4]["status"] == "diverged" and "beyond the limit 0.0001 " in
              res[1e-4]["reason"] and res[1e-4]["steps"] <= 32,
              f"energy_limit 1e-4: diverged within the first period: {res[1e-4]}")
    passed.append("the_suites_energy_limit_is_the_limit_the_runs_use")


def check_file_size_limit(tmp):
    # 2 runs x 4 series x 40000 buckets of noisy doubles: well over a megabyte even
    # compressed, far above a 64 KiB limit (bash's ulimit -f counts 1024-byte blocks).
    d = os.path.join(tmp, "limited")
    os.mkdir(d)
    suite = os.path.join(tmp, "big.yaml")
    write(suite, """\
name: big
horizon: {periods: 2000}
samples: 40000
problems:
  - {problem: pendulum, amplitude: 2.0}
methods:
  - {method: verlet, steps_per_period: [20, 40]}
""")
    target = os.path.join(d, "big.h5")
    # first without any file there: nothing may appear under the name
    p = run(["run", suite, "-o", target, "-j", "1"], tmp, shell_prefix="ulimit -f 64")
    check(p.returncode not in (0, 2) and p.returncode > 0,
          f"write past the file-size limit: an error status (not 0, not killed), got "
          f"{p.returncode}")
    check(p.returncode < 128, f"not killed by SIGXFSZ (status {p.returncode})")
    check(one_line(p.stderr) and target in p.stderr,
          f"write past the limit: one line naming the file, got {p.stderr!r}")
    check(os.listdir(d) == [], f"no file and no temporary left: {os.listdir(d)}")
    # then over an older file: it stays as it was
    old = b"results of last week\n" * 100
    with open(target, "wb") as f:
        f.write(old)
    p = run(["run", suite, "-o", target, "-j", "1", "--force"], tmp,
            shell_prefix="ulimit -f 64")
    check(0 < p.returncode < 128 and p.returncode != 2 and one_line(p.stderr),
          f"write past the limit with --force: one-line error, got {p.returncode} {p.stderr!r}")
    check(read_bytes(target) == old, "older file at the target untouched byte for byte")
    check(os.listdir(d) == ["big.h5"], f"no temporary left beside it: {os.listdir(d)}")
    # and with no limit the same suite writes its file (the limit was the cause)
    p = run(["run", suite, "-o", target, "-j", "1", "--force"], tmp)
    check(p.returncode == 0 and h5py.is_hdf5(target) and os.path.getsize(target) > 64 * 1024,
          f"without the limit the file is written ({p.returncode}, {p.stderr!r})")
    passed.append("a_write_past_the_file_size_limit_fails_in_one_line_and_keeps_the_older_file")


def main():
    with tempfile.TemporaryDirectory() as tmp:
        for test in (check_bad_suite_leaves_output_alone,
                     check_typo_in_last_of_forty_entries_is_refused_before_running,
                     check_bad_run_options,
                     check_faulty_runs_are_recorded_and_the_suite_goes_on,
                     check_cvode_failure_names_its_flag,
                     check_suite_energy_limit_is_the_runs_limit,
                     check_file_size_limit):
            sub = os.path.join(tmp, test.__name__)
            os.mkdir(sub)
            test(sub)
    if failures:
        print(f"faults: {len(failures)} checks failed")
        sys.exit(1)
    for name in passed:
        print("ok:", name)
    print(f"faults: {len(passed)} passed, 0 failed")


if __name__ == "__main__":
    main()
