#!/usr/bin/env bash
# Outside benchmark driver: builds samekey, prepares a Python environment with the outside
# generator's pinned packages (PyPI), and runs bench/outside.py (see its docstring and
# bench/README.md). Every argument is passed on to bench/outside.py, e.g.
#   bench/outside.sh --sets medium:10000:1,hard:10000:1,medium:100000:1,medium:1000000:1
# Set OUTSIDE_PYTHON to a Python that already has the packages to skip the venv.
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
cd "$ROOT"
cargo build --release --locked --quiet
PY="${OUTSIDE_PYTHON:-}"
if [[ -z "$PY" ]]; then
    VENV="$ROOT/target/bench/outside-venv"
    if [[ ! -x "$VENV/bin/python" ]]; then
        python3 -m venv "$VENV"
        "$VENV/bin/pip" install --quiet --disable-pip-version-check -r bench/outside/requirements.txt
    fi
    PY="$VENV/bin/python"
fi
exec "$PY" bench/outside.py --python "$PY" "$@"
