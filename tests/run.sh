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
  # Warnings are held to zero in the build above; with sanitizers GCC 12
  # reports false maybe-uninitialized warnings inside libstdc++, so they
  # are not made errors here.
  plumb_setup test "$root/build-sanitize" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DPLUMB_SANITIZE=ON -DPLUMB_WERROR=OFF
  (cd "$root/build-sanitize" && ctest --output-on-failure -j 2)
  # The same commands through both builds give the same bytes: the numbers
  # do not depend on the optimisation level or the sanitizers.
  bash "$root/tests/determinism/compare_builds.sh" "$root/build/plumb" "$root/build-sanitize/plumb"
fi

if [ "${PLUMB_SKIP_FUZZ:-0}" != 1 ]; then
  # libFuzzer targets (clang, coverage and sanitizers): about 90 seconds of
  # fuzzing shared by every target, then each target's regression inputs.
  plumb_setup test "$root/build-fuzz" -DCMAKE_CXX_COMPILER=clang++ -DCMAKE_BUILD_TYPE=RelWithDebInfo \
    -DPLUMB_FUZZ=ON -DPLUMB_BUILD_TESTS=OFF -DPLUMB_WERROR=OFF
  bash "$root/tests/fuzz/run.sh" "$root/build-fuzz" 90
fi
