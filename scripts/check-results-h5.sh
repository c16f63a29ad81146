#!/usr/bin/env bash
# Check a beatfold results file with h5py (a general-purpose HDF5 reader), in a private venv.
# Usage: scripts/check-results-h5.sh RESULTS.h5
set -euo pipefail
here="$(cd "$(dirname "$0")" && pwd)"
venv="${BEATFOLD_VENV:-$here/../target/py-venv}"
if [ ! -x "$venv/bin/python" ]; then
  python3 -m venv "$venv"
  "$venv/bin/pip" install --quiet --disable-pip-version-check -r "$here/requirements-check.txt"
fi
"$venv/bin/python" "$here/check_results_h5.py" "$@"
