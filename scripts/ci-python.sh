#!/usr/bin/env bash
# Build and test the Python package the way a user installs it: a fresh virtual environment,
# `pip install ./python` (maturin builds the PyO3 extension from this crate), then pytest.
# The tests compare the package's numbers with the command line's, so the release binary is
# built first (shared target folder, so the library is compiled once for both).
# Usage: scripts/ci-python.sh [extra pytest arguments]
set -euo pipefail
root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-$root/target}"
cargo build --release --bin beatfold
export BEATFOLD_CLI="$CARGO_TARGET_DIR/release/beatfold"
venv="$(mktemp -d)/venv"
trap 'rm -rf "$(dirname "$venv")"' EXIT
python3 -m venv "$venv"
"$venv/bin/pip" install --quiet --disable-pip-version-check -r python/requirements-test.txt
"$venv/bin/pip" install --disable-pip-version-check ./python
cd python/tests
"$venv/bin/python" -m pytest -q "$@"
