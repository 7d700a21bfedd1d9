#!/usr/bin/env bash
# The suites the documentation shows must be valid: the README's example and the shipped
# default suite run (with a short horizon) without error.
set -euo pipefail
exe=$1
here=$(cd "$(dirname "$0")/.." && pwd)
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail=0
awk '/^```yaml/{f=1;next}/^```/{f=0}f' "$here/README.md" |
  sed "s#^output: .*#output: $tmp/readme.h5#; s#^horizon: .*#horizon: {periods: 5}#" >"$tmp/readme.yaml"
sed "s#^output: .*#output: $tmp/default.h5#; s#^horizon: .*#horizon: {periods: 5}#" \
  "$here/results/default-suite.yaml" >"$tmp/default.yaml"
for s in readme default; do
  if ! "$exe" run "$tmp/$s.yaml" -j 2 >"$tmp/$s.out" 2>"$tmp/$s.err"; then
    echo "FAIL: the $s suite does not run: $(cat "$tmp/$s.err")"
    fail=1
  elif [ "$(grep -c ' ok ' "$tmp/$s.out")" -lt 10 ]; then
    echo "FAIL: the $s suite ran fewer than 10 runs ok"
    fail=1
  fi
done
if [ $fail -ne 0 ]; then echo "0 passed, 1 failed"; exit 1; fi
echo "doc suites: 1 passed, 0 failed"
