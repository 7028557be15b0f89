#!/usr/bin/env bash
# Builds the benchmarks in Release (build-bench/) and runs them, pinned to one
# core where timing matters. Works from any directory.
# Usage: bash benchmarks/run.sh [REPEATS] [SECTION...]
#   REPEATS  repeats of the timed stages (default 5)
#   SECTION  any of: read shifts spin spectrum match roundtrip (default: all)
# Prints figures; asserts nothing. "spin" includes 14 spins (about 1-2 minutes
# each for the library and the NumPy reference); "roundtrip" needs the Python
# module and takes a few minutes.
set -euo pipefail
REPO_ROOT=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$REPO_ROOT"
# shellcheck source=../scripts/common.sh
source "$REPO_ROOT/scripts/common.sh"

REPEATS=5
if [[ $# -gt 0 && $1 =~ ^[0-9]+$ ]]; then
  REPEATS=$1
  shift
fi
SECTIONS=("$@")
((${#SECTIONS[@]})) || SECTIONS=(read shifts spin spectrum match roundtrip)
want() {
  local s
  for s in "${SECTIONS[@]}"; do [[ $s == "$1" ]] && return 0; done
  return 1
}

ensure_packages

BUILD="$REPO_ROOT/build-bench"
if [[ ! -f "$BUILD/build.ninja" ]]; then
  cmake -S "$REPO_ROOT" -B "$BUILD" -G Ninja -DCMAKE_BUILD_TYPE=Release \
    -DNMRPRED_BUILD_BENCHMARKS=ON -DNMRPRED_BUILD_TESTS=OFF -DNMRPRED_BUILD_PYTHON=ON
fi
ninja -C "$BUILD" -j2

# The NCI sample ships with Debian's rdkit-data; RDKit knows where.
NCI=$("$PYTHON" -c 'import os; from rdkit import RDConfig; print(os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi"))')
PIN=()
command -v taskset >/dev/null 2>&1 && PIN=(taskset -c 0)

if want read; then
  echo "== reading, classes, HOSE codes, shifts, 1H line lists (Open Babel $(pkg-config --modversion openbabel-3 2>/dev/null || echo '?'))"
  "${PIN[@]}" "$BUILD/bin/bench_read_classes" "$NCI" "$REPEATS"
  echo
  echo "== RDKit reference"
  "${PIN[@]}" "$PYTHON" "$REPO_ROOT/benchmarks/rdkit_rank.py" "$NCI" "$REPEATS"
  echo
fi
if want shifts; then
  echo "== 13C leave-one-out accuracy (built-in reference set, blind)"
  "$BUILD/bin/nmrpred_loo_shifts"
  echo
  echo "== 13C leave-one-out accuracy, increment rules alone"
  "$BUILD/bin/nmrpred_loo_shifts" --increments-only
  echo
  echo "== 1H leave-one-out accuracy (built-in reference set, blind)"
  "$BUILD/bin/nmrpred_loo_shifts" --1h
  echo
  echo "== 1H leave-one-out accuracy, increment rules alone"
  "$BUILD/bin/nmrpred_loo_shifts" --1h --increments-only
  echo
fi
if want spin; then
  echo "== exact spin simulation (benchmarks/spin_systems.json)"
  # One BLAS thread for the library as for the reference (OpenBLAS reads it at load).
  OPENBLAS_NUM_THREADS=1 "${PIN[@]}" "$BUILD/bin/bench_spin" 3
  echo
  echo "== blocked NumPy reference on the same systems"
  "${PIN[@]}" "$PYTHON" "$REPO_ROOT/benchmarks/spin_numpy_reference.py" 3
  echo
fi
if want spectrum; then
  echo "== sampling line lists, JCAMP-DX and SVG"
  "${PIN[@]}" "$BUILD/bin/bench_spectrum"
  echo
fi
if want match; then
  echo "== ranking 10 candidates against one 1H and one 13C list, prediction included"
  "${PIN[@]}" "$BUILD/bin/bench_match" 21
  echo
fi
if want roundtrip; then
  echo "== round trip of matching over every NCI molecule"
  PYTHONPATH="$BUILD/python" "${PIN[@]}" "$PYTHON" "$REPO_ROOT/benchmarks/match_roundtrip.py" "$NCI"
fi
