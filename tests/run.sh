#!/usr/bin/env bash
# Every test, from a fresh machine: installs what is missing, builds twice
# (optimised, and with address and undefined-behaviour sanitizers) and runs
# the whole suite in each build.
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
# shellcheck source=../cmake/setup.sh
source "$root/cmake/setup.sh"

plumb_setup test "$root/build"
(cd "$root/build" && ctest --output-on-failure -j 2)

if [ "${PLUMB_SKIP_SANITIZERS:-0}" != 1 ]; then
  plumb_setup test "$root/build-sanitize" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DPLUMB_SANITIZE=ON
  (cd "$root/build-sanitize" && ctest --output-on-failure -j 2)
fi
