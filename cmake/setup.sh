#!/usr/bin/env bash
# Shared set-up for examples/demo.sh and tests/run.sh: install the Debian
# packages plumb needs (when they are missing), then configure and build.
#
#   source cmake/setup.sh; plumb_setup build|test BUILD_DIR [extra cmake args...]
#
# As root, missing packages are installed with apt-get. Otherwise the exact
# apt-get line is printed and the script stops, so nothing half-works.
set -euo pipefail

plumb_build_packages=(cmake ninja-build g++ libcli11-dev nlohmann-json3-dev libeigen3-dev libboost-dev
                      libssl-dev zlib1g-dev python3)
# The reference checks ask R (stats, Iso, MASS, nnet) at test time; the CLI tests
# run on Debian's python3; the artifact schema is checked with jsonschema.
# The fuzz targets build with clang and its libFuzzer runtime; the sharded
# example runs on Dask; the Python module builds with pybind11 against
# Debian's python3 headers and is tested with NumPy; plumb export --sql is
# checked in SQLite (the sqlite3 shell) and in a throwaway PostgreSQL cluster.
plumb_test_packages=(catch2 r-base-core r-cran-iso r-cran-mass r-cran-nnet python3-jsonschema clang libclang-rt-14-dev
                     python3-dask python3-distributed pybind11-dev python3-pybind11 python3-dev python3-numpy
                     sqlite3 postgresql)

plumb_missing_packages() {
  local p
  for p in "$@"; do
    if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed"; then
      printf '%s\n' "$p"
    fi
  done
}

plumb_install() {
  local missing
  missing=$(plumb_missing_packages "$@" | tr '\n' ' ')
  [ -z "${missing// /}" ] && return 0
  if [ "$(id -u)" -ne 0 ]; then
    echo "plumb set-up: these Debian packages are missing; install them and run this again:" >&2
    echo "  sudo apt-get update && sudo apt-get install -y --no-install-recommends $missing" >&2
    exit 1
  fi
  echo "plumb set-up: installing $missing" >&2
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  # shellcheck disable=SC2086
  apt-get install -y -qq --no-install-recommends $missing >/dev/null
}

# plumb_setup MODE BUILD_DIR [cmake args...]; MODE is build (no test
# dependencies, tests not built) or test.
plumb_setup() {
  local mode=$1 dir=$2
  shift 2
  local root
  root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
  if [ "$mode" = test ]; then
    plumb_install "${plumb_build_packages[@]}" "${plumb_test_packages[@]}"
    cmake -S "$root" -B "$dir" -G Ninja -DPLUMB_BUILD_TESTS=ON -DPLUMB_WERROR=ON "$@"
  else
    plumb_install "${plumb_build_packages[@]}"
    # The Python module needs pybind11 and the Python headers, which only
    # the test set-up installs (docs/library.md says how to build it).
    cmake -S "$root" -B "$dir" -G Ninja -DPLUMB_BUILD_TESTS=OFF -DPLUMB_BUILD_PYTHON=OFF "$@"
  fi
  cmake --build "$dir" -j "$(nproc)"
}
