# Shared set-up for scripts/demo, scripts/test and scripts/bench (sourced, not run).
# Installs what a fresh Debian/Ubuntu machine lacks: the HDF5 C library and pkg-config (via
# apt-get, as root or through sudo), GNU time for peak-memory figures, and a Python venv with the
# reference libraries from PyPI. Idempotent: a second run only checks.
set -euo pipefail

ROOT="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
VENV="${VORTCAT_VENV:-$ROOT/.venv}"
PY_PACKAGES=(numpy==2.4.6 scipy==1.17.1 h5py==3.16.0 netCDF4==1.7.5.1.post1)

say() { printf '==> %s\n' "$*" >&2; }

as_root() {
  if [ "$(id -u)" -eq 0 ]; then "$@";
  elif command -v sudo >/dev/null 2>&1; then sudo "$@";
  else
    say "need root (or sudo) to run: $*"; return 1
  fi
}

ensure_system_packages() {
  local missing=()
  pkg-config --exists hdf5 2>/dev/null || dpkg -s libhdf5-dev >/dev/null 2>&1 || missing+=(libhdf5-dev)
  command -v pkg-config >/dev/null 2>&1 || missing+=(pkg-config)
  [ -x /usr/bin/time ] || missing+=(time)
  command -v python3 >/dev/null 2>&1 || missing+=(python3 python3-venv)
  if [ ${#missing[@]} -gt 0 ]; then
    say "installing system packages: ${missing[*]}"
    as_root apt-get update -qq
    DEBIAN_FRONTEND=noninteractive as_root apt-get install -y -qq "${missing[@]}" >/dev/null
  fi
  if ! command -v cargo >/dev/null 2>&1; then
    say "cargo not found: install a Rust toolchain (https://rustup.rs) and run again"
    return 1
  fi
}

ensure_venv() {
  if [ ! -x "$VENV/bin/python" ]; then
    say "creating Python venv at $VENV"
    python3 -m venv "$VENV" || {
      as_root apt-get install -y -qq python3-venv >/dev/null
      python3 -m venv "$VENV"
    }
  fi
  if ! "$VENV/bin/python" -c 'import numpy, scipy, h5py, netCDF4' 2>/dev/null; then
    say "installing ${PY_PACKAGES[*]} from PyPI"
    "$VENV/bin/pip" install -q --disable-pip-version-check "${PY_PACKAGES[@]}"
  fi
  PYTHON="$VENV/bin/python"
  export PYTHON
}
