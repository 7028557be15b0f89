#!/usr/bin/env bash
# Builds libnmrpred (installing missing Debian packages first) and runs the
# demo: a few intermediates of an invented synthetic route, with the number of
# 13C and 1H signals each structure should show, and the simulated 1H
# spectrum of one of them (files in build/demo/). Works from any directory.
set -euo pipefail
REPO_ROOT=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$REPO_ROOT"
# shellcheck source=scripts/common.sh
source "$REPO_ROOT/scripts/common.sh"

ensure_packages
build_main
log "running the demo"
"$PYTHON" "$REPO_ROOT/scripts/demo.py" --cli "$REPO_ROOT/build/bin/nmrpred" --out "$REPO_ROOT/build/demo" \
  "$REPO_ROOT/demo/route.smi"
