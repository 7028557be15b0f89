# shellcheck shell=bash
# Shared steps of scripts/demo.sh and scripts/test.sh: install what Debian 12
# lacks, then configure and build the main tree in build/. Sourced, not run.
# Expects REPO_ROOT to be set by the caller.

# Debian packages the build, the tests and the demo need.
NMRPRED_DEBIAN_PACKAGES=(
  cmake ninja-build g++ pkg-config
  libopenbabel-dev openbabel libeigen3-dev libfmt-dev doctest-dev
  pybind11-dev python3-dev python3-numpy python3-pytest python3-scipy
  python3-rdkit rdkit-data nlohmann-json3-dev libcli11-dev
  liblapack-dev libblas-dev libopenblas0-pthread
)
# liblapack-dev and libblas-dev: the generic LAPACK and BLAS the library links
# (exact spin simulation). libopenblas0-pthread: Debian's alternatives then
# run those calls, and NumPy's, on OpenBLAS's kernels for the processor rather
# than on the reference implementation (several times slower); the library
# works with either.

# Debian's interpreter: the python3 first on PATH may be a different one
# without the packages above.
PYTHON=/usr/bin/python3

log() { printf '==> %s\n' "$*" >&2; }

# ensure_packages [PKG...]: installs those of the packages (default: the
# list above) that are missing, so a second run costs one dpkg-query call
# and no network.
ensure_packages() {
  local missing=() pkg status
  local wanted=("$@")
  ((${#wanted[@]})) || wanted=("${NMRPRED_DEBIAN_PACKAGES[@]}")
  for pkg in "${wanted[@]}"; do
    status=$(dpkg-query -W -f='${db:Status-Status}' "$pkg" 2>/dev/null || true)
    [[ "$status" == installed ]] || missing+=("$pkg")
  done
  if ((${#missing[@]} == 0)); then
    log "Debian packages: all present"
    return 0
  fi
  log "Debian packages missing: ${missing[*]}"
  local sudo=()
  if ((EUID != 0)); then
    if command -v sudo >/dev/null 2>&1; then
      sudo=(sudo)
    else
      log "not root and no sudo: install these packages first: ${missing[*]}"
      return 1
    fi
  fi
  "${sudo[@]}" apt-get update || return
  DEBIAN_FRONTEND=noninteractive "${sudo[@]}" apt-get install -y "${missing[@]}"
}

# configure_tree DIR [cmake args...]: runs CMake only when DIR has no
# generated build yet; later runs leave the cache alone and let ninja
# re-run CMake itself when a CMakeLists.txt changes.
configure_tree() {
  local dir=$1
  shift
  if [[ -f "$dir/build.ninja" && -f "$dir/CMakeCache.txt" ]]; then
    log "$dir: already configured"
    return 0
  fi
  log "configuring $dir"
  cmake -S "$REPO_ROOT" -B "$dir" -G Ninja "$@"
}

# build_tree DIR [TARGET...]: builds TARGETs of DIR, all when none is named.
build_tree() {
  local dir=$1
  shift
  log "building $dir${*:+ ($*)}"
  ninja -C "$dir" -j2 "$@"
}

# Functions here run inside `if` (where bash ignores set -e), so every step
# that can fail returns explicitly.

# The main tree used by the demo, ctest and pytest.
build_main() {
  configure_tree "$REPO_ROOT/build" \
    -DCMAKE_BUILD_TYPE=Release \
    -DNMRPRED_BUILD_PYTHON=ON \
    -DNMRPRED_WERROR=ON \
    -DPython_EXECUTABLE="$PYTHON" \
    -DPYTHON_EXECUTABLE="$PYTHON" || return
  build_tree "$REPO_ROOT/build"
}
