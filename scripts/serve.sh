#!/usr/bin/env bash
# Install Headsheet into a project virtualenv and serve the sheet on 127.0.0.1:8000 with the demo sheets.
set -euo pipefail
cd "$(dirname "$0")/.."
python3 -c 'import ensurepip' >/dev/null 2>&1 || { export DEBIAN_FRONTEND=noninteractive; apt-get update -q; apt-get install -y -q python3-venv; }
[ -x .venv/bin/python ] || python3 -m venv .venv
.venv/bin/python -m pip install -q --upgrade pip
.venv/bin/python -m pip install -q -e .
exec .venv/bin/headsheet serve "$@"
