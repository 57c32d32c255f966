#!/usr/bin/env bash
# The two set-up commands of the README:
#   ./dev.sh demo   builds the demo site and serves it on 127.0.0.1
#   ./dev.sh test   runs the whole test suite
# Each makes .venv, installs sitegen with what it needs, and (for tests)
# Chromium for the browser checks where the machine lets it.
set -euo pipefail
cd "$(dirname "$0")"
PY=${PYTHON:-python3}

setup() {
  if [ ! -x .venv/bin/python ]; then
    "$PY" -m venv .venv
  fi
  .venv/bin/python -m pip install -q --disable-pip-version-check -e ".$1" 2>&1 | grep -vE '^(WARNING|DEPRECATION)' || true
  .venv/bin/python -c "import sitegen" # fail loudly if the install did not take
}

need_chromium() {
  if command -v chromium >/dev/null 2>&1; then return 0; fi
  if [ "$(id -u)" = 0 ] && command -v apt-get >/dev/null 2>&1; then
    echo "installing Chromium for the browser tests (Debian package chromium)"
    apt-get update -qq >/dev/null && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq chromium >/dev/null
  else
    echo "Chromium not found and cannot be installed here: browser tests will fail (install the 'chromium' package)" >&2
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
    need_chromium
    exec .venv/bin/python -m pytest "$@"
    ;;
  *)
    echo "usage: ./dev.sh demo [serve options] | ./dev.sh test [pytest options]" >&2
    exit 2
    ;;
esac
