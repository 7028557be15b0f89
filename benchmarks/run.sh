#!/usr/bin/env bash
# Builds the benchmarks in Release (build-bench/) and times libnmrpred and the
# RDKit reference on the same NCI SMILES file, pinned to one core.
# Usage: bash benchmarks/run.sh [REPEATS]   (default 5). Works from any directory.
set -euo pipefail
REPO_ROOT=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$REPO_ROOT"
REPEATS=${1:-5}
PYTHON=/usr/bin/python3
BUILD="$REPO_ROOT/build-bench"

if [[ ! -f "$BUILD/build.ninja" ]]; then
  cmake -S "$REPO_ROOT" -B "$BUILD" -G Ninja -DCMAKE_BUILD_TYPE=Release \
    -DNMRPRED_BUILD_BENCHMARKS=ON -DNMRPRED_BUILD_TESTS=OFF -DNMRPRED_BUILD_PYTHON=OFF
fi
ninja -C "$BUILD" -j2 bench_read_classes nmrpred_loo_shifts

# The NCI sample ships with Debian's rdkit-data; RDKit knows where.
NCI=$("$PYTHON" -c 'import os; from rdkit import RDConfig; print(os.path.join(RDConfig.RDDataDir, "NCI", "first_5K.smi"))')
PIN=()
command -v taskset >/dev/null 2>&1 && PIN=(taskset -c 0)

echo "== libnmrpred (Open Babel $(pkg-config --modversion openbabel-3 2>/dev/null || echo '?'))"
"${PIN[@]}" "$BUILD/bin/bench_read_classes" "$NCI" "$REPEATS"
echo
echo "== RDKit reference"
"${PIN[@]}" "$PYTHON" "$REPO_ROOT/benchmarks/rdkit_rank.py" "$NCI" "$REPEATS"
echo
echo "== 13C leave-one-out accuracy (built-in reference set, blind)"
"$BUILD/bin/nmrpred_loo_shifts"
echo
echo "== 13C leave-one-out accuracy, increment rules alone"
"$BUILD/bin/nmrpred_loo_shifts" --increments-only
