#!/usr/bin/env bash
# build.sh — install what is missing (Debian 12, as root), build, then run or test.
#   bash build.sh run [ARGS]    install, build, run the main job (the default suite,
#                               replacing results/default.h5; or `driftmark run ARGS`)
#   bash build.sh test          install, build, run every test
#   bash build.sh build         install and build only
set -euo pipefail
cd "$(dirname "$0")"

# Build tools and libraries the program needs, then what the tests use as outside
# references (GSL, h5py, mpmath) and the plot script needs (matplotlib); OpenMPI for
# the optional MPI build of `run` (found by CMake when installed).
packages=(build-essential cmake pkg-config git
          libsundials-dev libhdf5-dev libyaml-dev libmatheval-dev
          libcmocka-dev libgsl-dev python3 python3-h5py python3-mpmath python3-numpy
          python3-matplotlib libopenmpi-dev openmpi-bin)

install_missing() {
  local missing=()
  for p in "${packages[@]}"; do
    dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" ||
      missing+=("$p")
  done
  if [ ${#missing[@]} -gt 0 ]; then
    echo "build.sh: installing ${missing[*]}" >&2
    export DEBIAN_FRONTEND=noninteractive
    apt-get update -qq
    apt-get install -y -qq --no-install-recommends "${missing[@]}"
  fi
}

build() {
  cmake -S . -B build -DCMAKE_BUILD_TYPE=RelWithDebInfo >/dev/null
  cmake --build build -j"$(nproc)"
}

what=${1:-run}
shift || true
case "$what" in
  build) install_missing; build ;;
  run)   install_missing; build
         # the default suite's demo file is made anew each time; a suite of your own
         # is run as given (an existing results file is then kept unless --force)
         if [ $# -eq 0 ]; then ./build/driftmark run --force; else ./build/driftmark run "$@"; fi ;;
  test)  install_missing; build; ctest --test-dir build --output-on-failure -j"$(nproc)" ;;
  *) echo "usage: bash build.sh run [SUITE] | test | build" >&2; exit 2 ;;
esac
