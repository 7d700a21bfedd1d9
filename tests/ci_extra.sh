#!/usr/bin/env bash
# ci_extra.sh — the CI stages that run before the README's test command (.ci/run):
#   asan      every test (CTest) built with -fsanitize=address,undefined at -O1 -g,
#             UBSan fatal (-fno-sanitize-recover=all), leaks checked      (build-asan/)
#   memcheck  valgrind on the release executable: a small suite, show, period, list,
#             the refusal paths and a Ctrl-C (tests/memcheck.sh)         (build/)
#   fuzz      the suite reader under libFuzzer for FUZZ_SECONDS (60) from
#             tests/fuzz_corpus/, with ASan and UBSan                     (build-fuzz/)
# Each stage prints its time; any failure stops CI.
#   bash tests/ci_extra.sh [asan|memcheck|fuzz ...]     (default: all three)
set -euo pipefail
cd "$(dirname "$0")/.."
jobs=$(nproc)
stages=("$@")
[ ${#stages[@]} -gt 0 ] || stages=(asan memcheck fuzz)

stage_asan() {
  cmake -S . -B build-asan -DCMAKE_BUILD_TYPE=Debug -DDM_SANITIZE=ON >/dev/null
  cmake --build build-asan -j"$jobs"
  # detect_leaks: LeakSanitizer on every test program and every driftmark they start;
  # abort_on_error: a report is a failed test, never a line lost in the output.
  local asan=abort_on_error=1:detect_stack_use_after_return=1:strict_string_checks=1:check_initialization_order=1
  export UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1
  ASAN_OPTIONS=detect_leaks=1:$asan \
    ctest --test-dir build-asan --output-on-failure -j"$jobs" -E '^check_mpi$'
  # Under mpirun, Open MPI's plugins (dlopen'ed, unloaded at MPI_Finalize) leave blocks
  # LeakSanitizer can attribute to no library, so the MPI test runs with every memory
  # error check but the leak check (it skips itself when MPI is not built in).
  ASAN_OPTIONS=detect_leaks=0:$asan \
    ctest --test-dir build-asan --output-on-failure -R '^check_mpi$'
}

stage_memcheck() {
  # the same configuration as `bash build.sh test`, which then finds it built
  cmake -S . -B build -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
  cmake --build build -j"$jobs"
  bash tests/memcheck.sh build/driftmark
}

stage_fuzz() {
  cmake -S . -B build-fuzz -DCMAKE_C_COMPILER=clang -DCMAKE_BUILD_TYPE=Debug -DDM_FUZZ=ON \
        -DDM_BUILD_TESTS=OFF >/dev/null
  cmake --build build-fuzz -j"$jobs" --target fuzz_suite
  # New inputs go to a scratch corpus, never into the source tree; a finding is saved
  # under build-fuzz/findings/ and fails CI (add it to tests/fuzz_corpus/ and to
  # tests/test_suite_regressions.c once fixed).
  local scratch findings
  scratch=$(mktemp -d)
  findings=$PWD/build-fuzz/findings
  mkdir -p "$findings"
  local rc=0
  ASAN_OPTIONS=detect_leaks=1 ./build-fuzz/fuzz_suite -max_total_time="${FUZZ_SECONDS:-60}" \
    -rss_limit_mb=2048 -timeout=10 -max_len=4096 -print_final_stats=1 \
    -artifact_prefix="$findings/" "$scratch" tests/fuzz_corpus >"$findings/fuzz.log" 2>&1 ||
    rc=$?
  grep -v -E '^#[0-9]+' "$findings/fuzz.log" | tail -40
  rm -rf "$scratch"
  if [ "$rc" -ne 0 ]; then
    echo "ci_extra: fuzz: libFuzzer found a failing input (status $rc): see $findings" >&2
    return 1
  fi
}

for s in "${stages[@]}"; do
  echo "=== ci_extra: $s ==="
  t0=$(date +%s)
  "stage_$s"
  echo "=== ci_extra: $s passed in $(( $(date +%s) - t0 )) s ==="
done
