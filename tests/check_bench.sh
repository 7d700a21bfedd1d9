#!/bin/bash
# check_bench.sh DRIFTMARK — `driftmark bench --quick --json` runs, prints JSON that
# parses, has every field the report promises for the ten cases (yoshida4 twice: built
# in and typed as a table), the CVODE rows, the 1-vs-N-jobs row and the many-short-runs
# row, the hand-written loops end with the harness's energy error bit for bit (both do
# the same arithmetic), and 1 and N jobs give the same results bit for bit. Not a timing
# test: no speed is asserted.
set -u
exe=${1:?usage: check_bench.sh DRIFTMARK}
out=$(mktemp)
err=$(mktemp)
trap 'rm -f "$out" "$err"' EXIT

if ! "$exe" bench --quick --json >"$out" 2>"$err"; then
    echo "FAIL: driftmark bench --quick --json exited with status $?:" >&2
    cat "$err" >&2
    exit 1
fi

/usr/bin/python3 - "$out" <<'EOF' || exit 1
import json, math, sys

with open(sys.argv[1]) as f:
    report = json.load(f)  # fails loudly when the output is not JSON

problems = []
def need(obj, key, where):
    if key not in obj:
        problems.append(f"{where}: missing field '{key}'")
        return None
    return obj[key]

def positive(obj, key, where):
    v = need(obj, key, where)
    if v is not None and not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
        problems.append(f"{where}: {key} = {v!r} is not a positive number")

if need(report, "quick", "top") is not True:
    problems.append("top: quick should be true for --quick")
cases = need(report, "cases", "top") or []
want = {(p, m) for p in ("pendulum", "kepler") for m in ("verlet", "yoshida4", "rk4",
                                                          "midpoint", "yoshida4-typed")}
splitting = {"verlet", "yoshida4", "yoshida4-typed"}
got = {(c.get("problem"), c.get("method")) for c in cases}
if got != want:
    problems.append(f"cases: expected {sorted(want)}, got {sorted(got)}")
for c in cases:
    where = f"case {c.get('problem')}/{c.get('method')}"
    for key in ("steps", "bare_steps_per_second", "harness_steps_per_second", "ratio"):
        positive(c, key, where)
    if c.get("method") in splitting:  # the through-table loop is a splitting's
        positive(c, "through_problem_steps_per_second", where)
    for key in ("final_energy_error", "hdf5_write_seconds", "hdf5_share",
                "through_problem_steps_per_second",
                "bare_without_potential_steps_per_second"):
        need(c, key, where)  # may be null (no HDF5 file, no such loop)
    if need(c, "final_energy_error_agrees", where) is not True:
        problems.append(f"{where}: the bare loop and the harness disagree on the final "
                        "energy error")
    if c.get("problem") == "pendulum" or c.get("method") not in splitting:
        positive(c, "bare_without_potential_steps_per_second", where)

memory = need(report, "memory", "top") or {}
positive(memory, "max_resident_kib_before", "memory")
positive(memory, "max_resident_kib_after", "memory")

cvode = need(report, "cvode", "top") or []
if {r.get("method") for r in cvode} != {"cvode-adams", "cvode-bdf"}:
    problems.append(f"cvode: expected rows for cvode-adams and cvode-bdf, got {cvode!r}")
for r in cvode:
    where = f"cvode {r.get('method')}"
    for key in ("direct_steps", "adapter_steps", "direct_steps_per_second",
                "adapter_steps_per_second"):
        positive(r, key, where)
    need(r, "adapter_overhead", where)
    # The adapter hands CVODE the same system and tolerances. Adams uses no Jacobian and
    # the right-hand sides agree bit for bit, so the steps are the same; BDF's Newton
    # Jacobian is exact in the direct loop but partly differenced in the adapter, which
    # may move a few steps of a million.
    d, a = r.get("direct_steps"), r.get("adapter_steps")
    if isinstance(d, int) and isinstance(a, int):
        if r.get("method") == "cvode-adams" and d != a:
            problems.append(f"{where}: {d} steps called directly but {a} through the adapter")
        if abs(d - a) > 0.01 * max(d, a):
            problems.append(f"{where}: {d} steps called directly but {a} through the adapter")
# 1 vs N jobs: at least 8 equal runs through the pool of `run`, timed with --jobs 1 and
# with every core; the two give the same results bit for bit (each result is stored at
# its own index, whatever thread ran it). The speed-up itself is not asserted.
jobs = need(report, "jobs", "top") or {}
for key in ("periods", "steps_per_run", "one_job_seconds", "all_jobs_seconds", "speedup"):
    positive(jobs, key, "jobs")
runs, threads = need(jobs, "runs", "jobs"), need(jobs, "jobs", "jobs")
if not (isinstance(runs, int) and runs >= 8):
    problems.append(f"jobs: runs = {runs!r}, expected at least 8 equal runs")
if not (isinstance(threads, int) and threads >= 1):
    problems.append(f"jobs: jobs = {threads!r} is not a whole number of threads")
if need(jobs, "results_identical", "jobs") is not True:
    problems.append(f"jobs: --jobs 1 and --jobs {threads} gave different results: "
                    f"{jobs.get('difference')!r}")
speedup = need(report, "jobs_speedup", "top")
if speedup != jobs.get("speedup"):
    problems.append(f"top: jobs_speedup = {speedup!r} is not jobs.speedup = {jobs.get('speedup')!r}")

# many short runs: a whole `driftmark run` of them was timed and its peak memory read
short = need(report, "short_runs", "top") or {}
for key in ("runs", "steps_per_run", "buckets", "seconds", "ms_per_run", "peak_mib",
            "file_bytes"):
    positive(short, key, "short_runs")

if problems:
    print("FAIL:\n  " + "\n  ".join(problems), file=sys.stderr)
    sys.exit(1)
print(f"ok: {len(cases)} cases, {len(cvode)} CVODE rows, {jobs.get('runs')} runs on 1 and "
      f"{jobs.get('jobs')} jobs alike")
EOF

# Bad input: exit status 2 and a one-line message naming the option.
"$exe" bench --fast >/dev/null 2>"$err"
status=$?
if [ "$status" -ne 2 ] || ! grep -q -- "--fast" "$err"; then
    echo "FAIL: 'bench --fast' gave status $status and: $(cat "$err")" >&2
    exit 1
fi
exit 0
