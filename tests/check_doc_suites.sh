#!/usr/bin/env bash
# The suites the documentation shows must be valid: every README yaml block (its first,
# the main example, must give at least 10 ok runs; a block of a problem_library needs
# the built object and is run by tests/check_library.py instead) and the shipped default
# suite run (with a short horizon) without error.
set -euo pipefail
exe=$1
here=$(cd "$(dirname "$0")/.." && pwd)
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail=0
awk -v dir="$tmp" '/^```yaml/{n++; f=1; next} /^```/{f=0} f{print > (dir "/readme" n ".yaml")}' \
  "$here/README.md"
for s in "$tmp"/readme*.yaml; do
  # a block whose horizon is in time (a problem without a period: nbody, henon_heiles)
  # keeps it in time: 200 of its units
  short='{periods: 5}'
  grep -q "^horizon: {time:" "$s" && short='{time: 200}'
  sed -i "s#^output: .*#output: $tmp/readme.h5#; s#^horizon: .*#horizon: $short#" "$s"
done
sed "s#^output: .*#output: $tmp/default.h5#; s#^horizon: .*#horizon: {periods: 5}#" \
  "$here/results/default-suite.yaml" >"$tmp/default.yaml"
for f in "$tmp"/readme*.yaml "$tmp/default.yaml"; do
  s=$(basename "$f" .yaml)
  grep -q "problem_library" "$f" && continue
  if ! "$exe" run "$f" -j 2 --force >"$tmp/$s.out" 2>"$tmp/$s.err"; then
    echo "FAIL: the $s suite does not run: $(cat "$tmp/$s.err")"
    fail=1
  elif { [ "$s" = readme1 ] || [ "$s" = default ]; } && [ "$(grep -c ' ok ' "$tmp/$s.out")" -lt 10 ]; then
    echo "FAIL: the $s suite ran fewer than 10 runs ok"
    fail=1
  fi
done
if [ $fail -ne 0 ]; then echo "0 passed, 1 failed"; exit 1; fi
echo "doc suites: 1 passed, 0 failed"
