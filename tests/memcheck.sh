#!/usr/bin/env bash
# memcheck.sh DRIFTMARK — valgrind memcheck of the executable on a small suite (splitting,
# RK4, implicit midpoint and both CVODE methods on three problems, with a sweep, a
# diverging run and a failing one), then `show` in every format, `period`, `list`, and
# the refusal paths (a bad suite, a missing file, a non-HDF5 file for `show`).
# Every command must end with zero memcheck errors and zero leaks of any kind; the only
# exceptions are the library blocks named in tests/valgrind.supp, each explained there.
# Run by tests/ci_extra.sh (not by CTest: it takes about a minute).
set -euo pipefail
exe=$(readlink -f "$1")
here=$(cd "$(dirname "$0")" && pwd)
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cd "$work"

cat > small.yaml <<'EOF'
name: memcheck
horizon: {periods: 20}
samples: 64
problems:
  - {problem: pendulum, amplitude: [1.0, 2.5]}
  - {problem: kepler, eccentricity: 0.9}
methods:
  - {method: verlet, steps_per_period: [32, 64]}
  - {method: yoshida4, steps_per_period: 32, compensated: true}
  - {method: symeuler-a, steps_per_period: 20}
  - {method: rk4, h: 0.1}
  - {method: midpoint, steps_per_period: [2, 64]}
  - {method: cvode-bdf, rtol: 1.0e-6}
  - {method: cvode-adams, rtol: 1.0e-8}
EOF
printf 'horizon: {periods: 10}\nproblems:\n  - {problem: pendulum, amplitude: 1}\nmethods:\n  - {method: verlett, h: 0.1}\n' > bad.yaml
printf 'not a results file\n' > notes.h5

failed=0
# memcheck EXPECTED_STATUS ARGS...: runs driftmark under valgrind; the command must end
# with EXPECTED_STATUS and valgrind must find nothing (it would exit 99).
memcheck() {
  local want=$1; shift
  local log="vg.$(( ++n )).log" rc=0
  valgrind --quiet --leak-check=full --show-leak-kinds=all --errors-for-leak-kinds=all \
    --error-exitcode=99 --track-origins=yes --suppressions="$here/valgrind.supp" \
    --log-file="$log" "$exe" "$@" >/dev/null 2>"$log.stderr" || rc=$?
  if [ "$rc" -ne "$want" ] || [ -s "$log" ]; then
    echo "memcheck: FAIL: driftmark $* (status $rc, expected $want)"
    cat "$log" "$log.stderr" | head -80
    failed=1
  else
    echo "memcheck: ok: driftmark $*"
  fi
}
n=0
memcheck 0 run small.yaml -o out.h5 -j 2
# the suite must really have had its faults, or the error paths went unchecked
"$exe" show out.h5 --format csv > out.csv
grep -q ',diverged,' out.csv || { echo "memcheck: FAIL: no diverged run in the suite"; failed=1; }
grep -q ',failed,' out.csv || { echo "memcheck: FAIL: no failed run in the suite"; failed=1; }
memcheck 0 run small.yaml -o out.h5 -j 1 --force
memcheck 0 show out.h5
memcheck 0 show out.h5 --format csv
memcheck 0 show out.h5 --format json
memcheck 0 period pendulum amplitude=2.5
memcheck 0 period kepler eccentricity=0.9 --json
memcheck 0 list --json
memcheck 2 run bad.yaml -o bad.h5
memcheck 2 run missing.yaml -o bad.h5
memcheck 2 run small.yaml -o out.h5          # exists, no --force
memcheck 2 run small.yaml -j 0
memcheck 2 show notes.h5
memcheck 2 period pendulum amplitude=7
# Ctrl-C halfway through a long run: the interrupted path (runs ended at a bucket, the
# file still written) must be as clean as the normal one. The horizon (6.4e8 steps a
# run) is out of reach under valgrind, so both runs are running when the signal comes;
# --fair-sched=yes: with valgrind's default lock two busy threads starve the one that
# takes the signal (the stop was seen 40-50 s late, after a run had ended), and a
# watchdog ends a run that ignores it.
printf 'name: long\nhorizon: {periods: 10000000}\nsamples: 64\nproblems:\n  - {problem: pendulum, amplitude: 2}\nmethods:\n  - {method: verlet, steps_per_period: 64}\n  - {method: rk4, steps_per_period: 64}\n' > long.yaml
rc=0
valgrind --quiet --fair-sched=yes --leak-check=full --show-leak-kinds=all \
  --errors-for-leak-kinds=all --error-exitcode=99 --suppressions="$here/valgrind.supp" \
  --log-file=vg.int.log "$exe" run long.yaml -o long.h5 -j 2 >/dev/null 2>vg.int.stderr &
vg_pid=$!       # valgrind runs the program in its own process: this is driftmark's pid
# not a fixed delay (a loaded machine was still reading the suite at 5 s, and a stop
# before any run starts writes nothing, by design): the results' temporary file is made
# just before the runs start; then 5 s more
for _ in $(seq 600); do
  compgen -G ".long.h5.tmp-*" >/dev/null && break
  kill -0 "$vg_pid" 2>/dev/null || break
  sleep 0.5
done
sleep 5
kill -INT "$vg_pid"
( for _ in $(seq 300); do sleep 1; kill -0 "$vg_pid" 2>/dev/null || exit 0; done
  kill -KILL "$vg_pid" ) >/dev/null 2>&1 &
wait "$vg_pid" || rc=$?
if [ "$rc" -ne 130 ] || [ -s vg.int.log ] || ! "$exe" show long.h5 | grep -q interrupted; then
  echo "memcheck: FAIL: interrupted run (status $rc, expected 130, file with an interrupted run)"
  cat vg.int.log vg.int.stderr | head -80
  failed=1
else
  echo "memcheck: ok: driftmark run long.yaml, interrupted by SIGINT"
fi
exit $failed
