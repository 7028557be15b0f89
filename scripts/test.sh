#!/usr/bin/env bash
# Builds libnmrpred and runs every test: the C++ doctest suites and the C
# header test (ctest) in build/, the same C++ tests again under
# AddressSanitizer + UndefinedBehaviorSanitizer in build-asan/, the tests that
# run the library from several threads at once under ThreadSanitizer in
# build-tsan/, and the Python tests (pytest, Debian's /usr/bin/python3).
# Installs missing Debian packages first. Works from any directory; exits
# non-zero if any stage fails.
set -euo pipefail
REPO_ROOT=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
cd "$REPO_ROOT"
# shellcheck source=scripts/common.sh
source "$REPO_ROOT/scripts/common.sh"

failed=()
passed=()
# run_stage NAME COMMAND...: runs one stage, records the outcome and goes on,
# so one run reports every failing stage rather than only the first.
run_stage() {
  local name=$1
  shift
  log "stage: $name"
  local start=$SECONDS
  if "$@"; then
    passed+=("$name")
    log "stage $name: ok ($((SECONDS - start)) s)"
  else
    failed+=("$name")
    log "stage $name: FAILED ($((SECONDS - start)) s)"
  fi
}

# LeakSanitizer suspends the process's threads with ptrace to scan memory; a
# process that is already traced (a debugger, some sandboxes) cannot do that,
# and LeakSanitizer then stops with "does not work under ptrace". Probe once with a program that leaks on purpose: if the leak
# is found, leak checking is on; otherwise it is off and we say why.
probe_leak_sanitizer() {
  local dir
  dir=$(mktemp -d)
  printf '#include <stdlib.h>\nint main(void){ void *volatile p = malloc(16); p = 0; (void)p; return 0; }\n' >"$dir/leak.c"
  if ! cc -fsanitize=address -g "$dir/leak.c" -o "$dir/leak" 2>"$dir/cc.log"; then
    echo "0:cannot build a sanitized probe program ($(head -c 200 "$dir/cc.log" | tr '\n' ' '))"
    rm -rf "$dir"
    return 0
  fi
  local out
  out=$(ASAN_OPTIONS=detect_leaks=1 "$dir/leak" 2>&1 || true)
  rm -rf "$dir"
  if grep -q "detected memory leaks" <<<"$out"; then
    echo "1:"
  elif grep -q "ptrace" <<<"$out"; then
    echo "0:LeakSanitizer cannot run under ptrace in this environment"
  else
    echo "0:LeakSanitizer did not report a deliberate leak here ($(head -c 200 <<<"$out" | tr '\n' ' '))"
  fi
}

ctest_main() {
  ctest --test-dir "$REPO_ROOT/build" --output-on-failure --no-tests=error -j2
}

# configure_sanitized DIR OPTION: a tree of the C++ tests (no Python) with
# the sanitizer option OPTION on.
configure_sanitized() {
  configure_tree "$1" \
    -DCMAKE_BUILD_TYPE=RelWithDebInfo \
    "-D$2=ON" \
    -DNMRPRED_BUILD_PYTHON=OFF \
    -DNMRPRED_WERROR=ON
}

build_asan() {
  configure_sanitized "$REPO_ROOT/build-asan" NMRPRED_SANITIZE || return
  build_tree "$REPO_ROOT/build-asan"
}

ctest_asan() {
  local probe detect reason
  probe=$(probe_leak_sanitizer)
  detect=${probe%%:*}
  reason=${probe#*:}
  if [[ "$detect" == 1 ]]; then
    log "LeakSanitizer: on"
  else
    log "LeakSanitizer: off ($reason)"
  fi
  local lsan_options=print_suppressions=0
  # Leaks in third-party libraries we cannot fix are listed there, each with a reason.
  if [[ -f "$REPO_ROOT/scripts/lsan.supp" ]]; then
    lsan_options+=":suppressions=$REPO_ROOT/scripts/lsan.supp"
  fi
  ASAN_OPTIONS="detect_leaks=$detect:strict_string_checks=1:detect_stack_use_after_return=1:check_initialization_order=1" \
  LSAN_OPTIONS="$lsan_options" \
  UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1" \
    ctest --test-dir "$REPO_ROOT/build-asan" --output-on-failure --no-tests=error -j2
}

# The C++ tests, ThreadSanitizer-instrumented; only those that use the library
# from several threads at once run (the rest gain nothing from it and take
# its slowdown).
build_tsan() {
  configure_sanitized "$REPO_ROOT/build-tsan" NMRPRED_SANITIZE_THREAD || return
  build_tree "$REPO_ROOT/build-tsan" nmrpred_tests
}

threads_tsan() {
  # halt_on_error: the first race not suppressed fails the stage.
  TSAN_OPTIONS="halt_on_error=1:second_deadlock_stack=1:suppressions=$REPO_ROOT/scripts/tsan.supp" \
    "$REPO_ROOT/build-tsan/bin/nmrpred_tests" --test-case='*several threads*'
}

pytest_main() {
  local dirs=() d
  for d in bindings/python/tests tests/python; do
    [[ -d "$REPO_ROOT/$d" ]] && dirs+=("$d")
  done
  if ((${#dirs[@]} == 0)); then
    log "no Python test folders found"
    return 1
  fi
  PYTHONPATH="$REPO_ROOT/build/python${PYTHONPATH:+:$PYTHONPATH}" \
  NMRPRED_BUILD_DIR="$REPO_ROOT/build" \
    "$PYTHON" -m pytest -q -p no:cacheprovider "${dirs[@]}"
}

ensure_packages
run_stage "build (build/)" build_main
if [[ " ${failed[*]-} " != *" build (build/) "* ]]; then
  run_stage "ctest (build/)" ctest_main
fi
run_stage "build (build-asan/)" build_asan
if [[ " ${failed[*]-} " != *" build (build-asan/) "* ]]; then
  run_stage "ctest under ASan+UBSan (build-asan/)" ctest_asan
fi
run_stage "build (build-tsan/)" build_tsan
if [[ " ${failed[*]-} " != *" build (build-tsan/) "* ]]; then
  run_stage "threads under TSan (build-tsan/)" threads_tsan
fi
if [[ " ${failed[*]-} " != *" build (build/) "* ]]; then
  run_stage "pytest" pytest_main
fi

echo
if ((${#failed[@]} > 0)); then
  log "stages that failed: ${failed[*]}"
  exit 1
fi
log "every stage succeeded: ${passed[*]}"
