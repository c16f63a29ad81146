#!/usr/bin/env bash
# Beat-class separation on the shared MIT-BIH folder: reruns the validation page and fails when
# the committed page differs (every number on it comes from this command).
# Usage: scripts/ci-separate.sh [MITDB_FOLDER]   (default ../shared/data/mitdb)
# Run time after a warm release build: 133-217 s wall (77-90 s CPU) on 2 cores at load average ~10
# (2026-12-04; inter-patient 73 s, within-record 137 s; see docs/performance.md).
set -euo pipefail
cd "$(dirname "$0")/.."
data="${1:-../shared/data/mitdb}"
if [ ! -d "$data" ]; then
  echo "ci-separate: no data folder $data; skipped"
  exit 0
fi
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
cargo run --release --quiet --example validate_separate -- "$data" --out "$tmp/validation-separate.md"
diff -u docs/validation-separate.md "$tmp/validation-separate.md"
echo "ci-separate: page reproduced"
