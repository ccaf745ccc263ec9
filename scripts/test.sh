#!/usr/bin/env bash
# Install everything the tests need (Debian packages, a project virtualenv) and run every test.
set -euo pipefail
cd "$(dirname "$0")/.."

need=()
command -v chromium >/dev/null 2>&1 || need+=(chromium)
command -v pdftotext >/dev/null 2>&1 || need+=(poppler-utils)
python3 -c 'import ensurepip' >/dev/null 2>&1 || need+=(python3-venv)
if [ ${#need[@]} -gt 0 ]; then
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -q
  apt-get install -y -q "${need[@]}"
fi

[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/python -m pip install -q --upgrade pip
.venv/bin/python -m pip install -q -e ".[test]"
exec .venv/bin/python -m pytest "$@"
